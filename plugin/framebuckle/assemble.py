"""Assembly of element matrices into scipy.sparse matrices.

The sparsity pattern is computed once per model: :class:`Assembler` keeps,
for each of the ``e * 144`` element entries, its position in the CSR data
array, so that each load case's geometric stiffness is a single
``np.bincount`` (no Python loop over elements, no re-sorting).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from .elements import element_dofs, element_matrices
from .model import Frame


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
        Ke, Ge, T = element_matrices(frame)
        dofs = element_dofs(frame)
        n = frame.n_dofs
        rows = np.broadcast_to(dofs[:, :, None], (len(dofs), 12, 12)).reshape(-1)
        cols = np.broadcast_to(dofs[:, None, :], (len(dofs), 12, 12)).reshape(-1)
        key = rows.astype(np.int64) * n + cols
        uniq, slot = np.unique(key, return_inverse=True)
        r = uniq // n
        c = uniq % n
        indptr = np.zeros(n + 1, np.int64)
        np.cumsum(np.bincount(r, minlength=n), out=indptr[1:])
        idx_dtype = np.int32 if len(uniq) < 2**31 and n < 2**31 else np.int64
        return cls(frame, Ke, Ge, T, indptr.astype(idx_dtype), c.astype(idx_dtype),
                   slot.reshape(-1), n)

    def _csr(self, values: np.ndarray) -> sp.csr_matrix:
        data = np.bincount(self.slot, weights=values.reshape(-1), minlength=len(self.indices))
        return sp.csr_matrix((data, self.indices, self.indptr), shape=(self.n, self.n))

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


def assemble(frame: Frame, axial: np.ndarray | None = None):
    """Convenience: ``K`` or ``(K, Kg)`` for one set of axial forces."""
    a = Assembler.build(frame)
    K = a.stiffness()
    return K if axial is None else (K, a.geometric(axial))
