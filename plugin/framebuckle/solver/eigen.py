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

Shift-and-invert: the same iteration with :math:`A = K + \sigma K_g` in place of
:math:`K` (any symmetric positive definite matrix will do) finds the largest
:math:`\nu = 1/(\lambda - \sigma)`; :func:`factor_shift` factors it and proves it
positive definite, :func:`rough_lowest` supplies :math:`\sigma`.

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
from scipy.linalg.blas import dgemm as _dgemm


@dataclass
class BlockResult:
    theta: np.ndarray        # (nev,) descending
    vectors: np.ndarray      # (n, nev) K-orthonormal
    residuals: np.ndarray    # (nev,)
    converged: bool
    cycles: int
    solves: int              # vectors solved with the factorization (columns)
    block_solves: int        # calls of the factorization's solve


def _sub_vc(Z, V, C):
    """``Z -= V @ C`` in place (one BLAS call, no temporary); Z and V Fortran-ordered."""
    if V.shape[1] == 0:
        return Z
    if Z.flags.f_contiguous and V.flags.f_contiguous:
        return _dgemm(-1.0, V, C, 1.0, Z, overwrite_c=True)
    Z -= V @ C
    return Z


def _k_orthonormalize(Z, K, V, rng, drop=1e-10, KZ=None, orthogonal=False, C0=None):
    """Z <- K-orthonormal basis of (I - V V^T K) Z; dependent columns replaced by random ones.

    Block classical Gram-Schmidt against ``V`` followed by SVQB (Stathopoulos & Wu 2002,
    SIAM J. Sci. Comput. 23(6), "A block orthogonalization procedure with constant
    synchronization requirements"), twice unless the first pass kept most of every
    column and left a well-conditioned block (the "twice is enough" criterion of Daniel,
    Gragg, Kaufman & Stewart 1976, Math. Comp. 30(136), in block form).
    Returns ``(Q, K Q)``.  ``KZ = K Z``, when known, spares the first sparse product;
    ``C0 = V^T K Z``, when known, the first pass's coefficients.
    ``orthogonal``: ``Z`` is already K-orthogonal to ``V`` (the first projection is skipped).
    """
    n, b = Z.shape
    Z = np.asfortranarray(Z)             # overwritten: the caller does not reuse it
    if KZ is None:
        KZ = K @ Z
    for _attempt in range(4):
        for npass in range(2):
            if V is not None and V.shape[1] and not (orthogonal and npass == 0):
                norm0 = np.einsum("ij,ij->j", Z, KZ)
                C = C0 if (npass == 0 and C0 is not None) else V.T @ KZ
                Z = _sub_vc(Z, V, C)
                KZ = K @ Z
            else:
                norm0 = None
            S = Z.T @ KZ
            S = 0.5 * (S + S.T)
            d = np.sqrt(np.maximum(np.diag(S), 1e-300))
            w, U = np.linalg.eigh(S / d[:, None] / d[None, :])
            keep = w > drop * max(w.max(), 1e-300)
            T = U[:, keep] / np.sqrt(w[keep])[None, :] / d[:, None]
            Z = (T.T @ Z.T).T                # Z T, Fortran-ordered like Z
            KZ = KZ @ T
            if npass == 0 and keep.all() and w.min() > 0.25 * w.max() and (
                    norm0 is None or (d ** 2 > 0.5 * norm0).all()):
                break                      # little cancellation: one pass is accurate
        if Z.shape[1] == b:
            return Z, KZ
        # lost directions (an invariant subspace was reached): add fresh random ones
        R = rng.standard_normal((n, b - Z.shape[1]))
        Z = np.asfortranarray(np.concatenate([Z, R], axis=1))
        KZ = K @ Z
        drop = 1e-8
        orthogonal = False
        C0 = None
    raise RuntimeError("cannot extend the Krylov basis (the problem is smaller than the block)")


#: blocks added per restart cycle (the rest of the basis keeps the best Ritz vectors)
EXPAND = 2

#: subspace-iteration polishing steps tried when converged Ritz vectors fail the caller's
#: residual check, before the Krylov tolerance is tightened
POLISH_STEPS = 5

#: restart cycles without the worst residual halving after which the iteration counts as stalled
STALL_CYCLES = 8
#: a stalled iteration doubles its basis, up to this many times the initial size: a cluster
#: of Ritz values wider than the kept part of the basis (e.g. 14 nearly equal local load
#: factors) is resolved only once the basis holds the whole cluster
GROW_LIMIT = 4


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
    from .pardiso import blas_limits         # MKL on one thread too (see there)
    with threadpool_limits(**blas_limits(block=True)):
        return _bks(solve, K, mG, nev, block, basis, tol, X0, max_cycles, seed, progress, accept)


def _bks(solve, K, mG, nev, block, basis, tol, X0, max_cycles, seed, progress, accept) -> BlockResult:
    n = K.shape[0]
    rng = np.random.default_rng(seed)
    b = int(block or max(nev, 4))
    b = min(b, n)
    m = int(basis or (nev + 4 * b))
    m = min(max(m, nev + b), n)
    keep_n = min(max(nev, m - EXPAND * b), m - b)
    m_cap = min(n, GROW_LIMIT * m)
    X = rng.standard_normal((n, b))
    if X0 is not None:
        X0 = np.asarray(X0, float).reshape(n, -1)[:, :b]
        X[:, : X0.shape[1]] = X0
    V = np.empty((n, m), order="F")
    best, best_cycle, stalls = np.inf, 0, 0
    H = np.zeros((m, m))
    j = 0
    Z = X
    KZ = None                            # K Z when known (K A Q = -Kg Q)
    fresh = False                        # Z is the residual block, already K-orthogonal to V
    C0 = None                            # V^T K Z when known
    solves = block_solves = 0
    theta = res = None
    for cycle in range(1, max_cycles + 1):
        # ---- expand the basis block by block
        while j + b <= m:
            Q, _ = _k_orthonormalize(Z, K, V[:, :j], rng, KZ=KZ, orthogonal=fresh, C0=C0)
            fresh = False
            bq = Q.shape[1]
            V[:, j:j + bq] = Q
            PQ = mG @ Q
            H[: j + bq, j:j + bq] = V[:, : j + bq].T @ PQ
            H[j:j + bq, :j] = H[:j, j:j + bq].T
            Z = solve(PQ)                 # A Q: the next Krylov block
            KZ = PQ                       # K (A Q) = -Kg Q exactly (up to the solve's error)
            C0 = H[: j + bq, j:j + bq].copy()   # = V^T K Z: the next projection's coefficients
            solves += bq
            block_solves += 1
            j += bq
        # ---- the pending block made K-orthogonal to the basis: A V = V H + R E^T
        R, KR = np.asfortranarray(Z), KZ
        for ipass in range(2):
            C = C0 if ipass == 0 else V[:, :j].T @ KR
            R = _sub_vc(R, V[:, :j], C)
            KR = K @ R
        SR = R.T @ KR
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
        # ---- stall: the worst residual has not halved in STALL_CYCLES restarts.  A larger
        # basis is tried first; a stall at the largest basis (a cluster still unresolved, or a
        # tightened tolerance below the Krylov residual's rounding floor) ends the iteration
        # unconverged, so the caller can fall back to another method at once
        worst = float(res.max())
        if worst < 0.5 * best:
            best, best_cycle = worst, cycle
        stalled = nconv < nev and cycle - best_cycle >= STALL_CYCLES
        if stalled and m >= m_cap:
            stalls += 1
            if stalls >= 2 or cycle == max_cycles:
                Xr = V[:, :j] @ Y[:, :nev]
                return BlockResult(theta, Xr, res, False, cycle, solves, block_solves)
            best, best_cycle = worst, cycle
        if nconv >= nev or cycle == max_cycles:
            Xr = V[:, :j] @ Y[:, :nev]
            if nconv >= nev and accept is not None and not accept(theta, Xr):
                # polish: one step of subspace iteration X' = A X and Rayleigh-Ritz on it.
                # K X' = -Kg X holds exactly, so the stiff (high-frequency) error components
                # that dominate ||K x - lambda (-Kg) x|| are removed.
                # Each step divides the stiff error components by about lambda_i / lambda_max;
                # up to POLISH_STEPS steps are taken before the Krylov tolerance is tightened (a
                # tolerance below the rounding floor of the Krylov residual would never be met).
                Xpp = Xr
                for _ in range(POLISH_STEPS):
                    PXr = mG @ Xpp
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
                    best, best_cycle = np.inf, cycle     # a new target: progress counted afresh
                else:                    # the caller's check refused the result: not converged
                    return BlockResult(thp, Xpp, res, False, cycle, solves, block_solves)
            else:
                return BlockResult(theta, Xr, res, nconv >= nev, cycle, solves, block_solves)
        # ---- thick restart: keep the best Ritz vectors (the converged ones are locked among them);
        # the pending block, K-orthogonal to the whole old basis, continues the Krylov sequence
        Z, KZ = R, KR                    # K-orthogonal to the old basis, hence to the kept part
        fresh = True
        C0 = None
        kk = keep_n
        Yk = Y[:, :kk]
        V[:, :kk] = (Yk.T @ V[:, :j].T).T    # V Yk, Fortran-ordered like V
        if stalled and m < m_cap:        # grow the basis (Fortran-ordered like V), keep the kept part
            m = min(m_cap, 2 * m)
            V2 = np.empty((n, m), order="F")
            V2[:, :kk] = V[:, :kk]
            V, H = V2, np.zeros((m, m))
            keep_n = min(max(nev, m - EXPAND * b), m - b)
            best, best_cycle = np.inf, cycle
        H[:] = 0.0
        H[np.arange(kk), np.arange(kk)] = w[:kk]
        j = kk
    raise AssertionError("unreachable")


# ------------------------------------------------------------------ shift below the spectrum


@dataclass
class Shift:
    r"""A factorization of :math:`A = K + \sigma K_g`, proved positive definite.

    By Sylvester's law of inertia, :math:`A` positive definite means no load factor
    lies in :math:`(0, \sigma]` (a Sturm sequence count of zero at :math:`\sigma`).
    """
    sigma: float
    A: object            # CSR/CSC matrix K + sigma Kg
    lu: object           # scipy SuperLU of A (symmetric mode, diagonal pivots)
    factorizations: int  # how many were tried (shift lowered after a failed one)
    estimate: float      # the rough lowest load factor the shift came from
    start: object = None # Ritz vectors of the rough estimate (a start block)

    def solve(self, B):
        return self.lu.solve(np.asarray(B, dtype=float))


def rough_lowest(solve, K, mG, X0=None, block: int = 4, steps: int = 8, nvec: int = 4, seed: int = 1):
    r"""An upper bound of the lowest positive load factor, from a small block Krylov space.

    Rayleigh-Ritz of :math:`-K_g x = \mu K x` on
    :math:`\mathrm{span}\{X, K^{-1}(-K_g)X, \dots\}` gives Ritz values below the
    largest :math:`\mu` (Courant-Fischer), hence :math:`1/\theta_{max} \ge \lambda_1`.
    Returns ``(bound, ritz)``: ``inf`` when the space holds no positive Ritz value, and
    the ``nvec`` leading Ritz vectors (a start block for the eigensolver).
    """
    try:
        from threadpoolctl import threadpool_limits
    except ImportError:                          # optional: only a speed matter
        return _rough_lowest(solve, K, mG, X0, block, steps, nvec, seed)
    from .pardiso import blas_limits         # MKL on one thread too (see there)
    with threadpool_limits(**blas_limits(block=True)):
        return _rough_lowest(solve, K, mG, X0, block, steps, nvec, seed)


def _rough_lowest(solve, K, mG, X0, block, steps, nvec, seed):
    n = K.shape[0]
    rng = np.random.default_rng(seed)
    X = rng.standard_normal((n, block))
    if X0 is not None:
        X0 = np.asarray(X0, float).reshape(n, -1)[:, :block]
        X[:, : X0.shape[1]] = X0
    Q = np.empty((n, block * steps))
    for i in range(steps):
        X = X / np.linalg.norm(X, axis=0)          # scaling only: the Gram matrix below
        Q[:, i * block:(i + 1) * block] = X        # sorts out dependence
        if i + 1 < steps:
            X = solve(mG @ X)
    Kq = Q.T @ (K @ Q)
    Gq = Q.T @ (mG @ Q)
    w, U = np.linalg.eigh(0.5 * (Kq + Kq.T))
    keep = w > 1e-10 * w.max()
    T = U[:, keep] / np.sqrt(w[keep])
    th, Y = np.linalg.eigh(T.T @ (0.5 * (Gq + Gq.T)) @ T)
    ritz = Q @ (T @ Y[:, ::-1][:, :nvec])
    return (1.0 / th[-1] if th[-1] > 0 else np.inf), ritz


def factor_shift(K, G, sigma: float, tries: int = 8, lower: float = 0.7):
    r"""Factor :math:`K + \sigma K_g` with :math:`\sigma` lowered until it is positive definite.

    Positive definiteness is read from the factorization: SuperLU in symmetric mode with
    diagonal pivoting gives :math:`A = P^T L U P`, i.e. :math:`LDL^T` with
    :math:`D = \mathrm{diag}(U)`, when the row and column orders agree; then all pivots
    positive :math:`\Leftrightarrow` :math:`A` positive definite (Sylvester's law of inertia;
    Golub & Van Loan 2013, Matrix Computations, 4th ed., sec. 8.1).
    Returns a :class:`Shift` or ``None`` when no shift was accepted.
    """
    import scipy.sparse as sp
    import scipy.sparse.linalg as spla
    from . import pardiso                     # optional backend (extra "fast")
    for i in range(tries):
        A = sp.csc_matrix(K + sigma * G)
        if pardiso.used_for(A.shape[0]):     # Cholesky succeeds only on a positive definite A
            pf = pardiso.positive_definite_factor(A)
            if pf is not None:
                return Shift(float(sigma), A, pf, i + 1, np.nan)
            sigma *= lower
            continue
        try:
            lu = spla.splu(A, permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.0,
                           options={"SymmetricMode": True})
        except RuntimeError:                 # exactly singular: sigma is a load factor
            lu = None
        if lu is not None and np.array_equal(lu.perm_r, lu.perm_c) and (lu.U.diagonal() > 0).all():
            return Shift(float(sigma), A, lu, i + 1, np.nan)
        sigma *= lower
    return None
