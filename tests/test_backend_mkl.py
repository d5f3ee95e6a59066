"""The optional MKL PARDISO backend (extra ``fast``) gives the same answers as scipy.

References: the dense symmetric eigensolver numpy.linalg.eigvalsh (LAPACK dsyevd; Anderson et
al. 1999, LAPACK Users' Guide, 3rd ed., sec. 2.3.4.1) for inertia counts; Sylvester's law of
inertia (Golub & Van Loan 2013, Matrix Computations, 4th ed., sec. 8.1): the number of negative
pivots of an LDL^T factorization is the number of negative eigenvalues; the scipy backend
(SuperLU, ARPACK-free block solver already tested against LAPACK in test_block_eigen.py) for
load factors and Sturm counts of whole runs.

Skipped only when the MKL runtime library cannot be loaded (the default install has none);
CI installs the extra (.ci/run), so there these tests run.
"""

from pathlib import Path

import numpy as np
import pytest
import scipy.sparse as sp

from framebuckle.solver import pardiso
from framebuckle.errors import InputError, ModelError

if not pardiso.available():
    pytest.skip("MKL runtime (libmkl_rt) not loadable: install the extra 'fast'",
                allow_module_level=True)

import framebuckle                                           # noqa: E402
from framebuckle.model.refine import subdivide                    # noqa: E402

import frames                                                # noqa: E402
import refmodels                                             # noqa: E402
from test_block_eigen import matrices, portal_grid           # noqa: E402

SAMPLES = Path(__file__).resolve().parents[1] / "sample_meshes"
REL = 1e-9


def _run(inp, solver, study=None, **kw):
    st = dict(study or {})
    st.setdefault("analysis", {})
    st["analysis"] = dict(st["analysis"], solver=solver)
    return framebuckle.solve(inp, st, **kw)


def _compare(inp, study=None, **kw):
    a = _run(inp, "scipy", study, **kw)
    b = _run(inp, "mkl", study, **kw)
    assert a.timings["backend"] == "scipy"
    assert b.timings["backend"] == "mkl"
    assert len(a.cases) == len(b.cases)
    compared = 0
    for ca, cb in zip(a.cases, b.cases):
        assert ca.status == cb.status
        la, lb = np.asarray(ca.load_factors), np.asarray(cb.load_factors)
        assert la.shape == lb.shape
        np.testing.assert_allclose(lb, la, rtol=REL, atol=0)
        for key in ("sturm_count", "sturm_expected", "shift_count"):
            assert ca.checks.get(key) == cb.checks.get(key), key
        compared += len(la)
    assert compared > 0
    return a, b


@pytest.fixture(scope="module")
def grid():
    return matrices(*portal_grid(nb=2, ns=3))


# ------------------------------------------------------------------ the binding itself


def test_block_solve_matches_matrix(grid):
    _, K, _ = grid
    f = pardiso.PardisoFactor(K, 2)
    B = np.random.default_rng(1).standard_normal((K.shape[0], 5))
    X = f.solve(B)
    assert np.linalg.norm(K @ X - B) <= 1e-10 * np.linalg.norm(B)
    x = f.solve(B[:, 2])                                 # one vector: the same column
    np.testing.assert_allclose(x, X[:, 2], rtol=1e-12, atol=1e-14 * np.abs(X).max())
    f.close()
    f.close()                                            # releasing twice is harmless


@pytest.mark.parametrize("fraction", [0.5, 1.7, 3.1, 6.0])
def test_inertia_matches_dense_eigenvalues(grid, fraction):
    # Sylvester's law of inertia (Golub & Van Loan 2013, sec. 8.1) vs LAPACK eigenvalues
    _, K, G = grid
    mu = np.linalg.eigvalsh(np.linalg.solve(np.linalg.cholesky(K.toarray()),
                                            np.linalg.solve(np.linalg.cholesky(K.toarray()), -G.toarray()).T))
    lam1 = 1.0 / mu.max()
    A = (K + fraction * lam1 * G).tocsr()
    ev = np.linalg.eigvalsh(A.toarray())
    counts = pardiso.inertia(A)
    assert counts is not None
    assert counts == (int((ev > 0).sum()), int((ev < 0).sum()))
    assert (fraction < 1) == (counts[1] == 0)
    pd_factor = pardiso.positive_definite_factor(A)   # Cholesky: only when positive definite
    assert (pd_factor is not None) == (counts[1] == 0)


def test_kept_analysis_gives_the_counts_of_fresh_factorizations(grid):
    # counts at a sequence of shifts (same pattern: the handle's analysis is reused) against
    # LAPACK eigenvalues of each matrix (Sylvester's law of inertia)
    _, K, G = grid
    pardiso.release_counts()
    seen = []
    for sigma in (2e3, 5e5, 5e6, 3e7, 2e3):
        A = (K + sigma * G).tocsr()
        ev = np.linalg.eigvalsh(A.toarray())
        assert pardiso.inertia(A) == (int((ev > 0).sum()), int((ev < 0).sum()))
        seen.append(id(next(iter(pardiso._counter.values()))))
    assert len(set(seen)) == 1                     # one handle: the analysis was kept
    n = K.shape[0]
    E = sp.eye(n, k=n - 1) * 1e-3                 # a symmetric coupling of the first and last DOF:
    B = (K + 5e5 * G + E + E.T).tocsr()           # a new pattern
    ev = np.linalg.eigvalsh(B.toarray())
    assert pardiso.inertia(B) == (int((ev > 0).sum()), int((ev < 0).sum()))
    assert id(next(iter(pardiso._counter.values()))) != seen[0]
    pardiso.release_counts()
    assert not pardiso._counter


def test_negative_count_goes_through_mkl(grid):
    from framebuckle.solver.verify import negative_count
    _, K, G = grid
    A = (K + 1e9 * G).tocsr()
    ev = np.linalg.eigvalsh(A.toarray())
    with pardiso.use("mkl"):
        n_mkl, how = negative_count(A)
    with pardiso.use("scipy"):
        n_sp, how_sp = negative_count(A)
    assert "MKL" in how and "MKL" not in how_sp
    assert n_mkl == n_sp == int((ev < 0).sum())


def test_indefinite_matrix_refused_by_cholesky():
    A = sp.diags([2.0, 1.0, -1e-3, 4.0]).tocsr() + sp.csr_matrix(np.eye(4, k=1) * 0.1)
    A = (A + A.T) / 2
    assert pardiso.positive_definite_factor(A) is None
    assert pardiso.inertia(A) == (3, 1)                 # eigenvalues by hand: one negative


# ------------------------------------------------------------------ whole runs, both backends


def test_same_results_sway_frame_block_solver():
    m = frames.sway_frame(storeys=4, bays=3)
    _compare(m, modes=6, subdivide=6, method="block")


def test_same_results_3d_frame():
    m = refmodels.line_mesh(**refmodels.frame3d())
    _compare(m, modes=5, subdivide=8, method="block")


@pytest.mark.parametrize("name", ["lattice_mast.vtu", "workshop_portal.vtu", "footbridge.msh"])
def test_same_results_samples(name):
    study = None
    if name == "footbridge.msh":
        import tomllib
        study = tomllib.loads((SAMPLES / "footbridge.study.toml").read_text())
    _compare(str(SAMPLES / name), study, modes=4, method="block")


def test_sturm_count_by_mkl_in_run():
    # a model above the dense Sturm limit: the count is made by PARDISO's LDL^T
    a, b = _compare(frames.sway_frame(storeys=4, bays=3), modes=4, subdivide=8, method="block")
    assert "MKL" in b.cases[0].checks["sturm_method"]
    assert "MKL" not in a.cases[0].checks["sturm_method"]


def test_mechanism_still_diagnosed_with_mkl():
    # a pinned column free at the top rotates as a rigid body (common practice: a mechanism)
    m = frames.mesh([[0, 0, 0], [0, 0, 4]], [[0, 1]], [frames.PINNED, frames.FREE],
                    {"A": [5e-3], "Iy": [8e-6], "Iz": [8e-6], "J": [2e-5], "E": [frames.E],
                     "G": [frames.G], "axial_force": [-1e3]})
    msgs = []
    for solver in ("scipy", "mkl"):
        with pytest.raises(ModelError) as exc:
            _run(m, solver)
        msgs.append(str(exc.value))
    assert "mechanism" in msgs[1] and "Free DOFs" in msgs[1]
    assert msgs[0] == msgs[1]


def test_unknown_solver_refused():
    with pytest.raises(InputError, match="solver"):
        framebuckle.solve(frames.portal(), {"analysis": {"solver": "fastest"}})


def test_factor_reports_backend():
    from framebuckle.solver.solve import Factor
    K = sp.diags([4.0, 5.0, 6.0]).tocsc()
    with pardiso.use("mkl"):
        assert Factor(K).backend == "mkl"
    with pardiso.use("scipy"):
        assert Factor(K).backend == "scipy"
    with pardiso.use("mkl"):                            # not positive definite: SuperLU decides
        f = Factor(sp.diags([4.0, -5.0, 6.0]).tocsc())
        assert f.backend == "scipy"


def test_singular_matrix_count_not_trusted():
    # the Laplacian of a path graph is singular (L @ ones = 0, by hand): PARDISO perturbs a
    # pivot, so its inertia is not used and the count falls back to scipy's path
    from framebuckle.solver.verify import negative_count
    n = 400
    L = sp.diags([-np.ones(n - 1), np.r_[1.0, 2.0 * np.ones(n - 2), 1.0], -np.ones(n - 1)],
                 [-1, 0, 1]).tocsr()
    assert np.abs(L @ np.ones(n)).max() == 0.0
    assert pardiso.inertia(L) is None
    assert pardiso.positive_definite_factor(L) is None
    with pardiso.use("mkl"):
        _, how = negative_count(L)
    assert "MKL" not in how


def test_explicit_mkl_without_library_is_an_error(monkeypatch):
    monkeypatch.setattr(pardiso, "available", lambda: False)
    with pytest.raises(InputError, match="fast"):
        pardiso.check_choice("mkl", "study.toml")
    assert pardiso.check_choice("auto") == "auto"           # auto falls back to scipy
    with pardiso.use("auto"):
        assert pardiso.backend() == "scipy"


def test_auto_uses_mkl_from_its_size_threshold(monkeypatch):
    # "auto": scipy below pardiso.AUTO_MIN rows, MKL from there on; "mkl" always MKL
    m = frames.portal()
    with pardiso.use("auto"):
        assert framebuckle.solve(m, modes=2, subdivide=8).timings["backend"] == "scipy"
        monkeypatch.setattr(pardiso, "AUTO_MIN", 0)
        assert framebuckle.solve(m, modes=2, subdivide=8).timings["backend"] == "mkl"
    monkeypatch.setattr(pardiso, "AUTO_MIN", 10**9)
    with pardiso.use("mkl"):
        assert framebuckle.solve(m, modes=2, subdivide=8).timings["backend"] == "mkl"

