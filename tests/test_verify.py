"""Wrong answers are refused: residual, K-orthogonality, convergence and Sturm
sequence checks of framebuckle.solver.verify, against scipy's dense symmetric
eigensolver (scipy.linalg.eigh, LAPACK) as the reference.

Sturm sequence property / Sylvester's law of inertia: the number of negative
pivots of an LDL^T factorization of K + sigma Kg equals the number of
eigenvalues of the pencil below sigma (Bathe 1996, Finite Element Procedures,
sec. 8.2.5, from memory; Golub & Van Loan 2013, Matrix Computations, 4th ed.,
sec. 8.1, Sylvester's law of inertia).
"""

from __future__ import annotations

import sys
from dataclasses import replace

import numpy as np
import pytest
import scipy.linalg as sla

import framebuckle as fb
from framebuckle.solver import verify
from framebuckle.mechanics.assemble import Assembler
from framebuckle.errors import SolverError
from framebuckle.io.read import read_input
from framebuckle.model.refine import subdivide

from faultkit import IY, IZ, mesh_from, portal, portal_arrays

S = sys.modules["framebuckle.solver.solve"]   # the module (fb.solve is the API function)


def _pencil(mesh, m=3):
    im = read_input(mesh)
    ref = subdivide(im.frame, m)
    asm = Assembler.build(ref.frame)
    K = asm.stiffness()
    cons = S.find_constraints(ref.frame, K, "auto")
    factor, Kff = S.factorize(K, cons, ref.frame, im.frame.n_nodes, "<test>")
    G = asm.geometric(ref.fine_axial(im.cases[0].axial))
    Gff = G[cons.free][:, cons.free]
    return factor, Kff.tocsr(), Gff.tocsr()


@pytest.fixture(scope="module")
def portal_pencil():
    # J raised so that the single-member twist modes lie far above the sway and flexural modes
    factor, Kff, Gff = _pencil(portal(J=2e-5))
    mu = sla.eigh(-Gff.toarray(), Kff.toarray(), eigvals_only=True)   # scipy reference
    lam = np.sort(1.0 / mu[mu > 1e-12 * mu.max()])
    return factor, Kff, Gff, lam


@pytest.mark.parametrize("dense", [True, False], ids=["dense-LDL", "sparse-LDL"])
def test_sturm_count_matches_dense_eigenvalues(portal_pencil, dense, monkeypatch):
    factor, Kff, Gff, lam = portal_pencil
    if not dense:
        monkeypatch.setattr(verify, "DENSE_STURM", 0)
        monkeypatch.setattr(verify, "DENSE_FALLBACK", 0)
    distinct = np.flatnonzero(np.diff(lam) > 1e-3 * lam[1:])
    gaps = (lam[distinct] + lam[distinct + 1]) / 2
    sigmas = np.r_[lam[0] / 2, gaps[[0, 1, 2, 5, 20]]]
    for s in sigmas:
        n, how = verify.negative_count(Kff + s * Gff)
        assert ("sparse" in how) != dense
        assert n == int((lam < s).sum()), (s, n, how)


def _dense_result(Kff, Gff, k):
    mu, V = sla.eigh(-Gff.toarray(), Kff.toarray())
    order = np.argsort(mu)[::-1][:k]
    return S.EigenResult(1.0 / mu[order], V[:, order], np.zeros(k), False, "dense")


def test_correct_result_passes_and_is_recorded(portal_pencil):
    factor, Kff, Gff, lam = portal_pencil
    er = _dense_result(Kff, Gff, 3)
    rec = verify.check_case(Kff, Gff, er, 3, "<test>", "c")
    assert rec["sturm_count"] == rec["sturm_expected"] == 3
    assert rec["max_residual"] < 1e-8 and rec["max_k_orthogonality"] < 1e-8


def test_missed_lowest_load_factor_is_refused(portal_pencil):
    factor, Kff, Gff, lam = portal_pencil
    er = _dense_result(Kff, Gff, 4)
    missed = replace(er, load_factors=er.load_factors[1:], modes=er.modes[:, 1:])
    with pytest.raises(SolverError, match="missed a load factor|Sturm"):
        verify.check_case(Kff, Gff, missed, 3, "<test>", "c")


def test_missing_requested_modes_are_refused(portal_pencil):
    factor, Kff, Gff, lam = portal_pencil
    er = _dense_result(Kff, Gff, 2)
    with pytest.raises(SolverError, match="2 of the 4 requested"):
        verify.check_case(Kff, Gff, er, 4, "<test>", "c")


def test_wrong_load_factor_is_refused(portal_pencil):
    factor, Kff, Gff, lam = portal_pencil
    er = _dense_result(Kff, Gff, 3)
    bad = replace(er, load_factors=er.load_factors * np.array([1.0, 1.001, 1.0]))
    with pytest.raises(SolverError, match="mode 2 .* did not converge"):
        verify.check_case(Kff, Gff, bad, 3, "<test>", "c")


def test_repeated_mode_is_refused(portal_pencil):
    factor, Kff, Gff, lam = portal_pencil
    er = _dense_result(Kff, Gff, 3)
    V = er.modes.copy()
    V[:, 1] = V[:, 0] * 2.0
    bad = replace(er, load_factors=np.r_[er.load_factors[0], er.load_factors[0], er.load_factors[2]],
                  modes=V)
    with pytest.raises(SolverError, match="not K-orthogonal"):
        verify.check_case(Kff, Gff, bad, 3, "<test>", "c")


def test_negative_or_unsorted_load_factors_are_refused(portal_pencil):
    factor, Kff, Gff, lam = portal_pencil
    er = _dense_result(Kff, Gff, 3)
    bad = replace(er, load_factors=er.load_factors[::-1], modes=er.modes[:, ::-1])
    with pytest.raises(SolverError, match="ascending"):
        verify.check_case(Kff, Gff, bad, 3, "<test>", "c")


def test_summary_records_sturm_count_per_case():
    res = fb.solve(portal(), modes=3, subdivide=2)
    s = res.summary()
    c = s["cases"][0]["checks"]
    assert c["sturm_count"] >= 3 and c["sturm_expected"] == 3
    assert c["sturm_shift"] > s["cases"][0]["load_factors"][-1]


def _soft_cantilever(f):
    """A 4 m cantilever of four cells; cell 2 has its bending stiffness times f."""
    pts = np.array([[0, 0, z] for z in range(5)], float)
    cells = np.array([[i, i + 1] for i in range(4)])
    r = np.zeros((5, 6))
    r[0] = 1
    Iy, Iz = np.full(4, IY), np.full(4, IZ)
    Iy[2] *= f
    Iz[2] *= f
    return mesh_from(pts, cells, np.full(4, -1e3), r, Iy=Iy, Iz=Iz)


def test_near_singular_stiffness_warns_naming_the_soft_cell():
    assert fb.solve(_soft_cantilever(1.0), subdivide=4, mesh_check=False).warnings == []
    res = fb.solve(_soft_cantilever(1e-6), subdivide=4, mesh_check=False)
    w = [x for x in res.warnings if "near-singular" in x]
    assert len(w) == 1 and "cell(s) 2" in w[0] and "Weakest DOFs: " in w[0]
    assert res.summary()["warnings"] == res.warnings


def test_too_ill_conditioned_model_is_refused_with_the_reason():
    # the pencil is solved diagonally scaled (unit-free): a cell 1e-8 times softer than its
    # neighbours still solves (scaled condition number 3e12); one 1e-10 times softer does not
    with pytest.raises(SolverError, match="near-singular .* cell\\(s\\) 2"):
        fb.solve(_soft_cantilever(1e-10), subdivide=4, mesh_check=False)


def test_iterative_solution_of_a_repeated_cluster_is_complete():
    # the portal's four columns twist alike: a four-fold load factor that an iterative
    # (Lanczos) solver can return fewer copies of; the Sturm check makes the run solve such a
    # case again densely, so the reported values always match scipy's dense eigh
    _, Kff, Gff = _pencil(portal(), m=2)
    mu = sla.eigh(-Gff.toarray(), Kff.toarray(), eigvals_only=True)
    ref = np.sort(1.0 / mu[mu > 1e-12 * mu.max()])[:6]
    res = fb.solve(portal(), modes=6, subdivide=2, method="arpack")
    np.testing.assert_allclose(res.cases[0].load_factors, ref, rtol=1e-8)
    assert res.cases[0].checks["sturm_count"] >= 6


# ------------------------------------------------------------------ Sturm counts in a second process


@pytest.fixture
def started(monkeypatch):
    """A list that gets an entry each time a SturmWorker (a second process) is started."""
    calls = []
    real_init = verify.SturmWorker.__init__

    def spy(self):
        calls.append(True)
        real_init(self)
    monkeypatch.setattr(verify.SturmWorker, "__init__", spy)
    return calls


def test_parallel_sturm_counts_equal_the_serial_ones(monkeypatch, started):
    """Large models count in a worker process; the record must be the one the serial
    path writes (same count, shift and method), for every case."""
    monkeypatch.setattr(verify, "PARALLEL_STURM_MIN", 10**9)
    serial = fb.solve(portal(), modes=3, subdivide=2).summary()["cases"]
    monkeypatch.setattr(verify, "PARALLEL_STURM_MIN", 0)
    res = fb.solve(portal(), modes=3, subdivide=2, sturm_worker=True)
    assert started, "the worker process was not used"
    assert "sturm_wait" in res.timings
    parallel = res.summary()["cases"]
    assert [c["checks"] for c in parallel] == [c["checks"] for c in serial]
    c = parallel[0]["checks"]
    assert c["sturm_count"] >= c["sturm_expected"] == 3 and c["sturm_method"]


def test_parallel_sturm_count_still_refuses_a_missed_load_factor(monkeypatch):
    """A result that skips the lowest load factor is refused when the count runs in the
    worker too (the count itself is computed there from the matrices sent)."""
    monkeypatch.setattr(verify, "PARALLEL_STURM_MIN", 0)
    from framebuckle.solver import solve as solver_solve
    real = solver_solve.buckling_modes

    def skip_lowest(factor, Kff, Gff, k=4, **kw):
        er = real(factor, Kff, Gff, k + 1, **kw)
        return replace(er, load_factors=er.load_factors[1:], modes=er.modes[:, 1:], residuals=er.residuals[1:])
    monkeypatch.setattr(solver_solve, "buckling_modes", skip_lowest)   # verify.solve_checked calls it
    monkeypatch.setattr(verify, "DENSE_RETRY", 0)            # no dense second attempt
    with pytest.raises(SolverError, match="missed a load factor|Sturm"):
        fb.solve(portal(), modes=3, subdivide=2, sturm_worker=True)


def test_no_worker_for_small_models_or_inside_daemonic_workers(monkeypatch):
    import multiprocessing as mp
    assert verify.SturmWorker.maybe(verify.PARALLEL_STURM_MIN - 1) is None

    class Daemon:
        daemon = True
    monkeypatch.setattr(mp, "current_process", lambda: Daemon())
    assert verify.SturmWorker.maybe(10 * verify.PARALLEL_STURM_MIN) is None   # e.g. a Dask worker


def test_worker_only_when_asked_the_command_line_asks(monkeypatch, tmp_path, started):
    """The API starts no process unless asked (multiprocessing "spawn" would import an
    unguarded calling script again); the solve command asks."""
    from framebuckle import cli
    monkeypatch.setattr(verify, "PARALLEL_STURM_MIN", 0)
    res = fb.solve(portal(), modes=3, subdivide=2)
    assert not started and "sturm_wait" not in res.timings
    assert res.summary()["cases"][0]["checks"]["sturm_count"] >= 3
    import meshio
    path = tmp_path / "portal.vtu"
    meshio.write(path, portal())
    assert cli.main(["solve", str(path), "--modes", "3", "--subdivide", "2", "--out", str(tmp_path / "out")]) == 0
    assert started


def test_sturm_worker_that_dies_is_replaced_by_a_count_here(portal_pencil):
    """A worker process that dies (killed, out of memory) loses no check: the count is
    made in the main process, with the same record as the serial path."""
    import os
    factor, Kff, Gff, lam = portal_pencil
    er = _dense_result(Kff, Gff, 3)
    serial = verify.sturm_check(Kff, Gff, er.load_factors, 3, "<test>", "c")
    w = verify.SturmWorker()
    try:
        before, after = {}, {}
        w.submit(before, Kff, Gff, er.load_factors, 3, "<test>", "c")
        w.collect()
        w._pool.submit(os._exit, 1)                      # the worker process dies
        w.submit(after, Kff, Gff, er.load_factors, 3, "<test>", "c")
        w.collect()
    finally:
        w.close()
    assert before == serial and after == serial and serial["sturm_count"] >= 3


def test_dense_retry_never_applies_where_the_count_runs_in_the_worker():
    # api.run retries a case densely when its own Sturm count finds a skipped copy of a repeated
    # load factor (at most DENSE_RETRY free DOFs); a count made in the worker can only refuse the
    # case. Both paths behave alike only while the worker starts above the retry limit.
    assert verify.DENSE_RETRY < verify.PARALLEL_STURM_MIN
