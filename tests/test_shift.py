"""Shift-invert of the block eigensolver: the shift is proved below the lowest load factor.

References: the dense generalized symmetric eigensolver scipy.linalg.eigh (LAPACK dsygvd;
Anderson et al. 1999, LAPACK Users' Guide, 3rd ed., sec. 2.3.5.2) on the same matrices;
Sylvester's law of inertia (Golub & Van Loan 2013, Matrix Computations, 4th ed., sec. 8.1):
K + sigma Kg is positive definite exactly when no load factor lies in (0, sigma];
Courant-Fischer (Parlett 1998, The Symmetric Eigenvalue Problem, sec. 10.2): a Ritz value
of mu = 1/lambda never exceeds the largest mu, so 1/theta_max bounds lambda_1 from above.
"""

import importlib

import numpy as np
import pytest

from framebuckle.solver.eigen import factor_shift, rough_lowest
from framebuckle.solver.solve import buckling_modes

from test_block_eigen import columns, dense_load_factors, matrices, portal_grid

solve_mod = importlib.import_module("framebuckle.solver.solve")


@pytest.fixture(scope="module")
def grid():
    return matrices(*portal_grid(nb=2, ns=3))


def test_rough_estimate_bounds_lowest_from_above(grid):
    f, K, Gm = grid
    lam1 = dense_load_factors(K, Gm, 1)[0]
    est, ritz = rough_lowest(f.solve, K, -Gm, block=2, steps=3, nvec=5)
    assert est >= lam1 * (1 - 1e-10)
    assert ritz.shape == (K.shape[0], 5)


@pytest.mark.parametrize("frac", [0.5, 0.99, 1.3, 3.0])
def test_shift_factor_is_positive_definite_and_below_lowest(grid, frac):
    f, K, Gm = grid
    lam1 = dense_load_factors(K, Gm, 1)[0]
    sh = factor_shift(K, Gm, frac * lam1)
    assert sh is not None
    assert 0 < sh.sigma < lam1                       # lowered until positive definite
    assert (sh.sigma == frac * lam1) == (frac < 1)   # accepted at once only when it was below
    A = (K + sh.sigma * Gm).toarray()
    assert np.linalg.eigvalsh(A).min() > 0           # LAPACK: A really is positive definite
    x = np.random.default_rng(0).standard_normal(K.shape[0])
    np.testing.assert_allclose(A @ sh.solve(x), x, rtol=1e-8, atol=1e-8 * np.abs(x).max())


@pytest.mark.parametrize("shift", [True, False])
def test_block_with_and_without_shift_match_dense(grid, shift, monkeypatch):
    f, K, Gm = grid
    monkeypatch.setattr(solve_mod, "BLOCK_SHIFT", shift)
    k = 8
    er = buckling_modes(f, K, Gm, k, method="block")
    ref = dense_load_factors(K, Gm, k)
    np.testing.assert_allclose(er.load_factors, ref, rtol=1e-8)
    gram = er.modes.T @ (K @ er.modes)                # modes K-normalised after the shift
    np.testing.assert_allclose(gram, np.eye(k), atol=1e-8)
    assert er.residuals.max() < 1e-6


def test_shifted_block_warm_start_and_repeats():
    # 4 identical columns: 8 equal load factors (Timoshenko & Gere 1961, Theory of Elastic
    # Stability, 2nd ed., sec. 2.1: a square section buckles about both axes at the same load)
    f, K, Gm = matrices(*columns(4))
    ref = dense_load_factors(K, Gm, 9)
    er1 = buckling_modes(f, K, Gm, 6, method="block")
    er2 = buckling_modes(f, K, Gm, 6, method="block", v0=er1.modes)
    for er in (er1, er2):
        np.testing.assert_allclose(er.load_factors, ref[:6], rtol=1e-8)
        assert (np.diff(er.load_factors) >= 0).all()      # ascending even across exact repeats
        assert er.cluster_continues
        np.testing.assert_allclose(er.modes.T @ (K @ er.modes), np.eye(6), atol=1e-8)


def test_verify_records_the_shift_as_a_sturm_count(grid):
    from framebuckle.solver import verify
    f, K, Gm = grid
    er = buckling_modes(f, K, Gm, 6, method="block")
    rec = verify.check_case(K, Gm, er, 6, "test", "c")
    lam = dense_load_factors(K, Gm, K.shape[0])
    assert 0 < rec["shift_sigma"] < lam[0] and rec["shift_count"] == 0
    # the independent count above the top value agrees with LAPACK (repeats included)
    assert rec["sturm_count"] == int((lam < rec["sturm_shift"]).sum()) >= 6
