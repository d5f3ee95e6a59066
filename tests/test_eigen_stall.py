"""The block eigensolver on models where it used to stall, and its fallbacks.

Reference for every load factor: the dense generalized symmetric eigensolver
scipy.linalg.eigh (LAPACK dsygvd; Anderson et al. 1999, LAPACK Users' Guide, 3rd ed.,
sec. 2.3.5.2) on the same matrices, to 1e-8 relative.  The models are invented: the one-storey
frame of combomodels.py with end-moment terms recovered from rotations (14 nearly equal
local load factors right above the lowest one: a cluster wider than the kept part of the
block solver's initial basis) and the building of benchmarks/building.py under combinations.
"""

import importlib

import numpy as np
import pytest
import scipy.linalg as sla

import combomodels as cm
import framebuckle as fb
from framebuckle.errors import SolverError
from framebuckle.solver import eigen
from framebuckle.solver import verify
from framebuckle.solver.solve import buckling_modes

solve_mod = importlib.import_module("framebuckle.solver.solve")
arpack_mod = importlib.import_module("framebuckle.solver.arpack")
STUDY = {"combinations": {"ULS": {"G": 1.35, "Q": 1.5, "W_y": -0.9}}, "analysis": {"moment_terms": True}}


def dense_lambdas(K, G, k):
    mu = sla.eigh(-G.toarray(), K.toarray(), eigvals_only=True)
    mu = np.sort(mu[mu > 0])[::-1]
    return 1.0 / mu[:k]


@pytest.fixture(scope="module")
def moment_frame():
    return cm.mesh(with_displacements=True)


@pytest.fixture(scope="module")
def q_pencil(moment_frame):
    r = fb.solve(moment_frame, STUDY, modes=1, mesh_check=False, method="dense")
    return r.pencil("Q")


def test_cluster_wider_than_the_basis_converges_in_the_block_solver(moment_frame):
    # used to end with "did not converge in 200 restarts (mode 2 of 2)" in case 'Q'
    r = fb.solve(moment_frame, STUDY, modes=1, mesh_check=False, method="block")
    for c in r.cases:
        assert c.method == "block"
        fac, K, G = r.pencil(c.name)
        assert c.alpha_cr == pytest.approx(dense_lambdas(K, G, 1)[0], rel=1e-8)   # scipy eigh


def test_cluster_case_by_the_default_method_agrees_with_eigh(moment_frame):
    # the default (ARPACK first, block method on a possible repeat) on the same clustered cases
    r = fb.solve(moment_frame, STUDY, modes=1, mesh_check=False)
    for c in r.cases:
        assert c.method in ("arpack", "block")
        fac, K, G = r.pencil(c.name)
        assert c.alpha_cr == pytest.approx(dense_lambdas(K, G, 1)[0], rel=1e-8)   # scipy eigh


def test_cluster_needs_the_basis_to_grow(q_pencil, monkeypatch):
    fac, K, G = q_pencil
    ref = dense_lambdas(K, G, 2)
    assert (ref[1] - dense_lambdas(K, G, 15)[-1]) < 1e-4 * ref[1]    # the cluster is there
    er = buckling_modes(fac, K, G, 2, method="block")
    np.testing.assert_allclose(er.load_factors, ref, rtol=1e-8)      # scipy eigh
    verify.check_case(K, G, er, 2, "<t>", "Q")
    # without growth the stall is detected and the solver gives up early, unconverged
    monkeypatch.setattr(eigen, "GROW_LIMIT", 1)
    sh = solve_mod._shift(fac, K, G, None, 2)
    br = eigen.block_krylov_schur(sh.solve, sh.A, -G, 2, X0=sh.start, tol=1e-8)
    assert not br.converged and br.cycles < 200


@pytest.mark.parametrize("shift", [True, False])
def test_stalled_block_falls_back_to_arpack(q_pencil, monkeypatch, shift):
    fac, K, G = q_pencil
    monkeypatch.setattr(solve_mod, "BLOCK_SHIFT", shift)
    bks = eigen.block_krylov_schur
    monkeypatch.setattr(eigen, "block_krylov_schur", lambda *a, **kw: bks(*a, **{**kw, "max_cycles": 2}))
    er = buckling_modes(fac, K, G, 3, method="block")
    assert er.method == ("arpack-shift" if shift else "arpack")
    assert "stalled" in er.notes[0]
    np.testing.assert_allclose(er.load_factors, dense_lambdas(K, G, 3), rtol=1e-8)   # scipy eigh
    verify.check_case(K, G, er, 3, "<t>", "Q")


def test_dense_when_arpack_fails_too(q_pencil, monkeypatch):
    fac, K, G = q_pencil
    bks = eigen.block_krylov_schur
    monkeypatch.setattr(eigen, "block_krylov_schur", lambda *a, **kw: bks(*a, **{**kw, "max_cycles": 2}))

    def no(*a, **kw):
        raise SolverError("no convergence")
    monkeypatch.setattr(arpack_mod, "_arpack", no)
    er = buckling_modes(fac, K, G, 2, method="block")
    assert er.method == "dense"
    np.testing.assert_allclose(er.load_factors, dense_lambdas(K, G, 2), rtol=1e-8)   # scipy eigh
    verify.check_case(K, G, er, 2, "<t>", "Q")
    monkeypatch.setattr(arpack_mod, "DENSE_FALLBACK", 10)
    with pytest.raises(SolverError, match="stalled"):
        buckling_modes(fac, K, G, 2, method="block")
