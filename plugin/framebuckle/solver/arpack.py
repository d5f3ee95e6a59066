"""ARPACK for the buckling pencil: one-vector Krylov runs, the search for skipped copies of
repeated load factors, and the fallback of a stalled block solution (ARPACK with the same
factorization, dense for small models)."""

from __future__ import annotations

import numpy as np
import scipy.linalg as sla
import scipy.sparse.linalg as spla

from ..errors import SolverError


def _start_vector(n: int, v0: np.ndarray | None = None) -> np.ndarray:
    """A deterministic starting vector with a component along every mode.

    A Krylov space grown from a previous case's mode alone stays inside the part of
    the structure (or the symmetry class) that mode lives in: modes of other parts,
    even a lower alpha_cr, are then never found.  A fixed pseudo-random vector is
    added so the start is generic; ``v0`` (previous modes) keeps its head start.
    """
    r = np.random.default_rng(20240601).standard_normal(n)
    r /= np.linalg.norm(r)
    if v0 is None:
        return r
    v = np.asarray(v0, float)
    if v.ndim == 2:
        v = v.sum(axis=1)
    nv = np.linalg.norm(v)
    return r if not np.isfinite(nv) or nv == 0 else v / nv + r


def _arpack(A, Kff, op, kk, ncv, start, case, source, tol=1e-12):
    """Largest algebraic ``mu`` of ``A x = mu K x`` (ARPACK, K applied inverted by ``op``), descending."""
    n = Kff.shape[0]
    try:
        mu, vec = spla.eigsh(A, k=kk, M=Kff, Minv=op, which="LA", ncv=ncv, tol=tol,
                             v0=start, maxiter=max(1000, 20 * n))
    except spla.ArpackNoConvergence as exc:
        raise SolverError(f"case '{case}': the eigensolver did not converge "
                          f"({len(exc.eigenvalues)} of {kk} modes)", source=source) from None
    order = np.argsort(mu)[::-1]
    return mu[order], vec[:, order]


def _add_missed_repeats(mu, vec, Kff, Gff, op, kk, case, source, max_rounds=None):
    r"""Find the copies of repeated load factors that a single-vector Krylov run skipped.

    A Krylov space holds one vector per distinct eigenvalue (in exact arithmetic), so
    identical members, whose load factors repeat exactly, lose copies.  The found modes
    ``V`` are deflated with the K-orthogonal projector :math:`P = I - V C^{-1} V^T K`,
    :math:`C = V^T K V`, and the pencil :math:`(P^T (-K_g) P, K)` is searched again: it
    keeps every eigenpair K-orthogonal to ``V`` and moves those in ``V`` to ``mu = 0``.
    Copies above the current ``kk``-th ``mu`` are merged in, until a search finds none.
    Each search asks for only a few modes to a loose tolerance: it is a check, usually
    finding nothing.
    """
    n = Kff.shape[0]
    rounds = kk if max_rounds is None else max_rounds
    kc = min(kk, 2)
    for _ in range(rounds):
        if n - vec.shape[1] <= kc + 2:
            break
        KV = Kff @ vec
        C = vec.T @ KV

        def proj(x, V=vec, KV=KV, C=C):
            return x - V @ np.linalg.solve(C, KV.T @ x)

        def projT(x, V=vec, KV=KV, C=C):
            return x - KV @ np.linalg.solve(C, V.T @ x)

        A = spla.LinearOperator((n, n), matvec=lambda x: projT(-(Gff @ proj(x))), dtype=float)
        start = proj(np.random.default_rng(20240602 + vec.shape[1]).standard_normal(n))
        floor = max(mu[kk - 1], 0.0) + 1e-9 * abs(mu[0])
        # a loose search decides (Ritz values are lower bounds of the largest mu) ...
        mu2, _ = _arpack(A, Kff, op, kc, min(n, kc + 10), start, case, source, tol=1e-6)
        if not (mu2 > floor).any():
            break
        # ... and only a find is computed to full accuracy
        mu2, vec2 = _arpack(A, Kff, op, kc, min(n, kc + 20), start, case, source)
        new = mu2 > floor
        if not new.any():
            break
        mu = np.concatenate([mu, mu2[new]])
        vec = np.concatenate([vec, vec2[:, new]], axis=1)
        order = np.argsort(mu)[::-1][:kk]
        mu, vec = mu[order], vec[:, order]
    return mu, vec


#: a stalled block solution of at most this many free DOFs falls back to the dense solver when
#: ARPACK does not converge either (the size of verify.DENSE_RETRY)
DENSE_FALLBACK = 1500


def fallback(factor, Kff, Gff, kk, shift, v0, br, case, source):
    r"""Eigenpairs when the block solver stalled: ARPACK, else dense for small models.

    With a shift, ARPACK runs on :math:`-K_g x = \nu (K + \sigma K_g) x` with the shift's
    factorization (``"arpack-shift"``), without one on :math:`-K_g x = \mu K x` with ``factor``;
    copies of repeated load factors a single-vector Krylov run skips are searched for after it
    (:func:`_add_missed_repeats`).  Returns ``(mu, vectors, method, note)``, ``mu`` descending,
    vectors K-normalised.  Every result still goes through the residual check of
    :func:`framebuckle.solver.solve.buckling_modes` and :func:`framebuckle.solver.verify.check_case`.
    """
    n = Kff.shape[0]
    bad = int(np.argmax(br.residuals))
    why = (f"the block eigensolver stalled after {br.cycles} restarts (mode {bad + 1} of {kk}: "
           f"Krylov residual {br.residuals[bad]:.1e})")
    op = spla.LinearOperator((n, n), matvec=factor.solve, dtype=float)
    start = _start_vector(n, v0)
    try:
        if shift is not None:
            s = shift.sigma
            sop = spla.LinearOperator((n, n), matvec=shift.solve, dtype=float)
            nu, vec = _arpack(-Gff, shift.A, sop, kk, min(n, max(2 * kk + 1, kk + 20)), start,
                              case, source)
            mu = nu / (1.0 + s * nu)
            order = np.argsort(-mu, kind="stable")
            mu, vec = mu[order], vec[:, order]
            method = "arpack-shift"
        else:
            mu, vec = _arpack(-Gff, Kff, op, kk, min(n, max(2 * kk + 1, kk + 20)), start, case, source)
            method = "arpack"
        kn = np.einsum("ij,ij->j", vec, Kff @ vec)
        vec = vec / np.sqrt(np.maximum(kn, 1e-300))
        mu, vec = _add_missed_repeats(mu, vec, Kff, Gff, op, kk, case, source)
        return mu, vec, method, f"{why}; solved with ARPACK ({method})"
    except SolverError:
        if n > DENSE_FALLBACK:
            raise SolverError(f"case '{case}': {why}, and ARPACK did not converge either",
                              source=source) from None
    mu, vec = sla.eigh(-Gff.toarray(), Kff.toarray())
    order = np.argsort(mu)[::-1]
    return mu[order], vec[:, order], "dense", f"{why}; ARPACK did not converge either: solved densely"
