r"""Block Krylov-Schur eigensolver for the buckling pencil.

We want the ``nev`` largest algebraic eigenvalues :math:`\mu` of

.. math::  -K_g \phi = \mu K \phi, \qquad K \text{ symmetric positive definite},

i.e. of the operator :math:`A = K^{-1}(-K_g)`, which is self-adjoint in the
:math:`K` inner product :math:`\langle x, y\rangle_K = x^T K y`.

Method (a block form of the Krylov-Schur / thick-restart Lanczos method;
Stewart 2001, "A Krylov-Schur algorithm for large eigenproblems", SIAM J.
Matrix Anal. Appl. 23(3); Zhou & Saad 2008, "Block Krylov-Schur method for
large symmetric eigenvalue problems", Numer. Algorithms 47):

* the basis :math:`V` (``n x m``) is :math:`K`-orthonormal and grows by blocks
  of ``b`` vectors: the next block is :math:`A` applied to the last one, i.e. one
  call of the factorization's solve with ``b`` right-hand sides;
* Rayleigh-Ritz: :math:`H = V^T(-K_g)V`, :math:`H y = \theta y`; Ritz vectors
  :math:`x = V y`;
* thick restart: the best ``keep`` Ritz vectors are kept and the pending block
  continues the Krylov sequence, so nothing already learned is lost;
* converged Ritz pairs are locked (kept in the basis; new directions are
  orthogonal to them);
* a block of ``b >= nev`` vectors spans, from a generic start, up to ``b``
  independent directions of every eigenspace, so an eigenvalue repeated up to
  ``b`` times (identical members or bays) is found with its full multiplicity
  (in exact arithmetic a single-vector Krylov method finds one copy only).
  Directions that become dependent are replaced by fresh random ones.

Convergence: the Krylov residual :math:`\|A x - \theta x\|_K / |\theta|` of a
:math:`K`-normalised Ritz pair, read off the Krylov relation
:math:`A V = V H + R E^T` at no extra solve, must fall below ``tol``; the
eigenvalue error is then of order ``tol**2`` times the relative gap's inverse
(Parlett 1998, The Symmetric Eigenvalue Problem, sec. 11.7).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.linalg as sla


@dataclass
class BlockResult:
    theta: np.ndarray        # (nev,) descending
    vectors: np.ndarray      # (n, nev) K-orthonormal
    residuals: np.ndarray    # (nev,)
    converged: bool
    cycles: int
    solves: int              # vectors solved with the factorization (columns)
    block_solves: int        # calls of the factorization's solve


def _k_orthonormalize(Z, K, V, rng, drop=1e-10):
    """Z <- K-orthonormal basis of (I - V V^T K) Z; dependent columns replaced by random ones.

    Two passes of block classical Gram-Schmidt against ``V`` followed by SVQB
    (Stathopoulos & Wu 2002, SIAM J. Sci. Comput. 23(6), "A block orthogonalization
    procedure with constant synchronization requirements").
    """
    n, b = Z.shape
    for _attempt in range(4):
        for _ in range(2):
            if V is not None and V.shape[1]:
                KZ = K @ Z
                Z = Z - V @ (V.T @ KZ)
            KZ = K @ Z
            S = Z.T @ KZ
            S = 0.5 * (S + S.T)
            d = np.sqrt(np.maximum(np.diag(S), 1e-300))
            w, U = np.linalg.eigh(S / d[:, None] / d[None, :])
            keep = w > drop * max(w.max(), 1e-300)
            Z = (Z / d[None, :]) @ (U[:, keep] / np.sqrt(w[keep])[None, :])
        if Z.shape[1] == b:
            return Z
        # lost directions (an invariant subspace was reached): add fresh random ones
        R = rng.standard_normal((n, b - Z.shape[1]))
        Z = np.concatenate([Z, R], axis=1)
        drop = 1e-8
    raise RuntimeError("cannot extend the Krylov basis (the problem is smaller than the block)")


def block_krylov_schur(solve, K, mG, nev: int, *, block: int | None = None,
                       basis: int | None = None, tol: float = 1e-8, X0=None,
                       max_cycles: int = 200, seed: int = 0, progress=None,
                       accept=None) -> BlockResult:
    """Largest ``nev`` eigenpairs of ``mG x = theta K x`` (``solve(B)`` = ``K^{-1} B`` for 2D B).

    ``X0`` (n, j) warm-starts the first block (e.g. the previous load case's modes).
    ``accept(theta, X)``: a final check of converged pairs; when it says no, the pairs
    are polished by one step of subspace iteration; if that is not enough either, the
    tolerance is tightened 100 times (down to 1e-12) and the iteration goes on.
    The dense products here are tall and skinny (memory bound): BLAS runs on one
    thread, which is as fast on a quiet machine and several times faster on a busy one.
    """
    try:
        from threadpoolctl import threadpool_limits
    except ImportError:                          # optional: only a speed matter
        return _bks(solve, K, mG, nev, block, basis, tol, X0, max_cycles, seed, progress, accept)
    with threadpool_limits(limits=1, user_api="blas"):
        return _bks(solve, K, mG, nev, block, basis, tol, X0, max_cycles, seed, progress, accept)


def _bks(solve, K, mG, nev, block, basis, tol, X0, max_cycles, seed, progress, accept) -> BlockResult:
    n = K.shape[0]
    rng = np.random.default_rng(seed)
    b = int(block or max(nev, 4))
    b = min(b, n)
    m = int(basis or (nev + 4 * b))
    m = min(max(m, nev + b), n)
    keep_n = min(max(nev, m - 2 * b), m - b)
    X = rng.standard_normal((n, b))
    if X0 is not None:
        X0 = np.asarray(X0, float).reshape(n, -1)[:, :b]
        X[:, : X0.shape[1]] = X0
    V = np.empty((n, m))
    P = np.empty((n, m))                 # P = -Kg V
    H = np.zeros((m, m))
    j = 0
    Z = X
    solves = block_solves = 0
    theta = res = None
    for cycle in range(1, max_cycles + 1):
        # ---- expand the basis block by block
        while j + b <= m:
            Q = _k_orthonormalize(Z, K, V[:, :j], rng)
            bq = Q.shape[1]
            V[:, j:j + bq] = Q
            P[:, j:j + bq] = mG @ Q
            H[: j + bq, j:j + bq] = V[:, : j + bq].T @ P[:, j:j + bq]
            H[j:j + bq, :j] = H[:j, j:j + bq].T
            Z = solve(P[:, j:j + bq])     # A Q: the next Krylov block
            solves += bq
            block_solves += 1
            j += bq
        # ---- the pending block made K-orthogonal to the basis: A V = V H + R E^T
        R = Z
        for _ in range(2):
            R = R - V[:, :j] @ (V[:, :j].T @ (K @ R))
        SR = R.T @ (K @ R)
        # ---- Rayleigh-Ritz
        Hs = 0.5 * (H[:j, :j] + H[:j, :j].T)
        w, Y = sla.eigh(Hs)
        order = np.argsort(w)[::-1]
        w, Y = w[order], Y[:, order]
        theta = w[:nev]
        # Krylov residual ||A x - theta x||_K = ||R E^T y||_K, relative to |theta|
        Bl = Y[j - bq:j, :nev]
        rk = np.sqrt(np.maximum(np.einsum("ji,jk,ki->i", Bl, SR, Bl), 0.0))
        scale = np.maximum(np.abs(theta), 1e-8 * max(np.abs(theta).max(), 1e-300))
        res = rk / scale
        ok = res < tol
        nconv = nev if ok.all() else int(np.argmin(ok))
        if progress:
            progress(cycle, nconv, nev)
        if nconv >= nev or cycle == max_cycles:
            Xr = V[:, :j] @ Y[:, :nev]
            if nconv >= nev and accept is not None and not accept(theta, Xr):
                # polish: one step of subspace iteration X' = A X and Rayleigh-Ritz on it.
                # K X' = -Kg X holds exactly, so the stiff (high-frequency) error components
                # that dominate ||K x - lambda (-Kg) x|| are removed.
                PXr = mG @ Xr
                Xp = solve(PXr)
                solves += nev
                block_solves += 1
                Hp = Xp.T @ (mG @ Xp)
                Mp = Xp.T @ PXr                                  # = Xp^T K Xp
                wp, Yp = sla.eigh(0.5 * (Hp + Hp.T), 0.5 * (Mp + Mp.T))
                op = np.argsort(wp)[::-1]
                thp, Xpp = wp[op], Xp @ Yp[:, op]
                if accept(thp, Xpp):
                    return BlockResult(thp, Xpp, res, True, cycle, solves, block_solves)
                if cycle < max_cycles and tol > 1e-11:
                    tol /= 100.0
                else:
                    return BlockResult(thp, Xpp, res, True, cycle, solves, block_solves)
            else:
                return BlockResult(theta, Xr, res, nconv >= nev, cycle, solves, block_solves)
        # ---- thick restart: keep the best Ritz vectors (the converged ones are locked among them);
        # the pending block, K-orthogonal to the whole old basis, continues the Krylov sequence
        Z = R
        kk = keep_n
        Yk = Y[:, :kk]
        V[:, :kk] = V[:, :j] @ Yk
        P[:, :kk] = P[:, :j] @ Yk
        H[:] = 0.0
        H[np.arange(kk), np.arange(kk)] = w[:kk]
        j = kk
    raise AssertionError("unreachable")
