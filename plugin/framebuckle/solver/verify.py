r"""Checks of a computed eigensolution before it is reported.

A wrong load factor printed with confidence is worse than none, so every
case's result passes four checks (:func:`check_case`), otherwise a
:class:`~framebuckle.errors.SolverError` is raised:

1. **convergence**: the load factors are finite, positive and ascending, no
   more than requested, and every mode is a finite, non-zero vector;
2. **residuals**: :math:`\|W(K + \lambda_i K_g)\phi_i\| / \|W K\phi_i\|` below
   :data:`RESIDUAL_TOL` (recomputed here, independent of the solver), weighted by
   :math:`W = \mathrm{diag}(K)^{-1/2}` so that the measure does not depend on the units
   (:func:`framebuckle.solver.solve.relative_residuals`; the pipeline solves the scaled pencil
   :math:`(DKD, DK_gD)`, whose diagonal scaling is the identity);
3. **K-orthogonality**: :math:`|\phi_i^T K \phi_j| / \sqrt{(\phi_i^T K \phi_i)
   (\phi_j^T K \phi_j)}` below :data:`ORTHO_TOL` for distinct load factors
   (eigenvectors of a symmetric pencil with :math:`K` positive definite are
   K-orthogonal; Bathe 1996, Finite Element Procedures, ch. 10, from memory);
4. **Sturm sequence count**: by Sylvester's law of inertia the number of
   negative pivots of an :math:`LDL^T` factorization of
   :math:`K + \sigma K_g` equals the number of load factors in
   :math:`(0, \sigma)` (with :math:`K` positive definite, each eigenpair of
   :math:`-K_g\phi = \mu K\phi` gives the eigenvalue :math:`1 - \sigma\mu` of
   the congruent matrix, negative exactly when :math:`0 < 1/\mu < \sigma`;
   Bathe 1996, Finite Element Procedures, sec. 8.2.5, from memory).  With :math:`\sigma` slightly above the
   highest reported load factor the count must equal the number reported;
   a larger count means the solver missed a load factor and the result is
   refused.  The count is recorded in the summary.

Small problems use the dense Bunch-Kaufman factorization
(``scipy.linalg.ldl``); large ones a sparse LU in symmetric mode with no
off-diagonal pivoting, whose ``U`` has the diagonal of :math:`D`
(:math:`A = L D L^T = L U`); it is accepted only if the row and column
permutations agree and a test solve is accurate, otherwise the dense
factorization is used when affordable.

:func:`stiffness_warnings` estimates the condition number of the symmetrically scaled
free-free stiffness :math:`\tilde K = DKD`, :math:`D = \mathrm{diag}(K)^{-1/2}` (unit diagonal,
the same in every set of units; van der Sluis 1969, Numer. Math. 14: this scaling is within a
factor n of the best diagonal one), :math:`\kappa_1(\tilde K) \approx \|\tilde K\|_1\,\mathrm{est}\|\tilde K^{-1}\|_1`
(Higham & Tisseur 2000, SIAM J. Matrix Anal. Appl. 21(4), block 1-norm
estimator, ``scipy.sparse.linalg.onenormest``), and names the DOFs with the
smallest pivot relative to their diagonal when it is large.
"""

from __future__ import annotations

import numpy as np
import scipy.linalg as sla
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from ..errors import SolverError
from ..model.model import DOF_NAMES
from .solve import RESIDUAL_TOL  # one tolerance for the solver and its independent check
from .solve import relative_residuals, scale_matrix, symmetric_scaling

#: largest normalised K-inner product of two modes with distinct load factors
ORTHO_TOL = 1e-5
#: relative gap below which two load factors count as one repeated value
CLUSTER_TOL = 1e-6
#: the Sturm shift: sigma = (1 + STURM_GAP) * highest reported load factor
STURM_GAP = 1e-4
#: when fewer modes than requested exist, no load factor may lie below this times the highest
STURM_FAR = 1e3
#: free DOFs up to which the Sturm count uses the dense LDL^T factorization
DENSE_STURM = 300
#: free DOFs up to which the dense LDL^T is the fall-back of the sparse one
DENSE_FALLBACK = 2000
#: condition-number estimate of the scaled K (unit diagonal) above which a warning is given:
#: residuals of about eps * kappa (2e-7) are then close to what a stable solve can promise (1e-6)
COND_WARN = 1e9


#: free DOFs up to which a case whose iterative solution missed load factors is solved again densely
DENSE_RETRY = 1500


class MissedLoadFactor(SolverError):
    """The Sturm count shows load factors the eigensolver did not return."""


# ------------------------------------------------------------------ inertia


def negative_count(A) -> tuple[int | None, str]:
    """Number of negative eigenvalues of the symmetric matrix ``A`` and the method used.

    Returns ``(None, reason)`` when no reliable factorization was found.
    """
    n = A.shape[0]
    if n == 0:
        return 0, "empty"
    if n <= DENSE_STURM:
        return _dense_negative(A), "dense LDL^T"
    from . import pardiso                     # optional backend (extra "fast")
    if pardiso.used_for(n):                  # one LDL^T (mtype -2): inertia without perturbed pivots
        counts = pardiso.inertia(A)
        if counts is not None:
            return counts[1], "sparse LDL^T (MKL PARDISO)"
    A = sp.csc_matrix(A)
    for spec in ("MMD_AT_PLUS_A", "COLAMD"):
        try:
            lu = spla.splu(A, permc_spec=spec, diag_pivot_thresh=0.0,
                           options={"SymmetricMode": True})
        except RuntimeError:       # exactly singular: sigma hit an eigenvalue
            continue
        if not np.array_equal(lu.perm_r, lu.perm_c):
            continue               # off-diagonal pivots: U's diagonal is not D's
        b = np.random.default_rng(0).standard_normal(n)
        x = lu.solve(b)
        err = np.linalg.norm(A @ x - b) / max(np.linalg.norm(b), 1e-300)
        if np.isfinite(err) and err < 1e-6:
            return int((lu.U.diagonal() < 0).sum()), f"sparse LDL^T ({spec})"
    if n <= DENSE_FALLBACK:
        return _dense_negative(A), "dense LDL^T (fall-back)"
    return None, "no stable symmetric factorization without off-diagonal pivoting"


def _dense_negative(A) -> int:
    A = A.toarray() if sp.issparse(A) else np.asarray(A)
    _, d, _ = sla.ldl(A, lower=True, hermitian=True)
    # d is block diagonal with 1x1 and 2x2 blocks: a symmetric tridiagonal matrix
    ev = sla.eigvalsh_tridiagonal(np.diag(d).copy(), np.diag(d, -1).copy())
    return int((ev < 0).sum())


# ------------------------------------------------------------------ checks


def check_case(Kff, Gff, er, k: int, source: str, case: str, sturm: bool = True) -> dict:
    """Refuse a wrong eigensolution; return the record of the checks for the summary.

    ``sturm=False`` leaves check 4 to the caller (:class:`SturmWorker` runs it in parallel).
    """
    lam = np.asarray(er.load_factors, float)
    V = np.asarray(er.modes, float)
    where = f"case '{case}'"
    if len(lam) == 0:
        return {}
    # 1. convergence
    if len(lam) > k or V.shape != (Kff.shape[0], len(lam)):
        raise SolverError(f"{where}: the eigensolver returned {len(lam)} load factors and modes of "
                          f"shape {V.shape} for {k} requested", source=source)
    if not np.isfinite(lam).all() or (lam <= 0).any() or (np.diff(lam) < 0).any():
        raise SolverError(f"{where}: the eigensolver returned load factors that are not finite, "
                          f"positive and ascending: {lam.tolist()}", source=source)
    KV = Kff @ V
    kn = np.einsum("ij,ij->j", V, KV)
    if not np.isfinite(V).all() or (kn <= 0).any():
        i = int(np.flatnonzero(~np.isfinite(V).all(axis=0) | (kn <= 0))[0])
        raise SolverError(f"{where}: mode {i + 1} is not a valid vector (not finite or zero)",
                          source=source)
    # 2. residuals
    res = relative_residuals(Kff, Gff, lam, V)
    if (res > RESIDUAL_TOL).any():
        i = int(np.argmax(res))
        raise SolverError(f"{where}: mode {i + 1} (load factor {lam[i]:.6g}) did not converge: "
                          f"||(K + lambda Kg) phi|| / ||K phi|| = {res[i]:.2e} > {RESIDUAL_TOL:g}",
                          source=source)
    # 3. K-orthogonality
    C = (V.T @ KV) / np.sqrt(np.outer(kn, kn))
    same = np.abs(lam[:, None] - lam[None, :]) <= CLUSTER_TOL * np.abs(lam[None, :])
    off = np.abs(C - np.diag(np.diag(C)))
    limit = np.where(same, 0.5, ORTHO_TOL)    # repeated values: independent, not necessarily orthogonal
    bad = off > limit
    ortho = float(off[~same].max()) if (~same).any() else 0.0
    if bad.any():
        i, j = (int(x) for x in np.argwhere(bad)[0])
        raise SolverError(f"{where}: modes {i + 1} and {j + 1} are not K-orthogonal "
                          f"(normalised phi_i^T K phi_j = {off[i, j]:.2e}); the eigensolution is "
                          f"not reliable", source=source)
    # 4. Sturm sequence count
    out = {"max_residual": float(res.max()), "max_k_orthogonality": ortho}
    sigma0 = getattr(er, "shift", None)
    if sigma0 is not None:
        # the eigensolver's shift: K + sigma0 Kg was factored positive definite, a Sturm
        # count of zero at sigma0 (no load factor in (0, sigma0]) that the results must respect
        if lam[0] <= sigma0:
            raise SolverError(f"{where}: load factor {lam[0]:.6g} lies below {sigma0:.6g}, where "
                              f"the factorization of K + sigma Kg proves there is none", source=source)
        out.update({"shift_sigma": float(sigma0), "shift_count": 0})
    if sturm:
        out.update(sturm_check(Kff, Gff, lam, k, source, case))
    return out


#: eigensolver results whose Sturm count is always made at once (a miss is solved again with
#: the block method): single-vector Krylov runs, which can skip copies of a repeated value
SINGLE_VECTOR = ("arpack", "arpack-shift")


def solve_checked(factor, Kff, Gff, k: int, method: str = "auto", v0=None, source: str = "<model>",
                  case: str = "", sturm: bool = True):
    """``(EigenResult, checks)``: :func:`~framebuckle.solver.solve.buckling_modes` and
    :func:`check_case`, solved again when the Sturm count finds a missed load factor.

    A single-vector (ARPACK) result is always counted at once, whatever ``sturm``
    says; on a miss it is solved again with the block method (which finds up to its
    block size of copies of a repeated value), started from half of ARPACK's modes, or
    densely when the model has at most :data:`DENSE_RETRY` free DOFs; a block result
    that misses is solved densely within that size and refused above it.  ``sturm=False``
    leaves the count of block and dense results to the caller (:class:`SturmWorker`).
    ``checks["retried"]`` names the method of a second solution.
    """
    from .solve import block_start, buckling_modes
    er = buckling_modes(factor, Kff, Gff, k, method=method, v0=v0, source=source, case=case)
    try:
        return er, check_case(Kff, Gff, er, k, source, case, sturm=sturm or er.method in SINGLE_VECTOR)
    except MissedLoadFactor:
        small = Kff.shape[0] <= DENSE_RETRY
        if er.method == "dense" or (er.method not in SINGLE_VECTOR and not small):
            raise
    again = "dense" if small else "block"
    er = buckling_modes(factor, Kff, Gff, k, method=again, v0=block_start(er.modes), source=source,
                        case=case)
    checks = check_case(Kff, Gff, er, k, source, case)
    checks["retried"] = again
    return er, checks


def sturm_check(Kff, Gff, lam, k: int, source: str, case: str) -> dict:
    r"""Confirm with inertia counts that no load factor below the highest reported was missed."""
    lam = np.sort(np.asarray(lam, float))
    where = f"case '{case}'"
    top = float(lam[-1])
    complete = len(lam) >= k
    sigma = top * (1.0 + STURM_GAP) if complete else top * STURM_FAR
    n_hi, how = negative_count(Kff + sigma * Gff)
    rec = {"sturm_shift": sigma, "sturm_count": n_hi, "sturm_expected": int(len(lam)),
           "sturm_method": how}
    if n_hi is None:
        rec["sturm_note"] = "Sturm sequence check not done: " + how
        return rec
    if n_hi < len(lam):
        raise SolverError(f"{where}: the Sturm sequence count finds {n_hi} load factor(s) below "
                          f"{sigma:.6g} but {len(lam)} were reported: the reported values are not "
                          f"all genuine", source=source)
    if n_hi == len(lam):
        return rec
    if not complete:
        raise MissedLoadFactor(f"{where}: the eigensolver returned {len(lam)} of the {k} requested load "
                          f"factors, but the Sturm sequence count finds {n_hi} below {sigma:.6g}: "
                          f"modes were missed (not converged)", source=source)
    # more below sigma than reported: are they above the top value (a near-repeated
    # value just past the requested modes) or below it (missed)?
    lo = top * (1.0 - STURM_GAP)
    n_lo, how_lo = negative_count(Kff + lo * Gff)
    expect_lo = int((lam < lo).sum())
    rec.update({"sturm_shift_low": lo, "sturm_count_low": n_lo})
    if n_lo is not None and n_lo > expect_lo:
        raise MissedLoadFactor(f"{where}: the Sturm sequence count finds {n_lo} load factor(s) below "
                          f"{lo:.6g} but only {expect_lo} were reported there: the eigensolver "
                          f"missed a load factor; the result is refused", source=source)
    rec["sturm_note"] = (f"{n_hi - len(lam)} more load factor(s) lie within "
                         f"{100 * STURM_GAP:g} % of the highest reported one ({top:.6g}); ask for "
                         f"more modes to see them")
    return rec


#: free DOFs from which the Sturm counts run in a second process, beside the next case
PARALLEL_STURM_MIN = 50_000


class SturmWorker:
    r"""One worker process for the Sturm counts of a model's load cases.

    The count needs a factorization of its own (of :math:`K + \sigma K_g`, :math:`\sigma`
    above the highest load factor) and yields one integer, so it can run on a second core
    while the main process solves the next case (scipy's SuperLU holds the GIL: threads
    would not overlap).  The checks are the same as in the serial path
    (:func:`sturm_check`); a failed count raises when its result is collected.
    """

    def __init__(self):
        import multiprocessing as mp
        from concurrent.futures import ProcessPoolExecutor
        # "spawn": a fresh interpreter, safe beside BLAS threads (fork is not)
        from .pardiso import one_thread      # MKL (if it is the backend) on one thread there
        self._pool = ProcessPoolExecutor(max_workers=1, mp_context=mp.get_context("spawn"),
                                         initializer=one_thread)
        self._pending = []

    @classmethod
    def maybe(cls, n_free: int):
        """A worker when it pays (large model, a second core, allowed to start processes)."""
        import multiprocessing as mp
        import os
        if n_free < PARALLEL_STURM_MIN or mp.current_process().daemon:
            return None                  # small, or inside a daemonic (e.g. Dask) worker
        cores = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else os.cpu_count()
        if (cores or 1) < 2:
            return None
        try:
            return cls()
        except (OSError, ValueError, AssertionError):
            return None

    def submit(self, record: dict, Kff, Gff, lam, k: int, source: str, case: str):
        """Count in the worker; ``record`` (the case's checks) is updated on :meth:`collect`
        (or earlier, when a later submit finds the count done).  Raises a failed earlier
        count's SolverError."""
        self._harvest(wait=False)
        args = (sp.csr_matrix(Kff), sp.csr_matrix(Gff), np.asarray(lam, float), k, source, case)
        try:
            fut = self._pool.submit(sturm_check, *args)
        except Exception:                    # noqa: BLE001 - the worker is gone: count here
            record.update(sturm_check(*args))
            return
        self._pending.append((record, fut, args))

    def collect(self):
        """Wait for every count; raises the first failed check (SolverError)."""
        self._harvest(wait=True)

    def _harvest(self, wait: bool):
        keep = []
        for record, fut, args in self._pending:
            if not wait and not fut.done():
                keep.append((record, fut, args))
                continue
            try:
                rec = fut.result()
            except SolverError:
                self._pending = []
                raise
            except Exception:                # noqa: BLE001 - the worker died (killed, out of
                rec = sturm_check(*args)     # memory): the count is made here instead
            record.update(rec)
        self._pending = keep

    def close(self):
        """Stop the worker (pending counts are dropped: only after an error or :meth:`collect`)."""
        self._pool.shutdown(wait=False, cancel_futures=True)


def stiffness_warnings(factor, Kff, free, n_input: int, coarse_cell=None, asm=None,
                       limit: int = 5, scale=None) -> tuple[list, float]:
    r"""Warn when K is near-singular; name the DOFs and cells of its softest deformation.

    Judged on the scaled :math:`\tilde K = W K W`, :math:`W = \mathrm{diag}(K)^{-1/2}`
    (the identity when ``Kff`` is already scaled), so neither the condition number nor the
    warning depends on the units.  ``scale``: physical DOFs are ``scale * x`` of ``Kff``'s
    (the pipeline's :func:`framebuckle.solver.solve.factorize` with ``scale=True``); None: ``Kff``
    is in physical DOFs.  The softest deformation is the eigenvector of the smallest
    eigenvalue of :math:`\tilde K`, found by a few steps of inverse iteration with the
    existing factorization; its DOFs are ranked by its components (those of
    :math:`|x_i|\sqrt{K_{ii}}`, their share of the strain energy) and, given the assembler
    ``asm``, its cells by their strain energy :math:`u_e^T K_e u_e`.
    """
    n = Kff.shape[0]
    if n == 0:
        return [], 1.0
    w = symmetric_scaling(Kff)

    def solve(b):                        # (W K W)^-1 b = W^-1 K^-1 W^-1 b
        b = np.asarray(b, float)
        ww = w if b.ndim == 1 else w[:, None]
        return factor.solve(b / ww) / ww

    op = spla.LinearOperator((n, n), matvec=solve, rmatvec=solve, matmat=solve, dtype=float)
    state = np.random.get_state()      # onenormest draws from numpy's global generator:
    np.random.seed(0)                  # seeded here, so the estimate (and the warning) is
    try:                               # the same in every run and every set of units
        inv_norm = spla.onenormest(op) if n > 4 else np.abs(solve(np.eye(n))).sum(0).max()
    except Exception:          # the estimator is advisory; never stop a run for it
        return [], float("nan")
    finally:
        np.random.set_state(state)
    # the pipeline passes the scaled K already (unit diagonal): no scaled copy is needed then
    Ks = Kff if np.allclose(w, 1.0, rtol=0.0, atol=1e-12) else scale_matrix(Kff, w)
    cond = float(spla.norm(Ks, 1) * inv_norm)
    if not np.isfinite(cond) or cond <= COND_WARN:
        return [], cond
    x = np.random.default_rng(0).standard_normal(n)
    for _ in range(8):
        x = solve(x)
        x /= np.linalg.norm(x)
    share = np.abs(x)
    x = x * w if scale is None else x * w * scale    # physical displacements
    names = []
    n6 = asm.frame.n_dofs if asm is not None else np.inf
    for c in np.argsort(share)[::-1][:limit]:
        node, comp = divmod(int(free[c]), 6)
        if free[c] >= n6:
            names.append("a warping DOF")
            continue
        if node < n_input:
            where = f"point {node}"
        elif coarse_cell is not None:
            where = f"a sub-division point of cell {int(coarse_cell[node])}"
        else:
            where = f"sub-division point {node}"
        names.append(f"{where} {DOF_NAMES[comp]}")
    cells = ""
    if asm is not None and hasattr(asm, "Ke") and asm.n == asm.frame.n_dofs:
        from ..mechanics.elements import element_dofs
        u = np.zeros(asm.n)
        u[free] = x
        ue = u[element_dofs(asm.frame)]
        energy = np.einsum("ei,eij,ej->e", ue, asm.Ke, ue)
        per_cell = np.bincount(asm.frame.parent, weights=energy)
        top = np.argsort(per_cell)[::-1]
        top = top[per_cell[top] >= 0.1 * per_cell.sum()][:limit]
        if top.size:
            cells = f" The softest deformation strains mostly cell(s) {', '.join(str(int(c)) for c in top)}."
    return [f"the stiffness matrix is near-singular (condition number about {cond:.1e} with its diagonal "
            f"scaled to 1); results may "
            f"be inaccurate. Weakest DOFs: {', '.join(dict.fromkeys(names))}.{cells} Probable cause: "
            f"a member far softer than its neighbours, a nearly-collinear bracing, or a "
            f"near-mechanism"], cond
