r"""Strain energy of buckling modes per member, and the type of each mode.

For a mode :math:`\phi` of the refined model and each sub-element ``e`` with
local displacements :math:`u_e = T_e \phi_e` and the element matrices the solve
assembled (:mod:`framebuckle.engineering.solvedmatrices`: end releases condensed, shear,
end-moment terms, warping DOFs) the strain energy splits exactly (the local
elastic matrix, condensed or not, is block-diagonal in these DOF groups) into

.. math::

    U_e = \tfrac12 u_e^T K_e u_e = U_{axial} + U_{twist} + U_{bend,y} + U_{bend,z},

with :math:`U_{bend,y}` the bending about local y (x-z plane, ``E Iy``) and
:math:`U_{bend,z}` about local z (x-y plane, ``E Iz``).  The geometric work
:math:`W_e = -u_e^T K_{g,e} u_e` (:math:`K_{g,e} = N_e G_e` plus the moment
terms; positive in compression) sums to
:math:`-\phi^T K_g \phi = \phi^T K \phi / \alpha`.  With the matrices of an
unreleased element for a released one the sums do not match and members that
carry nothing (a pinned beam without axial force) take large shares.  All of it is computed
for all sub-elements and modes at once (einsum over ``(k, e, 12)``).

Mode type (documented thresholds):

* **torsional** when the twist share :math:`\sum U_{twist} / \sum U_e`
  is at least :data:`TWIST_LIMIT` (0.5);
* otherwise **sway** (global sway) when the *chord share* is at least
  :data:`SWAY_LIMIT` (0.5).  The chord share is the part of the
  translational geometric work done by the rigid chord rotation of the
  members (P-Delta, joints moving sideways relative to each other):

  .. math::

      s = \frac{\sum_e -N_e\, L_e\, |\Delta_{\perp,m(e)}|^2 / L_{m(e)}^2}
               {\sum_e -N_e\, u_e^T G^{trans}_e u_e}

  with :math:`\Delta_{\perp,m}` the relative displacement of member ``m``'s
  two ends perpendicular to its chord.  A member bowing between joints that
  stay put (P-delta) has ``s = 0``; a cantilever or a sway portal column has
  ``s`` of about 0.8 (``8 / pi^2`` for a half cosine wave);
* otherwise **member** (local buckling of one or several members between
  their joints).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..model.model import Frame

#: twist share of the strain energy from which a mode is "torsional"
TWIST_LIMIT = 0.5
#: chord (P-Delta) share of the geometric work from which a mode is "sway"
SWAY_LIMIT = 0.5
#: members listed as carrying the mode: the fewest whose shares add up to this
ENERGY_CUT = 0.9



@dataclass(frozen=True)
class Energies:
    """Per sub-element energies of ``k`` modes, each array (k, e_fine)."""

    axial: np.ndarray
    twist: np.ndarray
    bend_y: np.ndarray
    bend_z: np.ndarray
    work: np.ndarray          # geometric work -N u^T G u (all terms)
    work_trans: np.ndarray    # translational part of it (no twist term)

    @property
    def strain(self) -> np.ndarray:
        return self.axial + self.twist + self.bend_y + self.bend_z

    @property
    def bending(self) -> np.ndarray:
        return self.bend_y + self.bend_z


def _quad(u, M):
    """0.5 u^T M u for (k, e, n) u and (e, n, n) M -> (k, e)."""
    return 0.5 * np.einsum("kei,eij,kej->ke", u, M, u, optimize=True)


def element_energies(fine, modes: np.ndarray, axial: np.ndarray | None = None,
                     warping_modes: np.ndarray | None = None) -> Energies:
    """Energies of modes ``(k, n_nodes, 6)`` per sub-element.

    ``fine`` is a :class:`~framebuckle.engineering.solvedmatrices.CaseMatrices` (what the solve of the
    case assembled: releases condensed, shear, end-moment terms, warping DOFs; see
    :func:`case_energies`), or the refined Frame with its ``axial`` forces (axial terms only,
    for models solved without moment terms or warping DOFs).  Vectorised over all
    sub-elements (in blocks of :data:`framebuckle.engineering.solvedmatrices.CHUNK`) and modes.
    """
    from .solvedmatrices import CaseMatrices
    cm = fine if isinstance(fine, CaseMatrices) else CaseMatrices(fine, np.asarray(axial, float), None, None)
    k = modes.shape[0]
    phi = cm.mode_vectors(modes, warping_modes)
    ne = cm.fine.n_elements
    out = {name: np.zeros((k, ne)) for name in ("axial", "twist", "bend_y", "bend_z", "work", "work_trans")}
    for b in cm.blocks():
        ul = b.local(phi)
        for name in ("axial", "twist", "bend_y", "bend_z"):
            idx = b.groups[name]
            out[name][:, b.sel] = _quad(ul[:, :, idx], b.K[:, idx][:, :, idx])
        # translational part: every DOF but the twist ones (the moment terms couple twist and
        # bending, so they count only in the total work)
        tr = [i for i in range(b.K.shape[1]) if i not in b.groups["twist"]]
        out["work_trans"][:, b.sel] = -2.0 * _quad(ul[:, :, tr], b.G[:, tr][:, :, tr])
        out["work"][:, b.sel] = -2.0 * _quad(ul, b.G)
    return Energies(**out)


def case_energies(result, case) -> Energies:
    """:func:`element_energies` of a solved case with the matrices its solve used."""
    from .solvedmatrices import for_case
    c = result.case(case) if not hasattr(case, "modes") else case
    return element_energies(for_case(result, c), c.modes, warping_modes=getattr(c, "warping_modes", None))


def per_member(values: np.ndarray, member_of_fine: np.ndarray, n_members: int) -> np.ndarray:
    """Sum (k, e_fine) values into (k, n_members)."""
    k = values.shape[0]
    idx = (np.arange(k)[:, None] * n_members + member_of_fine[None, :]).reshape(-1)
    return np.bincount(idx, weights=values.reshape(-1), minlength=k * n_members).reshape(k, n_members)


def chord_work(fine: Frame, modes: np.ndarray, axial: np.ndarray, member_of_fine: np.ndarray,
               ends: np.ndarray, member_length: np.ndarray) -> np.ndarray:
    """Geometric work of the members' chord rotation, (k, e_fine) (see module docstring)."""
    k = modes.shape[0]
    p = fine.nodes
    has = (ends >= 0).all(axis=1)
    e0 = np.where(has, ends[:, 0], 0)
    e1 = np.where(has, ends[:, 1], 0)
    d = p[e1] - p[e0]
    dn = np.linalg.norm(d, axis=1)
    dhat = d / np.where(dn > 0, dn, 1.0)[:, None]
    delta = modes[:, e1, :3] - modes[:, e0, :3]                 # (k, m, 3)
    perp = delta - np.einsum("kmi,mi->km", delta, dhat)[:, :, None] * dhat[None]
    slope2 = np.where(has & (dn > 0), np.einsum("kmi,kmi->km", perp, perp) / np.where(dn > 0, dn, 1.0) ** 2, 0.0)
    Le = fine.lengths()
    return -np.asarray(axial, float)[None, :] * Le[None, :] * slope2[:, member_of_fine]


@dataclass(frozen=True)
class Participation:
    """Per mode: member energy shares, carrying members and the mode type."""

    share: np.ndarray          # (k, m) strain energy share per member, sums to 1 per mode
    bend_y: np.ndarray         # (k, m) bending energy about local y per member
    bend_z: np.ndarray         # (k, m)
    twist_share: np.ndarray    # (k,)
    sway_share: np.ndarray     # (k,)
    kinds: list                # (k,) "sway" | "member" | "torsional"
    carrying: list             # (k,) member indices carrying ENERGY_CUT of the energy, largest first


def classify(twist_share: float, sway_share: float, twist_limit: float = TWIST_LIMIT,
             sway_limit: float = SWAY_LIMIT) -> str:
    if twist_share >= twist_limit:
        return "torsional"
    if sway_share >= sway_limit:
        return "sway"
    return "member"


def participation(en: Energies, chord: np.ndarray, member_of_fine: np.ndarray, n_members: int,
                  twist_limit: float = TWIST_LIMIT, sway_limit: float = SWAY_LIMIT,
                  cut: float = ENERGY_CUT) -> Participation:
    strain = en.strain
    per_m = per_member(strain, member_of_fine, n_members)
    tot = per_m.sum(axis=1)
    share = per_m / np.where(tot > 0, tot, 1.0)[:, None]
    twist_share = en.twist.sum(axis=1) / np.where(tot > 0, tot, 1.0)
    wt = en.work_trans.sum(axis=1)
    sway = np.where(np.abs(wt) > 0, chord.sum(axis=1) / np.where(np.abs(wt) > 0, wt, 1.0), 0.0)
    kinds, carrying = [], []
    for i in range(share.shape[0]):        # loop over modes only
        kinds.append(classify(twist_share[i], sway[i], twist_limit, sway_limit))
        # ties (identical members) keep member order: compare to 9 significant digits
        order = np.argsort(-np.round(share[i] / max(share[i].max(), 1e-300), 9), kind="stable")
        csum = np.cumsum(share[i][order])
        n = int(np.searchsorted(csum, cut - 1e-12) + 1)
        carrying.append(order[:min(n, len(order))])
    return Participation(share, per_member(en.bend_y, member_of_fine, n_members),
                         per_member(en.bend_z, member_of_fine, n_members), twist_share, sway,
                         kinds, carrying)
