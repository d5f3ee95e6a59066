"""Assembly of element matrices into scipy.sparse matrices.

The sparsity pattern is computed once per model: :class:`Assembler` keeps,
for each of the ``e * 144`` element entries, its position in the CSR data
array, so that each load case's geometric stiffness is a single
``np.bincount`` (no Python loop over elements, no re-sorting).  Entries that
come out exactly zero are then dropped from the returned matrix.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from .elements import element_dofs, element_matrices
from ..model.model import Frame


@dataclass(frozen=True)
class Assembler:
    frame: Frame
    Ke: np.ndarray          # (e, 12, 12) global elastic stiffness per element
    Ge: np.ndarray          # (e, 12, 12) global geometric stiffness per unit force
    T: np.ndarray           # (e, 12, 12) local = T @ global
    indptr: np.ndarray
    indices: np.ndarray
    slot: np.ndarray        # (e*144,) position of each element entry in CSR data
    n: int

    @classmethod
    def build(cls, frame: Frame) -> "Assembler":
        r"""Element matrices and the CSR pattern.

        The pattern is found on node pairs (``4 e`` keys, not ``144 e``): every
        element couples the full 6 x 6 DOF blocks of its node pairs, so DOF row
        ``6 r + i`` holds, for each node ``c`` coupled to node ``r`` (ascending),
        the columns ``6 c .. 6 c + 5``.  Entry ``(6r+i, 6c+j)`` of node pair ``u``
        (the ``u``-th unique pair, row-major) sits at
        ``36 p_r + 6 i d_r + 6 (u - p_r) + j`` with ``p_r`` the node-row pointer and
        ``d_r`` the number of nodes coupled to ``r``.
        """
        Ke, Ge, T = element_matrices(frame)
        n = frame.n_dofs
        nn = frame.n_nodes
        el = frame.elements.astype(np.int64)
        a, b = el[:, 0], el[:, 1]
        pr = np.stack([a, a, b, b], axis=1)            # pair (P, Q) at 2P + Q
        pc = np.stack([a, b, a, b], axis=1)
        uniq, inv = np.unique((pr * nn + pc).reshape(-1), return_inverse=True)
        r = uniq // nn
        c = uniq % nn
        nptr = np.zeros(nn + 1, np.int64)
        np.cumsum(np.bincount(r, minlength=nn), out=nptr[1:])
        deg = np.diff(nptr)
        base = 36 * nptr[r] + 6 * (np.arange(len(uniq)) - nptr[r])   # (u,) entry (6r, 6c)
        stride = 6 * deg[r]                                            # (u,) from row i to i+1
        six = np.arange(6)
        pos = base[:, None, None] + six[None, :, None] * stride[:, None, None] + six[None, None, :]
        indices = np.empty(36 * len(uniq), np.int64)
        indices[pos.reshape(-1)] = (6 * c[:, None, None] + six[None, None, :] + 0 * six[None, :, None]).reshape(-1)
        indptr = np.zeros(n + 1, np.int64)
        np.cumsum(np.repeat(6 * deg, 6), out=indptr[1:])
        u = inv.reshape(-1, 2, 2)                                      # (e, P, Q)
        slot = (base[u][:, :, None, :, None] + six[None, None, :, None, None] * stride[u][:, :, None, :, None]
                + six[None, None, None, None, :])                      # (e, P, i, Q, j)
        idx_dtype = np.int32 if len(indices) < 2**31 and n < 2**31 else np.int64
        return cls(frame, Ke, Ge, T, indptr.astype(idx_dtype), indices.astype(idx_dtype),
                   slot.reshape(-1), n)

    def _csr(self, values: np.ndarray) -> sp.csr_matrix:
        return scatter_csr(self.slot, values, self.indices, self.indptr, self.n)

    def matrix(self, values: np.ndarray) -> sp.csr_matrix:
        """Assemble any global element matrices ``values`` (e, 12, 12) on this pattern."""
        return self._csr(np.asarray(values, dtype=float))

    def stiffness(self, scale: np.ndarray | None = None) -> sp.csr_matrix:
        """Global elastic stiffness K; ``scale`` multiplies each element's matrix."""
        Ke = self.Ke if scale is None else self.Ke * np.asarray(scale)[:, None, None]
        return self._csr(Ke)

    def geometric(self, axial: np.ndarray) -> sp.csr_matrix:
        """Global geometric stiffness for element axial forces (tension positive)."""
        return self._csr(self.Ge * np.asarray(axial, dtype=float)[:, None, None])


def scatter_csr(slot, values, indices, indptr, n: int) -> sp.csr_matrix:
    """Sum the element entries ``values`` into their CSR positions ``slot`` of the fixed
    pattern ``(indices, indptr)``; exact zeros are dropped from the result.

    The pattern stores every entry of the coupled DOF blocks, and most of them are exact
    zeros for members along the global axes: without them products and the factorization
    are faster.  The pattern arrays are copied (``eliminate_zeros`` compacts in place and
    the pattern serves every load case).
    """
    data = np.bincount(slot, weights=np.asarray(values, dtype=float).reshape(-1), minlength=len(indices))
    m = sp.csr_matrix((data, indices.copy(), indptr.copy()), shape=(n, n))
    m.eliminate_zeros()
    return m


def assemble(frame: Frame, axial: np.ndarray | None = None):
    """Convenience: ``K`` or ``(K, Kg)`` for one set of axial forces."""
    a = Assembler.build(frame)
    K = a.stiffness()
    return K if axial is None else (K, a.geometric(axial))
