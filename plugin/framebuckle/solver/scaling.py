r"""Unit-free form of the pencil: the symmetric diagonal scaling and the relative residual.

Kept apart from :mod:`framebuckle.solver.solve` so that every stage that needs the scaled
pencil or the residual measure (the solve, its independent checks, the warping and preload
paths) uses the same few lines.
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp


def symmetric_scaling(Kff) -> np.ndarray:
    r"""The diagonal :math:`d = \mathrm{diag}(K)^{-1/2}` of the symmetric scaling :math:`D K D`.

    A change of units turns :math:`K` into :math:`c S^{-1} K S^{-1}` (``S`` diagonal: the
    length unit on translations, 1 on rotations, ``c`` the force and length units' product);
    :math:`D` becomes :math:`c^{-1/2} S D`, so :math:`D K D` (unit diagonal) and
    :math:`D K_g D` are the same in every set of units, and so is everything computed from
    them.  The eigenvalues of the pencil are unchanged (congruence); modes map back as
    :math:`\phi = D \tilde\phi`.  A DOF with no positive diagonal keeps ``d = 1``.
    """
    diag = np.asarray(Kff.diagonal(), float)
    d = np.ones_like(diag)
    pos = diag > 0
    d[pos] = 1.0 / np.sqrt(diag[pos])
    return d


def scale_matrix(M, d: np.ndarray) -> sp.csr_matrix:
    """``D M D`` for ``D = diag(d)``: a new CSR matrix, O(nnz), exactly symmetric if ``M`` is."""
    M = sp.csr_matrix(M, dtype=float, copy=True)
    rows = np.repeat(np.arange(M.shape[0]), np.diff(M.indptr))
    M.data *= d[rows] * d[M.indices]
    return M


def relative_residuals(Kff, Gff, lam, V) -> np.ndarray:
    r""":math:`\|W (K + \lambda K_g)\phi\| / \|W K \phi\|` per mode, :math:`W = \mathrm{diag}(K)^{-1/2}`.

    The weights make the measure independent of the units (and of whether the pencil
    given is already scaled: then ``W`` is the identity).
    """
    w = symmetric_scaling(Kff)[:, None]
    KV = Kff @ V
    r = np.linalg.norm(w * (KV + np.asarray(lam) * (Gff @ V)), axis=0)
    return r / np.maximum(np.linalg.norm(w * KV, axis=0), 1e-300)
