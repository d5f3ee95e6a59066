r"""Supports, factorization and the buckling eigensolution.

The load factors are the positive roots of :math:`(K + \lambda K_g)\phi = 0`.
With :math:`K` symmetric positive definite on the free DOFs we iterate on

.. math::  -K_g \phi = \mu K \phi, \qquad \mu = 1/\lambda,

for the largest algebraic :math:`\mu` (ARPACK in generalized mode with
:math:`K^{-1}` applied from one factorization).  Shift-invert about
:math:`\sigma = 0` on the original pencil is *not* used: :math:`-K_g` is
indefinite whenever some members are in tension.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import scipy.linalg as sla
import scipy.sparse as sp
import scipy.sparse.csgraph as csgraph
import scipy.sparse.linalg as spla

from ..errors import ModelError, SolverError
from ..model.model import DOF_NAMES, Frame
from .arpack import _add_missed_repeats, _arpack, _start_vector, fallback
from .scaling import relative_residuals, scale_matrix, symmetric_scaling  # noqa: F401 (used here and re-exported)

#: relative pivot below which a DOF is taken as free (mechanism)
PIVOT_TOL = 1e-11
#: relative eigen-residual above which a mode is refused
RESIDUAL_TOL = 1e-6
#: models with at most this many free DOFs are solved densely by default
DENSE_LIMIT = 240
#: Krylov residual ||A x - theta x||_K / theta at which the block eigensolver stops
BLOCK_TOL = 1e-8
#: a block solution whose residual is above this share of RESIDUAL_TOL is polished once (one
#: step of subspace iteration) before the check, so that the check is rarely decided by rounding
ACCEPT_FRACTION = 1e-2


@dataclass(frozen=True)
class Constraints:
    free: np.ndarray            # free DOF numbers
    fixed: np.ndarray           # (n_dofs,) bool
    n_auto: int                 # rotational DOFs restrained because nothing stiffens them
    planar_axis: int | None     # global axis normal to the plane of a planar model
    notes: tuple = ()


def find_constraints(frame: Frame, K: sp.spmatrix, planar: bool | str = "auto") -> Constraints:
    """Fixed DOFs: restraints, DOFs with no stiffness at all, and planar out-of-plane DOFs."""
    n = frame.n_nodes
    fixed = frame.restraint.reshape(-1).copy()
    notes = []
    diag = np.abs(K.diagonal()).reshape(n, 6)
    rot = diag[:, 3:]
    # each rotation is judged against its own node's translational stiffness times the model's
    # size squared (same units, N m): one cell with a constant in the wrong unit (an Iw in mm^6)
    # cannot make the ordinary rotations of the whole model look "free of stiffness"
    size = float(np.ptp(frame.nodes, axis=0).max()) if frame.n_nodes else 1.0
    ref = diag[:, :3].max(axis=1) * max(size, 1e-300) ** 2
    fallback = rot.max() if rot.size and rot.max() > 0 else 1.0
    ref = np.where(ref > 0, ref, fallback)[:, None]
    auto = (rot <= 1e-14 * ref) & ~frame.restraint[:, 3:]
    fixed.reshape(n, 6)[:, 3:] |= auto
    n_auto = int(auto.sum())
    if n_auto:
        notes.append(f"{n_auto} rotational DOF(s) with no element stiffness (nodes joined only "
                     f"by bars or released members) were restrained automatically")
    axis = None
    if planar is True or planar == "auto":
        axis = plane_axis(frame.nodes)
        if axis is not None:
            oop = out_of_plane_dofs(axis)
            if planar == "auto" and frame.restraint[:, oop].any():
                axis = None
            else:
                fixed.reshape(n, 6)[:, oop] = True
                notes.append(f"planar model in the {'XYZ'.replace('XYZ'[axis], '')} plane: analysed in "
                             f"its plane (out-of-plane DOFs {', '.join(DOF_NAMES[i] for i in oop)} "
                             f"restrained)")
    free = np.flatnonzero(~fixed)
    return Constraints(free, fixed, n_auto, axis, tuple(notes))


#: out-of-plane spread of the points, relative to the model's size, below which a model is planar
#: (export noise of a few micrometres in a frame of metres must not turn a plane frame into a 3D
#: mechanism)
PLANE_TOL = 1e-6


def plane_axis(nodes: np.ndarray) -> int | None:
    """Global axis normal to the plane of the nodes, or None if not planar in a global plane."""
    span = np.ptp(nodes, axis=0)
    scale = span.max()
    if scale <= 0:
        return None
    flat = span <= PLANE_TOL * scale
    if flat.sum() == 1:
        return int(np.flatnonzero(flat)[0])
    return None


def out_of_plane_dofs(axis: int) -> list[int]:
    others = [i for i in range(3) if i != axis]
    return [axis] + [3 + i for i in others]


def describe_node(node: int, n_input: int, fine: Frame | None = None, coarse_cell=None) -> str:
    if node < n_input:
        return f"point {node}"
    if coarse_cell is not None:
        return f"a sub-division point inside cell {coarse_cell[node]}"
    return f"sub-division point {node}"


def check_supported(frame: Frame, cons: Constraints, n_input: int, source: str):
    """Refuse parts of the structure that have no restrained DOF at all."""
    e = frame.elements
    g = sp.coo_matrix((np.ones(len(e)), (e[:, 0], e[:, 1])), shape=(frame.n_nodes,) * 2)
    ncomp, label = csgraph.connected_components(g, directed=False)
    used = np.zeros(frame.n_nodes, bool)
    used[e.ravel()] = True
    fixed = cons.fixed.reshape(-1, 6)
    for c in range(ncomp):
        members = np.flatnonzero((label == c) & used)
        if members.size == 0:
            continue
        if not fixed[members, :3].any():
            pts = [int(p) for p in members if p < n_input][:8]
            raise ModelError(
                f"a part of the structure has no support: points {pts}"
                f"{' ...' if members.size > 8 else ''} ({members.size} points) are not connected "
                f"to any restrained point. Probable cause: a missing support or a missing joint "
                f"between parts", source=source)
    return ncomp


class Factor:
    """Sparse factorization of the (symmetric positive definite) free-free stiffness, factored once.

    ``scale``: set by :func:`factorize` when the matrix factored is the scaled
    :math:`D K D`; physical DOFs are ``scale * x`` of the scaled ones (None: not scaled).
    ``backend``: ``"scipy"`` (SuperLU) or ``"mkl"`` (PARDISO Cholesky, :mod:`framebuckle.solver.pardiso`,
    used when :func:`framebuckle.solver.pardiso.used_for` says so for the matrix's size, or when
    ``backend="mkl"``, and the factorization proves the matrix positive definite
    with every pivot above PIVOT_TOL of its diagonal; otherwise SuperLU factors it, whose pivots
    name the DOFs of a mechanism).
    """

    scale = None
    backend = "scipy"

    def __init__(self, Kff: sp.spmatrix, backend: str | None = None):
        Kff = sp.csc_matrix(Kff)
        self.n = Kff.shape[0]
        from . import pardiso                 # optional backend (extra "fast")
        if (pardiso.available() and backend == "mkl") or (backend is None and pardiso.used_for(self.n)):
            self.lu = pardiso.positive_definite_factor(Kff, PIVOT_TOL)
            if self.lu is not None:
                self.backend = "mkl"
                self._diag = np.abs(Kff.diagonal())
                return
        self.lu = spla.splu(Kff, permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.0,
                            options={"SymmetricMode": True})

    def solve(self, b: np.ndarray) -> np.ndarray:
        return self.lu.solve(np.asarray(b, dtype=float))

    def pivots(self) -> tuple[np.ndarray, np.ndarray]:
        """(pivot, column) pairs of the factorization.

        SuperLU factors ``Pr A Pc = L U``; ``U[j, j]`` belongs to column
        ``argsort(perm_c)[j]`` of ``A`` (not ``perm_c[j]``).  PARDISO (accepted only with
        every pivot ``d_i > PIVOT_TOL |a_ii|``) reports each column's pivot as the smallest
        ratio found times its diagonal entry: a bound, enough for the callers' tests.
        """
        if self.backend == "mkl":
            return self.lu.min_ratio * self._diag, np.arange(self.n)
        return self.lu.U.diagonal(), np.argsort(self.lu.perm_c)


def factorize(K: sp.spmatrix, cons: Constraints, frame: Frame, n_input: int, source: str,
              coarse_cell=None, scale: bool = False) -> tuple[Factor, sp.csr_matrix]:
    """Factor K on the free DOFs; refuse a singular (mechanism) stiffness naming free DOFs.

    ``scale=True``: factor and return the scaled :math:`D K_{ff} D` (:func:`symmetric_scaling`;
    the factor's ``scale`` holds ``d``), the form the pipeline solves in whatever the units.
    """
    free = cons.free
    Kff = sp.csr_matrix(K)[free][:, free]
    d_scale = None
    if scale:
        d_scale = symmetric_scaling(Kff)
        Kff = scale_matrix(Kff, d_scale)
    d = np.abs(Kff.diagonal())
    try:
        f = Factor(Kff)
        piv, cols = f.pivots()
        ratio = np.abs(piv) / np.maximum(d[cols], 1e-300)
        bad = cols[(ratio < PIVOT_TOL) | (piv <= 0)]
    except RuntimeError:  # exactly singular: diagnose on a slightly shifted matrix
        shifted = Kff + sp.diags(1e-9 * np.maximum(d, d.max() * 1e-12))
        f2 = Factor(shifted, backend="scipy")      # SuperLU's pivots name the DOFs
        piv, cols = f2.pivots()
        bad = cols[np.abs(piv) / np.maximum(d[cols], 1e-300) < 1e-6]
        bad = np.union1d(bad, np.flatnonzero(d <= 1e-14 * d.max()))  # DOFs with no stiffness at all
        if bad.size == 0:
            bad = cols[np.argsort(np.abs(piv) / np.maximum(d[cols], 1e-300))[:1]]
    if bad.size:
        gdofs = free[np.sort(bad)]
        raise ModelError(_mechanism_message(gdofs, frame, n_input, coarse_cell), source=source)
    f.scale = d_scale
    return f, Kff


def _mechanism_message(gdofs, frame: Frame, n_input: int, coarse_cell) -> str:
    nodes = gdofs // 6
    comps = gdofs % 6
    parts = []
    for node in np.unique(nodes)[:8]:
        names = [DOF_NAMES[c] for c in comps[nodes == node]]
        parts.append(f"{describe_node(int(node), n_input, frame, coarse_cell)} ({', '.join(names)})")
    more = len(np.unique(nodes)) - 8
    rot_only = (comps >= 3).all()
    if rot_only and set(comps.tolist()) <= {3, 4, 5}:
        cause = ("members free to rotate about their own axis or at a joint: restrain the twist "
                 "(rx/ry/rz) at a support or check releases")
    else:
        cause = ("a mechanism: missing supports, pin-jointed bars without triangulation, or a "
                 "member connected at one end only")
    return (f"the stiffness matrix is singular (the structure is a mechanism). Free DOFs: "
            f"{'; '.join(parts)}{f'; and {more} more points' if more > 0 else ''}. "
            f"Probable cause: {cause}")


def _lanczos(factor: Factor, Kff, Gff, k: int, v0, source: str, case: str):
    r"""The default for large models: ARPACK on :math:`-K_g \phi = \mu K \phi` with ``factor``
    alone (no shift, no factorization of its own), or None when the block method must decide.

    A single-vector Krylov run is the cheapest way to the lowest load factors (at 1e5 DOFs,
    k = 10: about 90 solves with one right-hand side, against about 360 vectors in blocks of
    11 for the block method, plus its shift factorization), but it can skip copies of a
    repeated load factor.  So the result is handed to the block method (None is returned)
    when two of its ``k + 1`` values lie within :data:`REPEAT_GAP` of each other (a repeat,
    perhaps with copies missing), when a residual is not well inside the check's tolerance
    or when ARPACK does not converge; a copy skipped without a visible repeat is caught by
    the Sturm count of :func:`framebuckle.solver.verify.solve_checked`, which then solves
    the case again with the block method.  Returns ``(result or None, ARPACK's vectors or None)``.
    """
    n = Kff.shape[0]
    kk = k + 1
    op = spla.LinearOperator((n, n), matvec=factor.solve, dtype=float)
    ncv = min(n - 1, max(2 * kk + 1, LANCZOS_NCV_MIN))
    try:
        with _one_blas_thread():
            mu, vec = _arpack(-Gff, Kff, op, kk, ncv, _start_vector(n, v0), case, source, tol=LANCZOS_TOL)
    except (SolverError, spla.ArpackError, np.linalg.LinAlgError):   # not converged, or ARPACK's
        return None, None                                             # own error: the block method
    pos = mu > max(mu.max(), 0.0) * 1e-9 if mu.size else mu > 0
    if mu.size == 0 or mu.max() <= 0 or not pos.any():
        return EigenResult(np.empty(0), np.empty((n, 0)), np.empty(0), False, "arpack"), None
    mu, vec = mu[pos], vec[:, pos]
    lam = 1.0 / mu
    if len(lam) > 1 and (np.diff(lam) <= REPEAT_GAP * lam[1:]).any():
        return None, vec
    res = relative_residuals(Kff, Gff, lam[:k], vec[:, :k])
    if (res > ACCEPT_FRACTION * RESIDUAL_TOL).any():
        return None, vec
    return EigenResult(lam[:k], vec[:, :k], res, False, "arpack"), None


def _one_blas_thread():
    """OpenBLAS on one thread around ARPACK (its products are small and memory bound): with
    MKL's threads in the solves beside OpenBLAS's, a case at 3e4 DOFs took 2.0 s instead of
    0.95 s (:func:`framebuckle.solver.pardiso.blas_limits`)."""
    try:
        from threadpoolctl import threadpool_limits
    except ImportError:                          # optional: only a speed matter
        import contextlib
        return contextlib.nullcontext()
    from .pardiso import blas_limits
    return threadpool_limits(**blas_limits())


def block_start(v0):
    """A start for the block method after ARPACK: at most half of the block from ``v0`` (the
    rest random), so that directions a single-vector run never saw are in the first block."""
    if v0 is None:
        return None
    v0 = np.asarray(v0, float)
    if v0.ndim == 1:
        return v0
    return v0[:, : max(1, v0.shape[1] // 2)]


@dataclass
class EigenResult:
    load_factors: np.ndarray         # (k,) ascending positive
    modes: np.ndarray                # (n_free, k), K-normalised
    residuals: np.ndarray            # (k,)
    cluster_continues: bool = False
    method: str = "arpack"
    notes: list = field(default_factory=list)
    shift: float | None = None       # sigma with K + sigma Kg proved positive definite (no load factor <= sigma)


#: ARPACK's basis on the default path: 2 (k + 1) + 1 vectors, at least this many (fewer vectors
#: mean shorter restarts; measured at 1e5 DOFs, k = 10: 23 vectors 0.9 s, 30 vectors 1.2 s)
LANCZOS_NCV_MIN = 20
#: ARPACK's relative accuracy of the Ritz values on the default path (residuals then about 1e-9)
LANCZOS_TOL = 1e-10
#: relative gap below which two of ARPACK's load factors count as a possible repeat: the block
#: method takes over (a single-vector Krylov run can skip copies of a repeated value)
REPEAT_GAP = 1e-5

#: shift-invert the block eigensolver at sigma below the lowest load factor (see _shift)
BLOCK_SHIFT = True
#: the shift as a fraction of the rough (upper-bound) estimate of the lowest load factor
SHIFT_FRACTION = 0.9


def _shift(factor: Factor, Kff, Gff, v0=None, block: int = 4):
    r"""Factorization of :math:`K + \sigma K_g` with :math:`0 < \sigma < \lambda_1`, or None.

    :math:`\sigma` is :data:`SHIFT_FRACTION` times an upper bound of :math:`\lambda_1` from a
    small block Krylov space (started from ``v0``), lowered until the factorization proves
    :math:`K + \sigma K_g` positive definite (:func:`framebuckle.solver.eigen.factor_shift`).  The
    eigenvalues :math:`\nu = 1/(\lambda - \sigma)` are then far better separated than
    :math:`\mu = 1/\lambda` for a cluster of load factors.
    """
    from .eigen import factor_shift, rough_lowest
    try:
        if v0 is None:                       # a deep Krylov space of a thin block
            est, start = rough_lowest(factor.solve, Kff, -Gff, block=4, steps=8, nvec=block)
        else:                                # the previous case's modes and one step on
            est, start = rough_lowest(factor.solve, Kff, -Gff, X0=v0, block=block, steps=2, nvec=block)
    except np.linalg.LinAlgError:
        return None
    if not np.isfinite(est) or est <= 0:
        return None
    sh = factor_shift(Kff, Gff, SHIFT_FRACTION * est)
    if sh is not None:
        sh.estimate = float(est)
        sh.start = start                     # Ritz vectors: the eigensolver's first block
    return sh


def buckling_modes(factor: Factor, Kff: sp.spmatrix, Gff: sp.spmatrix, k: int = 4,
                   method: str = "auto", v0: np.ndarray | None = None,
                   source: str = "<model>", case: str = "") -> EigenResult:
    r"""Lowest ``k`` positive load factors of ``(K + lambda Kg) phi = 0`` on the free DOFs.

    ``method``: ``"dense"`` (scipy.linalg.eigh), ``"arpack"`` (one vector at a time),
    ``"block"`` (block Krylov-Schur, :mod:`framebuckle.solver.eigen`: one solve per block of
    ``k + 1`` vectors, every mode of a repeated load factor found; run on
    :math:`\nu = 1/(\lambda - \sigma)` with :math:`K + \sigma K_g` factored and proved positive
    definite, see :func:`_shift`, when :data:`BLOCK_SHIFT`) or ``"auto"``
    (dense for small models, else block).  ``v0``: start vector(s), e.g. the previous
    load case's modes (a 1D vector or an (n, j) block).
    """
    n = Kff.shape[0]
    k = int(k)
    kk = k + 1                               # one extra to see whether a cluster continues
    shift = None
    notes = []
    if method == "auto":
        method = "dense" if n <= DENSE_LIMIT or kk + 2 >= n else "lanczos"
    if method == "lanczos":
        er, start = _lanczos(factor, Kff, Gff, k, v0, source, case)
        if er is not None:
            return er
        method = "block"                     # a possible repeat, or ARPACK did not converge
        v0 = block_start(start if start is not None else v0)
    if method == "dense" or kk + 2 >= n:
        mu, vec = sla.eigh(-Gff.toarray(), Kff.toarray())
        order = np.argsort(mu)[::-1]
        mu, vec = mu[order], vec[:, order]
        method = "dense"
    elif method in ("arpack", "sparse"):
        op = spla.LinearOperator((n, n), matvec=factor.solve, dtype=float)
        ncv = min(n, max(2 * kk + 1, kk + 20))
        start = _start_vector(n, v0)
        mu, vec = _arpack(-Gff, Kff, op, kk, ncv, start, case, source)
        mu, vec = _add_missed_repeats(mu, vec, Kff, Gff, op, kk, case, source)
        method = "arpack"
    elif method == "block":
        from .eigen import block_krylov_schur
        calls = []

        def accept(theta, X):                # the residual check below, before it is made: the
            pos = theta > max(theta.max(), 0.0) * 1e-9   # first time with a margin (a polishing
            res = relative_residuals(Kff, Gff, 1.0 / theta[pos], X[:, pos])   # step if missed)
            limit = RESIDUAL_TOL * (ACCEPT_FRACTION if not calls else 1.0)
            calls.append(float(res.max()) if res.size else 0.0)
            return bool((res <= limit).all())
        shift = _shift(factor, Kff, Gff, v0, kk) if BLOCK_SHIFT else None
        if shift is None:
            br = block_krylov_schur(factor.solve, Kff, -Gff, kk, X0=v0, tol=BLOCK_TOL, accept=accept)
        else:                                # nu = 1/(lambda - sigma) of -Kg phi = nu (K + sigma Kg) phi
            s = shift.sigma
            br = block_krylov_schur(shift.solve, shift.A, -Gff, kk, X0=shift.start, tol=BLOCK_TOL,
                                    accept=lambda nu, X: accept(nu / (1.0 + s * nu), X))
            mu_s = br.theta / (1.0 + s * br.theta)       # mu = 1/lambda, same order for nu > 0,
            order = np.argsort(-mu_s, kind="stable")     # but rounding can swap exact repeats
            br.theta, br.vectors = mu_s[order], br.vectors[:, order]
            br.residuals = br.residuals[order] if len(br.residuals) == len(order) else br.residuals
            kn = np.einsum("ij,ij->j", br.vectors, Kff @ br.vectors)
            br.vectors = br.vectors / np.sqrt(np.maximum(kn, 1e-300))   # A- to K-normalised
        if br.converged:
            mu, vec = br.theta, br.vectors
        else:                                # stalled: another method, same factorization
            mu, vec, method, note = fallback(factor, Kff, Gff, kk, shift, v0, br, case, source)
            notes.append(note)
    else:
        raise ValueError(f"unknown eigen method {method!r}")

    mu_max = mu.max() if mu.size else 0.0
    pos = mu > max(mu_max, 0.0) * 1e-9
    if mu_max <= 0 or not pos.any():
        return EigenResult(np.empty(0), np.empty((n, 0)), np.empty(0), False, method)
    mu, vec = mu[pos], vec[:, pos]
    lam = 1.0 / mu
    cluster = bool(len(lam) > k and abs(lam[k] - lam[k - 1]) <= 1e-6 * abs(lam[k - 1]))
    lam, vec = lam[:k], vec[:, :k]
    res = relative_residuals(Kff, Gff, lam, vec)
    if (res > RESIDUAL_TOL).any():
        i = int(np.argmax(res))
        raise SolverError(f"case '{case}': mode {i + 1} failed its residual check "
                          f"(||(K + lambda Kg) phi|| / ||K phi|| = {res[i]:.2e} > {RESIDUAL_TOL:g})",
                          source=source)
    return EigenResult(lam, vec, res, cluster, method, notes,
                       shift=shift.sigma if method in ("block", "arpack-shift") and shift is not None
                       else None)
