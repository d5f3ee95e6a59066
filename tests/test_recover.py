"""Member forces recovered from point displacements and rotations (framebuckle.io.recover).

Checked on first-order solutions of small invented models (against statics) and
on the sample meshes' exported first-order solutions (sample_meshes/).
"""

import math

import meshio
import numpy as np
import pytest

import framebuckle as fb
from framebuckle.model.model import make_frame
from framebuckle.io.recover import axial_from_elongation, element_end_forces, end_moments
from mech_models import E, G, column_mesh, static_solve

L, A, I, J = 3.0, 4e-3, 6e-6, 1e-6


def _cantilever(ncell=3):
    """A cantilever column along z, fixed at the base, with a tip load (H, 0, -V)."""
    n = ncell + 1
    pts = np.zeros((n, 3)); pts[:, 2] = np.linspace(0, L, n)
    cells = np.column_stack([np.arange(ncell), np.arange(1, n)])
    r = np.zeros((n, 6)); r[0] = 1
    frame = make_frame(pts, cells, E, G, A, I, 2 * I, J, restraint=r)
    H, V = 2.0e3, 50.0e3
    loads = np.zeros((n, 6)); loads[-1, 0] = H; loads[-1, 2] = -V
    return frame, pts, cells, r, H, V, static_solve(frame, loads)


def test_recovered_forces_equal_statics():
    # statically determinate: N = -V, bending moment H (L - z) about the axis normal to the load
    # plane (equilibrium of the free part; common practice)
    frame, pts, cells, r, H, V, u = _cantilever()
    f = element_end_forces(frame, u)
    N = f[:, 6]
    assert np.allclose(N, -V, rtol=1e-8)
    assert np.allclose(axial_from_elongation(frame, u), -V, rtol=1e-8)
    m = end_moments(f)
    z0, z1 = pts[cells[:, 0], 2], pts[cells[:, 1], 2]
    # local axes of a vertical member: x = +Z, z = global X (default orientation), y = z x x = -Y.
    # The upper part acts on the positive face of the lower part with the moment +H (L - z) about
    # global +Y (statics of the free part), i.e. My = -H (L - z) about local y = -Y.
    ref = np.concatenate([-H * (L - z0), -H * (L - z1)])
    got = np.concatenate([m[:, 1], m[:, 4]])
    assert np.allclose(got, ref, rtol=1e-8, atol=1e-8 * H * L)
    assert np.allclose(m[:, [0, 2, 3, 5]], 0.0, atol=1e-8 * H * L)


def test_case_from_displacement_fields_matches_case_from_forces():
    frame, pts, cells, r, H, V, u = _cantilever()
    n = len(cells)
    cd = {"E": [np.full(n, E)], "G": [np.full(n, G)], "A": [np.full(n, A)], "Iy": [np.full(n, I)],
          "Iz": [np.full(n, 2 * I)], "J": [np.full(n, J)]}
    by_disp = meshio.Mesh(pts, [("line", cells)], point_data={"restraint": r, "displacement.wind": u[:, :3],
                                                              "rotation.wind": u[:, 3:]}, cell_data=cd)
    by_force = meshio.Mesh(pts, [("line", cells)], point_data={"restraint": r},
                           cell_data=dict(cd, **{"axial_force.wind": [np.full(n, -V)]}))
    a = fb.solve(by_disp, mesh_check=False)
    b = fb.solve(by_force, mesh_check=False)
    assert a.cases[0].name == "wind"
    assert a.cases[0].alpha_cr == pytest.approx(b.cases[0].alpha_cr, rel=1e-8)
    # cantilever: P_cr = pi^2 E I / (4 L^2) about the weak axis (Timoshenko & Gere 1961, sec. 2.1)
    assert a.cases[0].alpha_cr * V == pytest.approx(math.pi ** 2 * E * I / (4 * L ** 2), rel=1e-3)
    assert any("recovered from the point field 'displacement.wind'" in s for s in a.cases[0].notes)
    assert a.input.cases[0].extra["moments"].shape == (n, 6)


def test_both_forces_and_displacements_report_disagreement():
    frame, pts, cells, r, H, V, u = _cantilever()
    n = len(cells)
    cd = {"E": [np.full(n, E)], "G": [np.full(n, G)], "A": [np.full(n, A)], "Iy": [np.full(n, I)],
          "Iz": [np.full(n, 2 * I)], "J": [np.full(n, J)],
          "axial_force": [np.full(n, -1.02 * V)]}           # 2 % off the displacements' forces
    mesh = meshio.Mesh(pts, [("line", cells)], point_data={"restraint": r, "displacement": u[:, :3]},
                       cell_data=cd)
    res = fb.solve(mesh, mesh_check=False)
    note = [s for s in res.cases[0].notes if "differ from the given axial force" in s]
    assert note and "1.96 %" in note[0] and "given axial forces are used" in note[0]
    assert np.allclose(res.input.cases[0].axial, -1.02 * V)


def test_bad_displacement_field():
    m = column_mesh(ncell=2)
    del m.cell_data["axial_force"]
    m.point_data["displacement"] = np.zeros((3, 4))
    with pytest.raises(fb.InputError, match="point field 'displacement'.*shape \\(3, 3\\)"):
        fb.solve(m)
    m.point_data.pop("displacement")
    with pytest.raises(fb.InputError, match="no axial force field.*displacement"):
        fb.solve(m)


SAMPLES = __import__("pathlib").Path(__file__).resolve().parents[1] / "sample_meshes"


@pytest.mark.parametrize("name", ["workshop_portal.vtu", "footbridge.vtu", "lattice_mast.vtu"])
def test_samples_recovered_axial_forces_equal_exported(name):
    # the samples' axial_force.<case> were exported from framebuckle.solver.static's first-order solution
    # (mid-length N); the recovery from their displacement.<case> fields must reproduce them to
    # 1e-8 of the largest |N| (E A / L times the elongation = the mean of the end forces)
    from framebuckle.io.read import read_input
    from framebuckle.io.recover import recover_case
    im = read_input(SAMPLES / name)
    assert im.cases
    for case in im.cases:
        pd = im.mesh.point_data
        N, M = recover_case(im.frame, pd, f"displacement.{case.name}", f"rotation.{case.name}", name)
        scale = np.abs(case.axial).max()
        assert np.abs(N - case.axial).max() <= 1e-8 * scale
        assert any("recovered from" in s and "agree with the given" in s for s in case.extra["notes"])
        assert M.shape == (im.frame.n_elements, 6)
