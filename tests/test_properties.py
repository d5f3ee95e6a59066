"""Property tests on random small 3D frames (hypothesis, derandomized).

The load factors of (K + lambda Kg) phi = 0 do not depend on how the model is
placed, numbered or oriented, and scale simply with the loads and moduli:

* rigid rotation and translation (orientation vectors rotated along):
  objectivity of the element stiffness (McGuire, Gallagher & Ziemian 2000,
  Matrix Structural Analysis, 2nd ed., sec. 5.1, from memory);
* renumbering of points and cells, reversal of a cell's direction: the
  assembled pencil is the same up to a symmetric permutation and a change of
  local axes, which keeps eigenvalues (common practice);
* all axial forces times s: Kg times s, so lambda / s (Kg is linear in the
  axial force; Timoshenko & Gere 1961, Theory of Elastic Stability, sec. 2.1);
* E and G times 2 (same material scaled; G = E / (2 (1 + nu))): K times 2,
  so lambda times 2 (common practice).
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st
from scipy.spatial.transform import Rotation

import framebuckle as fb
from faultkit import mesh_from

SETTINGS = settings(max_examples=6, derandomize=True, deadline=None, database=None,
                    suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much])
K_MODES = 3
REL = 1e-6


@st.composite
def frames(draw):
    """A connected frame of 4-6 points on an integer grid, fixed at point 0 and one more point."""
    n = draw(st.integers(4, 6))
    grid = draw(st.lists(st.tuples(*[st.integers(-3, 3)] * 3), min_size=n, max_size=n, unique=True))
    pts = np.array(grid, float) * 1.5
    edges = {(draw(st.integers(0, i - 1)), i) for i in range(1, n)}        # a spanning tree
    for _ in range(draw(st.integers(0, 2))):
        a, b = draw(st.integers(0, n - 1)), draw(st.integers(0, n - 1))
        if a != b:
            edges.add((min(a, b), max(a, b)))
    cells = np.array(sorted(edges))
    ne = len(cells)
    d = pts[cells[:, 1]] - pts[cells[:, 0]]
    ori = np.array(draw(st.lists(st.tuples(*[st.integers(-2, 2)] * 3), min_size=ne, max_size=ne)), float)
    cross = np.linalg.norm(np.cross(d, ori), axis=1)
    assume((cross > 0.2 * np.linalg.norm(d, axis=1) * np.linalg.norm(ori, axis=1)).all())
    axial = np.array(draw(st.lists(st.integers(-9, 4), min_size=ne, max_size=ne)), float) * 1e4
    assume((axial < 0).any())
    props = {k: np.array(draw(st.lists(st.floats(lo, hi), min_size=ne, max_size=ne)))
             for k, lo, hi in (("A", 2e-3, 8e-3), ("Iy", 2e-5, 9e-5), ("Iz", 3e-6, 2e-5),
                               ("J", 1e-6, 5e-6))}
    r = np.zeros((n, 6))
    r[0] = 1
    r[draw(st.integers(1, n - 1))] = 1
    return dict(points=pts, cells=cells, axial=axial, restraint=r, orientation=ori,
                E=np.full(ne, 2.1e11), G=np.full(ne, 8.1e10), **props)


def lam(f, **change):
    g = dict(f, **change)
    mesh = mesh_from(g.pop("points"), g.pop("cells"), g.pop("axial"), g.pop("restraint"), **g)
    res = fb.solve(mesh, modes=K_MODES, subdivide=2, planar=False)
    return res.cases[0].load_factors


def _same(a, b, scale=1.0):
    assert len(a) == len(b) and len(a) > 0
    np.testing.assert_allclose(np.asarray(b) * scale, a, rtol=REL)


@SETTINGS
@given(frames(), st.tuples(*[st.floats(-np.pi, np.pi)] * 3), st.tuples(*[st.floats(-50, 50)] * 3))
def test_rigid_motion(f, angles, shift):
    R = Rotation.from_euler("xyz", angles).as_matrix()
    moved = dict(f, points=f["points"] @ R.T + np.array(shift), orientation=f["orientation"] @ R.T)
    _same(lam(f), lam(moved))


@SETTINGS
@given(frames(), st.randoms(use_true_random=False))
def test_renumbering_points_and_cells(f, rnd):
    n, ne = len(f["points"]), len(f["cells"])
    p = np.array(rnd.sample(range(n), n))            # old point i -> new number p[i]
    q = np.array(rnd.sample(range(ne), ne))          # new cell j is old cell q[j]
    pts = np.empty_like(f["points"])
    pts[p] = f["points"]
    r = np.empty_like(f["restraint"])
    r[p] = f["restraint"]
    g = {k: (v[q] if k not in ("points", "restraint") else v) for k, v in f.items()}
    g.update(points=pts, restraint=r, cells=p[f["cells"]][q])
    _same(lam(f), lam(g))


@SETTINGS
@given(frames(), st.data())
def test_reversed_cells(f, data):
    flip = np.array(data.draw(st.lists(st.booleans(), min_size=len(f["cells"]),
                                       max_size=len(f["cells"]))))
    cells = f["cells"].copy()
    cells[flip] = cells[flip][:, ::-1]
    _same(lam(f), lam(f, cells=cells))


@SETTINGS
@given(frames(), st.sampled_from([0.25, 3.0, 1000.0]))
def test_scaling_axial_forces(f, s):
    # Kg is linear in the axial force: lambda(s N) = lambda(N) / s
    _same(lam(f), lam(f, axial=f["axial"] * s), scale=s)


@SETTINGS
@given(frames())
def test_doubling_the_moduli(f):
    # K is linear in E and G: lambda(2E, 2G) = 2 lambda(E, G)
    _same(lam(f, E=f["E"] * 2, G=f["G"] * 2), lam(f), scale=2.0)
