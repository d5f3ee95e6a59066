r"""Extending a case's eigensolution upward until a wanted mode appears or a Sturm count bounds it.

The solver returns the lowest ``k`` load factors; a later stage may need the lowest load
factor of a *kind* of mode (``check``: the lowest global sway mode), which can lie above
them.  :func:`search_upward` is given the pencil the case was solved with (``K``, ``Kg``,
the factorization of ``K``), the modes already found and a predicate ``wanted(lam, V)``
(the engineering layer's classification; this module knows nothing of mode kinds) and

1. returns the lowest wanted mode among those found, if any;
2. otherwise counts the load factors below a bound ``B`` with the inertia of
   :math:`K + B K_g` (Sylvester's law of inertia, see :mod:`framebuckle.solver.verify`):
   :math:`n_B` = number of load factors in :math:`(0, B)`;
3. if all :math:`n_B` are among those found, none is wanted: every wanted load factor
   is :math:`\ge B` (a certified lower bound);
4. otherwise solves again for the lowest :math:`n_B + 1` modes (at most ``max_modes``),
   warm-started from the modes found, verifies them (:func:`framebuckle.solver.verify.check_case`,
   including its Sturm count) and classifies them: the lowest wanted one is the answer;
   if none is wanted and all :math:`n_B` were computed, ``B`` is the certified bound; if
   ``max_modes`` stopped the search below ``B``, the highest computed load factor is the
   certified bound (the Sturm count of the check proves that no load factor below it was
   missed).

Every matrix is the one the case was solved with (the caller passes them).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .verify import negative_count, solve_checked

#: most modes the upward search computes for one case (study: [checks] sway_search_modes)
MAX_MODES = 60


@dataclass(frozen=True)
class Upward:
    """Outcome of :func:`search_upward`."""

    load_factors: np.ndarray     # (j,) ascending: every load factor computed (the lowest j)
    modes: np.ndarray            # (n_free, j)
    first: int | None            # index of the lowest wanted mode, or None
    bound: float | None          # no wanted load factor below it (certified), when first is None
    how: str                     # how the answer was found or certified, in words
    sturm: dict                  # counts made: {"shift": B, "count": n_B, "method": ...}


def _first(mask) -> int | None:
    idx = np.flatnonzero(np.asarray(mask, bool))
    return int(idx[0]) if idx.size else None


def search_upward(factor, Kff, Gff, lam, vecs, wanted, bound: float, *, max_modes: int = MAX_MODES,
                  method: str = "auto", source: str = "<model>", case: str = "") -> Upward:
    """See the module docstring. ``wanted(lam (j,), V (n_free, j)) -> (j,) bool``."""
    lam = np.asarray(lam, float)
    vecs = np.asarray(vecs, float)
    i = _first(wanted(lam, vecs)) if len(lam) else None
    if i is not None:
        return Upward(lam, vecs, i, None, "among the requested modes", {})
    bound = float(bound)
    below = int((lam < bound).sum())
    if len(lam) and lam[-1] >= bound:
        # the verification of the case proved no load factor below the highest one was missed
        return Upward(lam, vecs, None, float(lam[-1]),
                      f"the Sturm count of the solution: all {len(lam)} load factors below "
                      f"{lam[-1]:.6g} were found", {})
    n_b, how = negative_count(Kff + bound * Gff)
    rec = {"shift": bound, "count": n_b, "method": how}
    if n_b is not None and n_b <= below:
        return Upward(lam, vecs, None, bound,
                      f"Sturm count: {n_b} load factor(s) below {bound:.6g}, all among the "
                      f"requested modes", rec)
    k = max_modes if n_b is None else min(n_b + 1, max_modes)
    if k <= len(lam):
        top = float(lam[-1]) if len(lam) else None
        return Upward(lam, vecs, None, top, f"search stopped at {max_modes} modes", rec)
    er, _ = solve_checked(factor, Kff, Gff, k, method=method, v0=vecs if vecs.size else None,
                          source=source, case=case)
    lam2, vec2 = np.asarray(er.load_factors, float), np.asarray(er.modes, float)
    i = _first(wanted(lam2, vec2)) if len(lam2) else None
    if i is not None:
        return Upward(lam2, vec2, i, None, f"upward search: mode {i + 1} of {len(lam2)} computed", rec)
    if n_b is not None and len(lam2) >= n_b:
        # the check's Sturm count proved every load factor below the highest computed one found
        top = float(lam2[-1]) if len(lam2) > n_b else bound
        return Upward(lam2, vec2, None, max(top, bound),
                      f"Sturm count: {n_b} load factor(s) below {bound:.6g}; the lowest {len(lam2)} "
                      f"computed, none a sway mode", rec)
    return Upward(lam2, vec2, None, float(lam2[-1]),
                  f"search stopped at {len(lam2)} modes (the Sturm count of the solution proves "
                  f"no load factor below {lam2[-1]:.6g} was missed)", rec)
