r"""Stiffening advice: sensitivity of load factors to each member's bending stiffness.

Scaling member ``m``'s bending stiffness (``E Iy`` and ``E Iz`` together) by
``s_m`` changes the elastic stiffness by :math:`\partial K / \partial s_m =
K^{bend}_m`, the bending part of the member's element matrices.  For a simple
eigenvalue of :math:`(K + \alpha K_g)\phi = 0` differentiating and
pre-multiplying by :math:`\phi^T` gives, with no re-solve,

.. math::

    \frac{\partial \alpha}{\partial s_m}
      = \frac{\phi^T K^{bend}_m \phi}{-\phi^T K_g \phi}
      = \frac{2 U_{bend,m}}{W}
      = \alpha \, \frac{U_{bend,m}}{U},

with ``W`` the geometric work (:mod:`participation`, all terms the solve
used).  For released elements :math:`K^{bend}_m` is the bending part of the
condensed matrix :math:`C^T K C`: the condensation matrix ``C`` is
:math:`-K_{cc}^{-1} K_{cr}` within each bending plane, unchanged when that
plane's stiffness is scaled, so :math:`\partial (C^T K C) / \partial s_m =
C^T K^{bend}_m C` (without shear areas; with them the shear parameter also
changes with E I and the derivative is that of the bending part alone).  The relative
sensitivity :math:`(\partial\alpha/\alpha)/\partial s_m` is the member's
share of the bending energy of the mode: stiffening the members with the
largest share raises alpha_cr most.  Axial and torsional stiffness are not
included (bars therefore get 0).  For repeated load factors (a cluster) the
derivative of each mode is not defined, and for close ones it holds only for
very small changes; the check marks modes within 1 % of another as indicative.
"""

from __future__ import annotations

import numpy as np

from .participation import Energies, per_member


def bending_sensitivity(en: Energies, member_of_fine: np.ndarray, n_members: int) -> np.ndarray:
    """d alpha_k / d s_m for every mode ``k`` and member ``m``, shape (k, m)."""
    bend = per_member(en.bending, member_of_fine, n_members)       # (k, m) U_bend per member
    W = en.work.sum(axis=1)                                        # (k,)  -phi^T Kg phi
    return 2.0 * bend / np.where(W != 0, W, np.nan)[:, None]


def ranking(sens: np.ndarray) -> np.ndarray:
    """Member indices, most effective first (ties keep member order)."""
    s = np.nan_to_num(sens, nan=-np.inf)
    top = np.abs(s[np.isfinite(s)]).max() if np.isfinite(s).any() else 1.0
    # compare to 9 significant digits, so that identical members rank in member order
    return np.argsort(-np.round(s / max(top, 1e-300), 9), kind="stable")


def repeated(load_factors: np.ndarray, rel: float = 1e-6) -> np.ndarray:
    """(k,) True where a load factor is within ``rel`` of a neighbour."""
    lam = np.asarray(load_factors, float)
    if lam.size < 2:
        return np.zeros(lam.size, bool)
    close = np.abs(np.diff(lam)) <= rel * np.abs(lam[1:])
    return np.r_[close, False] | np.r_[False, close]
