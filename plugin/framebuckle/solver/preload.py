r"""Constant preload: one load case held constant while the others are scaled.

With the constant case's member forces :math:`N_c` (times ``factor``) and a
variable case's :math:`N_v`, the load factor of the variable case solves

.. math::  \bigl(K + K_g(N_c) + \lambda_{var} K_g(N_v)\bigr)\,\phi = 0 .

:math:`K + K_g(N_c)` must be positive definite: otherwise the structure has
already buckled under the constant part alone (its own load factor is at most
1) and no variable load factor exists; this is refused with a clear message.
The inertia of :math:`K + K_g(N_c)` is read from the signs of the pivots of
its symmetric (diagonal-pivoting) LU factorization (Sylvester's law of
inertia; Bathe 1996, Finite Element Procedures, sec. 8.2.4, Sturm sequence
property).

Study file::

    [preload]
    case = "dead"       # the constant case (cell field axial_force.dead)
    factor = 1.0        # multiplies the constant case (default 1)
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from ..errors import InputError, ModelError
from .solve import PIVOT_TOL, Factor


@dataclass(frozen=True)
class Preload:
    name: str                 # constant case
    factor: float             # multiplier of the constant case
    Kff: sp.csr_matrix        # K + factor * Kg(N_const) on the free DOFs
    lu: Factor

    def note(self) -> str:
        return (f"load factors are for this case on top of the constant preload of case "
                f"'{self.name}'" + (f" x {self.factor:g}" if self.factor != 1.0 else "")
                + ": (K + Kg(constant) + lambda Kg(this case)) phi = 0")


def parse(spec, study, cases, source) -> tuple[str, float] | None:
    """``(case, factor)`` from the API keyword ``spec`` (a case name or a dict) or ``[preload]``."""
    if spec is None:
        spec = study.get("preload")
        src = study.source
    else:
        src = source
    if spec is None or spec is False:
        return None
    if isinstance(spec, str):
        spec = {"case": spec}
    if not isinstance(spec, dict) or "case" not in spec:
        raise InputError("preload must name a case: [preload] case = \"<name>\"", source=src)
    name = spec["case"]
    factor = spec.get("factor", 1.0)
    if isinstance(factor, bool) or not isinstance(factor, (int, float)) or not np.isfinite(factor) or factor <= 0:
        raise InputError(f"[preload] factor must be a positive number, got {factor!r}", source=src)
    names = [c.name for c in cases]
    if name not in names:
        raise InputError(f"[preload] case = '{name}' is not a load case of the input (or was left out by "
                         f"[analysis] cases); cases: {', '.join(names)}", source=src)
    return str(name), float(factor)


def prepare(name: str, factor: float, Kff, Gff_const, source: str) -> Preload:
    """Factor ``K + factor Kg_const`` on the free DOFs; refuse it unless positive definite."""
    Keff = sp.csr_matrix(Kff + factor * Gff_const)
    unstable = False
    try:
        lu = Factor(Keff)
        piv, cols = lu.pivots()
        d = np.abs(Keff.diagonal())
        n_neg = int((piv <= PIVOT_TOL * d[cols]).sum())
        unstable = n_neg > 0
    except RuntimeError:
        n_neg, unstable = 0, True
    if unstable:
        raise ModelError(
            f"the constant part alone is unstable: K + Kg of the preload case '{name}'"
            f"{f' x {factor:g}' if factor != 1.0 else ''} is not positive definite"
            f"{f' ({n_neg} non-positive pivot(s))' if n_neg else ' (singular)'}, i.e. the structure "
            f"buckles under the constant load by itself (its own load factor is at most 1); "
            f"reduce [preload] factor or check the constant case", source=source)
    return Preload(name, factor, Keff, lu)
