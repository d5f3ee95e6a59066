"""Block Krylov-Schur eigensolver: clusters and exact repeats of load factors.

Reference for every check: the dense generalized symmetric eigensolver
scipy.linalg.eigh (LAPACK dsygvd; Anderson et al. 1999, LAPACK Users' Guide,
3rd ed., sec. 2.3.5.2) on the same matrices.  The multiplicities follow from the
symmetry of the models (identical independent columns buckle at the same load;
a doubly symmetric section buckles about both axes at the same load: Timoshenko
& Gere 1961, Theory of Elastic Stability, 2nd ed., sec. 2.1).
"""

import numpy as np
import pytest
import scipy.linalg as sla

import framebuckle as fb
from framebuckle.mechanics.assemble import Assembler
from framebuckle.solver.eigen import block_krylov_schur
from framebuckle.model.model import make_frame
from framebuckle.model.refine import subdivide
from framebuckle.solver.solve import buckling_modes, factorize, find_constraints

E, G = 210e9, 81e9


def columns(n_cols, L=4.0, I=8e-6, spread=0.0, m=4):
    """``n_cols`` pinned columns side by side (not connected), square sections.

    Column c has I * (1 + spread * c): spread = 0 gives an exact repeat of
    multiplicity 2 * n_cols, a small spread a tight cluster.
    """
    nodes, elems, Is, rest = [], [], [], []
    for c in range(n_cols):
        nodes += [[3.0 * c, 0, 0], [3.0 * c, 0, L]]
        elems.append([2 * c, 2 * c + 1])
        Is.append(I * (1 + spread * c))
        rest += [[1, 1, 1, 0, 0, 1], [1, 1, 0, 0, 0, 0]]   # pinned both ways, twist held at the base
    Is = np.array(Is)
    fr = make_frame(np.array(nodes, float), np.array(elems), E, G, 5e-3, Is, Is, 2 * Is,
                    restraint=np.array(rest, bool))
    return subdivide(fr, m), np.full(n_cols, -1000.0)


def grid_layout(nb, ns, h=3.5, bay=5.0):
    """Points, cells (columns first, then beams along x and y), the number of columns, the cells'
    orientation vectors and the restraints (fixed bases) of an nb x nb bay, ns storey space grid."""
    g = np.arange(nb + 1) * bay
    X, Y, Z = np.meshgrid(g, g, np.arange(ns + 1) * h, indexing="ij")
    pts = np.stack([X.ravel(), Y.ravel(), Z.ravel()], 1)
    nid = np.arange(len(pts)).reshape(nb + 1, nb + 1, ns + 1)
    col = np.stack([nid[:, :, :-1].ravel(), nid[:, :, 1:].ravel()], 1)
    bx = np.stack([nid[:-1, :, 1:].ravel(), nid[1:, :, 1:].ravel()], 1)
    by = np.stack([nid[:, :-1, 1:].ravel(), nid[:, 1:, 1:].ravel()], 1)
    el = np.concatenate([col, bx, by])
    nc = len(col)
    ori = np.zeros((len(el), 3))
    ori[:nc, 0] = 1
    ori[nc:, 2] = 1
    rest = np.zeros((len(pts), 6), bool)
    rest[nid[:, :, 0].ravel()] = True
    return pts, el, nc, ori, rest


def portal_grid(nb=2, ns=2, h=3.5, bay=5.0, m=3):
    """A doubly symmetric space frame: nb x nb bays, ns storeys, square columns, fixed bases."""
    pts, el, nc, ori, rest = grid_layout(nb, ns, h, bay)
    I = np.r_[np.full(nc, 6e-5), np.full(len(el) - nc, 2e-4)]
    Iz = np.r_[np.full(nc, 6e-5), np.full(len(el) - nc, 1e-5)]
    fr = make_frame(pts, el, E, G, 1e-2, I, Iz, 1e-6, orientation=ori, restraint=rest)
    floors = ns - (np.arange(nc) % ns)           # storeys carried by each column (from the top)
    axial = np.r_[-1e5 * floors, np.zeros(len(el) - nc)]
    return subdivide(fr, m), axial


def matrices(ref, axial):
    asm = Assembler.build(ref.frame)
    K = asm.stiffness()
    cons = find_constraints(ref.frame, K, planar=False)
    f, Kff = factorize(K, cons, ref.frame, ref.coarse.n_nodes, "test")
    Gff = asm.geometric(ref.fine_axial(axial))[cons.free][:, cons.free]
    return f, Kff, Gff


def dense_load_factors(Kff, Gff, count):
    mu = sla.eigh(-Gff.toarray(), Kff.toarray(), eigvals_only=True)   # LAPACK reference
    mu = np.sort(mu)[::-1]
    mu = mu[mu > 1e-9 * mu[0]]
    return 1.0 / mu[:count]


def test_exact_repeat_every_copy_found_and_cluster_flagged():
    # 6 identical columns, square sections: the first load factor repeats 12 times
    f, K, Gm = matrices(*columns(6))
    k = 10
    ref = dense_load_factors(K, Gm, 13)
    np.testing.assert_allclose(ref[:12], ref[0], rtol=1e-9)   # the model's symmetry: 12 copies
    assert ref[12] > 3.9 * ref[0]
    er = buckling_modes(f, K, Gm, k, method="block")
    assert er.method == "block"
    assert len(er.load_factors) == k
    np.testing.assert_allclose(er.load_factors, ref[:k], rtol=1e-8)
    assert er.cluster_continues                  # the 11th and 12th copies exist
    # the k modes span k independent directions (K-orthonormal)
    gram = er.modes.T @ (K @ er.modes)
    np.testing.assert_allclose(gram, np.eye(k), atol=1e-8)


def test_cluster_not_flagged_when_it_ends_inside_the_request():
    # 6 identical columns: 12 equal load factors, then the second Euler mode (4x)
    f, K, Gm = matrices(*columns(6))
    er = buckling_modes(f, K, Gm, 12, method="block")
    ref = dense_load_factors(K, Gm, 13)
    np.testing.assert_allclose(er.load_factors, ref[:12], rtol=1e-8)
    assert ref[12] > 3.9 * ref[11]                # second Euler load: 4x the first
    assert not er.cluster_continues


def test_tight_cluster_resolved():
    # relative spacing 1e-7 between neighbouring columns: 2 x 5 load factors within 4e-7
    f, K, Gm = matrices(*columns(5, spread=1e-7))
    k = 8
    ref = dense_load_factors(K, Gm, k + 1)
    er = buckling_modes(f, K, Gm, k, method="block")
    np.testing.assert_allclose(er.load_factors, ref[:k], rtol=1e-8)
    assert er.cluster_continues == bool(abs(ref[k] - ref[k - 1]) <= 1e-6 * ref[k - 1])


@pytest.mark.parametrize("k", [3, 6, 10])
def test_symmetric_space_frame_against_dense(k):
    f, K, Gm = matrices(*portal_grid())
    ref = dense_load_factors(K, Gm, k + 1)
    er = buckling_modes(f, K, Gm, k, method="block")
    np.testing.assert_allclose(er.load_factors, ref[:k], rtol=1e-8)
    assert er.cluster_continues == bool(abs(ref[k] - ref[k - 1]) <= 1e-6 * ref[k - 1])
    assert (er.residuals < 1e-6).all()


def test_symmetric_frame_has_repeated_sway_loads():
    # the doubly symmetric frame sways in x and y at the same load: a repeat
    f, K, Gm = matrices(*portal_grid())
    ref = dense_load_factors(K, Gm, 6)
    er = buckling_modes(f, K, Gm, 2, method="block")
    assert abs(ref[1] / ref[0] - 1) < 1e-9        # the reference confirms the repeat
    np.testing.assert_allclose(er.load_factors, ref[:2], rtol=1e-8)


def test_warm_start_gives_same_answer_with_fewer_solves():
    ref_model, axial = portal_grid()
    f, K, G1 = matrices(ref_model, axial)
    _, _, G2 = matrices(ref_model, axial * np.linspace(1.0, 1.05, len(axial)))
    cold1 = block_krylov_schur(f.solve, K, -G1, 7)
    cold2 = block_krylov_schur(f.solve, K, -G2, 7)
    warm2 = block_krylov_schur(f.solve, K, -G2, 7, X0=cold1.vectors)
    ref = 1.0 / dense_load_factors(K, G2, 7)
    np.testing.assert_allclose(warm2.theta, ref, rtol=1e-8)
    np.testing.assert_allclose(cold2.theta, ref, rtol=1e-8)
    assert warm2.solves <= cold2.solves


def test_api_block_method_reports_cluster_note():
    import meshio
    ref, axial = columns(6, m=1)
    fr = ref.frame
    one = lambda v: [np.asarray(v, float)]
    mesh = meshio.Mesh(fr.nodes, [("line", fr.elements)],
                       point_data={"restraint": fr.restraint.astype(float)},
                       cell_data={"axial_force": one(axial), "E": one(fr.E), "G": one(fr.G),
                                  "A": one(fr.A), "Iy": one(fr.Iy), "Iz": one(fr.Iz), "J": one(fr.J)})
    res = fb.solve(mesh, modes=10, subdivide=4, method="block")
    c = res.cases[0]
    assert c.method == "block"
    assert c.cluster_continues
    assert any("cluster" in n for n in c.notes)
    pe = np.pi ** 2 * E * 8e-6 / 4.0 ** 2          # Timoshenko & Gere 1961, sec. 2.1
    np.testing.assert_allclose(c.load_factors * 1000 / pe, 1.0, rtol=2e-3)


# ------------------------------------------------------------------ the default: ARPACK first


def _solve_default(f, K, Gm, k):
    from framebuckle.solver.verify import solve_checked
    return solve_checked(f, K, Gm, k, source="test", case="c")


@pytest.mark.parametrize("model", [lambda: columns(6, m=8), lambda: portal_grid(3, 3, m=4)])
def test_default_method_finds_every_copy_of_a_repeat(model):
    # 12 (columns) and 11+ (doubly symmetric grid) equal load factors: a single-vector run finds
    # only some copies; the default hands such a result to the block method
    f, K, Gm = matrices(*model())
    assert K.shape[0] > 240                       # not the dense path
    k = 10
    ref = dense_load_factors(K, Gm, k + 1)        # LAPACK reference
    assert ref[k - 1] / ref[0] - 1 < 1e-9         # the model's symmetry: a repeat through mode k
    er, checks = _solve_default(f, K, Gm, k)
    assert er.method == "block"
    np.testing.assert_allclose(er.load_factors, ref[:k], rtol=1e-8)
    assert checks["sturm_count"] >= k == checks["sturm_expected"]
    gram = er.modes.T @ (K @ er.modes)
    np.testing.assert_allclose(gram, np.eye(k), atol=1e-8)


def _plane_frame_pencil():
    """The scaled pencil of a 4-storey, 3-bay plane sway frame (distinct load factors)."""
    from frames import sway_frame
    r = fb.solve(sway_frame(storeys=4, bays=3), modes=1, subdivide=8, method="dense", mesh_check=False)
    return r.pencil(r.cases[0].name)


def test_default_method_is_arpack_without_repeats():
    f, K, Gm = _plane_frame_pencil()
    assert K.shape[0] > 240                       # not the dense path
    k = 6
    ref = dense_load_factors(K, Gm, k + 1)        # LAPACK reference
    assert (np.diff(ref[: k + 1]) > 1e-5 * ref[1: k + 1]).all()     # no repeat
    er, checks = _solve_default(f, K, Gm, k)
    assert er.method == "arpack"
    np.testing.assert_allclose(er.load_factors, ref[:k], rtol=1e-8)
    assert checks["sturm_count"] == k and "retried" not in checks


def test_a_load_factor_skipped_without_a_visible_repeat_is_solved_again(monkeypatch):
    # ARPACK made to skip the lowest load factor (as a single-vector run can skip a copy of a
    # repeated one without showing the repeat): the Sturm count of the check finds it and the
    # case is solved again with the block method
    from framebuckle.solver import solve as S
    from framebuckle.solver import verify
    real = S._lanczos

    def skip_lowest(factor, Kff, Gff, k, v0, source, case):
        er, _ = real(factor, Kff, Gff, k + 1, v0, source, case)
        assert er is not None and er.method == "arpack"
        keep = np.r_[1:k + 1]
        return S.EigenResult(er.load_factors[keep], er.modes[:, keep], er.residuals[keep], False,
                             "arpack"), None
    monkeypatch.setattr(S, "_lanczos", skip_lowest)
    monkeypatch.setattr(verify, "DENSE_RETRY", 0)           # the block method, not dense
    f, K, Gm = _plane_frame_pencil()
    k = 4
    ref = dense_load_factors(K, Gm, k)
    er, checks = _solve_default(f, K, Gm, k)
    assert checks["retried"] == "block" and er.method == "block"
    np.testing.assert_allclose(er.load_factors, ref[:k], rtol=1e-8)
    assert checks["sturm_count"] == k


def test_an_arpack_error_hands_the_case_to_the_block_method(monkeypatch):
    # ARPACK failing in its own way (not only "no convergence") must not end the run: the block
    # method solves the case; LAPACK reference as above
    import scipy.sparse.linalg as spla
    from framebuckle.solver import arpack as A

    def broken(*args, **kw):
        raise spla.ArpackError(-9999)               # "could not build an Arnoldi factorization"
    monkeypatch.setattr(A.spla, "eigsh", broken)
    f, K, Gm = _plane_frame_pencil()
    er, checks = _solve_default(f, K, Gm, 3)
    assert er.method == "block"
    np.testing.assert_allclose(er.load_factors, dense_load_factors(K, Gm, 3), rtol=1e-8)
