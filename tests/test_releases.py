"""End releases by static condensation (framebuckle.model.releases)."""

import math

import numpy as np
import pytest

import framebuckle as fb
from framebuckle.mechanics.elements import bar_elastic_local, bar_geometric_local, local_matrices
from framebuckle.errors import FrameBuckleError, ModelError
from framebuckle.model.model import make_frame
from framebuckle.model.refine import subdivide
from mech_models import E, G, column_mesh

L, I = 4.0, 6e-6
PE = math.pi ** 2 * E * I / L ** 2          # Timoshenko & Gere 1961, Theory of Elastic Stability, sec. 2.1


def test_propped_column_without_release_is_fixed_pinned():
    # fixed base, pinned top: P = 20.19 E I / L^2 (k L = 4.493; Timoshenko & Gere 1961, sec. 2.5)
    res = fb.solve(column_mesh(L=L, ncell=2, base="fixed"), subdivide=8)
    lam = res.cases[0].alpha_cr * 1000.0
    assert lam == pytest.approx(4.4934 ** 2 * E * I / L ** 2, rel=1e-3)


@pytest.mark.parametrize("how", ["field", "study_set", "study_cells"])
def test_propped_column_with_released_base_is_pinned_pinned(how):
    # base fixed but released for My, Mz: Euler pinned-pinned load (Timoshenko & Gere 1961, sec. 2.1)
    rs = np.array([[0, 0, 0, 0, 1, 1], [0, 0, 0, 0, 0, 0]], float)
    study = None
    if how == "field":
        mesh = column_mesh(L=L, ncell=2, base="fixed", cell_data={"release_start": rs})
    else:
        mesh = column_mesh(L=L, ncell=2, base="fixed")
        if how == "study_set":
            mesh.cell_sets = {"base_cell": [np.array([0])]}
            study = {"releases": [{"set": "base_cell", "start": "pinned"}]}
        else:
            study = {"releases": [{"cells": [0], "start": [0, 0, 0, 0, 1, 1]}]}
    res = fb.solve(mesh, study, subdivide=8)
    assert res.cases[0].alpha_cr * 1000.0 == pytest.approx(PE, rel=1e-3)
    # only the first sub-element's start carries the release
    rel = res.fine.release
    assert rel[:, :6].sum() == 2 and rel[0, 4] and rel[0, 5] and not rel[:, 6:].any()


def test_end_release_applies_to_last_subelement():
    frame = make_frame([[0, 0, 0], [0, 0, 2.0], [0, 0, 4.0]], [[0, 1], [1, 2]], E, G, 4e-3, I, I, 1e-6,
                       release=[[0] * 12, [0] * 6 + [0, 0, 0, 0, 1, 1]])
    ref = subdivide(frame, 3)
    rel = ref.frame.release
    assert rel.sum() == 2
    assert rel[5, 10] and rel[5, 11]          # last sub-element of cell 1 (fine elements 3, 4, 5)
    assert (ref.element_map[:6] == [0, 0, 0, 1, 1, 1]).all()


def test_member_released_in_bending_at_both_ends_is_a_bar():
    # condensed beam = bar (EA/L, string stiffness P/L) + torsion (common practice: static condensation,
    # McGuire, Gallagher & Ziemian 2000, Matrix Structural Analysis, 2nd ed.)
    nodes = [[0, 0, 0], [3.0, 0, 0]]
    rel = [[0, 0, 0, 0, 1, 1, 0, 0, 0, 0, 1, 1]]
    f = make_frame(nodes, [[0, 1]], E, G, 4e-3, I, 2 * I, 1e-6, release=rel)
    Kl, Gl, _, C = local_matrices(f)
    Kb = bar_elastic_local(np.array([3.0]), np.array([E]), np.array([4e-3]))[0]
    Gb = bar_geometric_local(np.array([3.0]))[0]
    tr = [0, 1, 2, 6, 7, 8]
    scale = E * 4e-3 / 3.0
    assert np.allclose(Kl[0][np.ix_(tr, tr)], Kb[np.ix_(tr, tr)], atol=1e-12 * scale)
    assert np.allclose(Gl[0][np.ix_(tr, tr)], Gb[np.ix_(tr, tr)], atol=1e-12)
    assert np.allclose(Kl[0][[4, 5, 10, 11]], 0.0, atol=1e-12 * scale)
    assert Kl[0][3, 3] == pytest.approx(G * 1e-6 / 3.0)


def test_released_truss_equals_bar_truss():
    # a triangulated plane truss: beams pinned at both ends give the same load factors as bars
    pts = np.array([[0, 0, 0], [4, 0, 0], [2, 0, 3], [6, 0, 3]], float)
    cells = np.array([[0, 1], [0, 2], [1, 2], [2, 3], [1, 3]])
    import meshio
    r = np.zeros((4, 6)); r[0, :3] = 1; r[1, 1:3] = 1
    n = len(cells)
    base = {"axial_force": [np.array([5e3, -8e3, -6e3, 4e3, -7e3])], "E": [np.full(n, E)], "G": [np.full(n, G)],
            "A": [np.full(n, 3e-3)], "Iy": [np.full(n, I)], "Iz": [np.full(n, I)], "J": [np.full(n, 1e-6)]}
    bars = meshio.Mesh(pts, [("line", cells)], point_data={"restraint": r},
                       cell_data=dict(base, bar=[np.ones(n)]))
    hinged = meshio.Mesh(pts, [("line", cells)], point_data={"restraint": r},
                         cell_data=dict(base, release_start=[np.tile([0, 0, 0, 0, 1, 1], (n, 1)).astype(float)],
                                        release_end=[np.tile([0, 0, 0, 0, 1, 1], (n, 1)).astype(float)]))
    a = fb.solve(bars, subdivide=1, modes=2, planar=True).cases[0].load_factors
    hb = fb.solve(hinged, subdivide=1, modes=2, planar=True)
    assert len(a) == 2 and np.allclose(a, hb.cases[0].load_factors, rtol=1e-9)
    assert any("restrained automatically" in n for n in hb.notes)


def test_axial_release_at_both_ends_is_refused():
    rel = np.zeros((1, 6)); rel[0, 0] = 1
    mesh = column_mesh(L=L, ncell=1, cell_data={"release_start": rel, "release_end": rel})
    with pytest.raises(ModelError, match="cell 0 .*start N, end N"):
        fb.solve(mesh, subdivide=1)           # one element: refused while condensing
    with pytest.raises(ModelError, match="mechanism.*inside cell 0 \\(uz\\)"):
        fb.solve(mesh, subdivide=4)           # sub-divided: the chain's axial DOF is free


def test_bad_release_values_are_refused():
    rel = np.full((1, 6), 2.0)
    with pytest.raises(FrameBuckleError, match="release_start"):
        fb.solve(column_mesh(ncell=1, cell_data={"release_start": rel}))
    with pytest.raises(FrameBuckleError, match="releases.*start"):
        fb.solve(column_mesh(ncell=1), {"releases": [{"cells": [0], "start": "hinge"}]})
