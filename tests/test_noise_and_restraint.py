"""Export noise and one bad cell must not change how the model is constrained (issue: no silent
wrong answer).  References: the clean model solved by the same pipeline (the physical answer does
not depend on micrometre noise: common practice), and the count of rotations that really have no
element stiffness (none in a frame of beams)."""

import numpy as np

import framebuckle as fb
import frames as F
from framebuckle.io.read import read_input
from framebuckle.mechanics.assemble import Assembler
from framebuckle.solver.solve import find_constraints, plane_axis


def _plane_portal():
    m = F.portal(P=(-2e5, -2e5))
    r = m.point_data["restraint"]
    r[r.any(axis=1)] = [1, 0, 1, 0, 1, 0]          # in-plane fixity only: the X-Z plane frame
    return m


def test_export_noise_keeps_a_plane_frame_plane():
    m = _plane_portal()
    clean = fb.solve(m, modes=2, mesh_check=False)
    assert clean.constraints.planar_axis == 1
    m.points[1, 1] += 1e-6                            # the top of a column 1 micrometre off the plane
    noisy = fb.solve(m, modes=2, mesh_check=False)
    assert noisy.constraints.planar_axis == 1
    np.testing.assert_allclose(noisy.cases[0].load_factors, clean.cases[0].load_factors, rtol=1e-6)


def test_a_real_out_of_plane_geometry_is_not_flattened():
    m = _plane_portal()
    m.points[1, 1] += 0.05                            # 5 cm out of plane: a 3D model
    assert plane_axis(read_input(m).frame.nodes) is None


def test_one_huge_rotational_stiffness_does_not_restrain_the_other_rotations():
    # one cell's constant in a wrong unit (an Iw in mm^6 makes one torsional stiffness ~1e18 times
    # too large): the automatic restraint of "rotations without stiffness" judges each rotation
    # against its own node's translational stiffness, so the ordinary rotations stay free
    frame = read_input(F.portal()).frame
    K = Assembler.build(frame).stiffness()
    clean = find_constraints(frame, K, False)
    K = K.tolil()
    K[9, 9] = K[9, 9] * 1e18                          # rx of point 1
    bad = find_constraints(frame, K.tocsr(), False)
    assert clean.n_auto == 0
    assert bad.n_auto == 0
    assert np.array_equal(bad.free, clean.free)
