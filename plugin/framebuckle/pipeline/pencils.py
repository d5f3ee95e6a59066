"""The pencil each case was solved with, kept on ``Result.pencil`` for later stages (the sway
search, the storey-drift estimate): the very matrices, scaling and factorization of the solve."""

from __future__ import annotations

import numpy as np

from .combosolve import FactoredGeometric
from .results import normalise_modes


class CasePencils:
    """The pencil ``(K, Kg)`` and factorization each case was solved with, for later stages.

    Built from the very objects :func:`run` used (assembler, geometric-stiffness builder,
    constraints, factorization, preload), so a stage that extends a solution works on
    exactly the solve's matrices.  ``Kg`` of a case is assembled again on demand (the same
    function on the same input) rather than kept for every case.
    """

    def __init__(self, asm, geo, cons, Kff, factor, pre, cases, method, scale=None, gff=None):
        self.asm, self.geo, self.cons, self.Kff, self.factor, self.pre = asm, geo, cons, Kff, factor, pre
        self._cases = {c.name: c for c in cases}
        self.method = method
        #: the symmetric scaling d the pencil was solved in: ``Kff`` is D K D with D = diag(d)
        self.scale = np.ones(len(cons.free)) if scale is None else scale
        #: the scaled free-DOF Kg of a case exactly as the solve built it (combinations: factored sums)
        self.gff = gff or FactoredGeometric(geo, cons.free, self.scale)

    @property
    def free(self) -> np.ndarray:
        return self.cons.free

    def __call__(self, name: str):
        """``(factor, Kff, Gff)`` of case ``name`` on the free DOFs, as the eigensolver saw them."""
        case = self._cases[name]
        pre = self.pre
        Kc, fac = (pre.Kff, pre.lu) if pre is not None and case.name != pre.name else (self.Kff, self.factor)
        return fac, Kc, self.gff(case)

    def solve_static(self, f_free: np.ndarray) -> np.ndarray:
        """``K u = f`` on the free DOFs in physical units, through the solve's (scaled) factor:
        u = D (D K D)^-1 D f."""
        d = self.scale if f_free.ndim == 1 else self.scale[:, None]
        return d * self.factor.solve(d * f_free)

    def full_modes(self, vecs: np.ndarray) -> np.ndarray:
        """Free-DOF vectors (n_free, j) -> modes (j, n_fine_nodes, 6), normalised as in the Result."""
        fine = self.asm.frame
        full = np.zeros((self.asm.n, vecs.shape[1]))
        full[self.cons.free] = self.scale[:, None] * vecs          # scaled -> physical
        return normalise_modes(full[:fine.n_dofs], fine.n_nodes, float(np.ptp(fine.nodes, axis=0).max()))
