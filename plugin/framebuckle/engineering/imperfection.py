r"""Initial imperfection shaped like a buckling mode, for a nonlinear re-analysis.

The imperfect geometry is the input mesh with every point moved by
:math:`\eta_{init} = s\, \eta_{cr}`, the chosen mode (translations,
normalised to a largest translation of 1 over the model) times a scale ``s``:

* ``amplitude = a`` in ``[imperfection]``: :math:`s = a`, the largest
  translation of the imperfection;
* otherwise EN 1993-1-1:2005 clause 5.3.2(11), Eq. (5.9):

  .. math::

      \eta_{init} = e_0 \frac{N_{cr}}{E I\, |\eta''_{cr}|_{max}} \eta_{cr}

  with :math:`N_{cr} = \alpha_{cr} |N_{Ed}|` and :math:`E I |\eta''_{cr}|_{max}`
  the bending moment of :math:`\eta_{cr}` at the critical cross-section,
  taken in the member at the critical location (``member`` = its label;
  default: the compressed member with the largest strain energy share of the
  mode) about its governing axis, as the largest end moment of its
  sub-elements (:func:`end_moments`).  ``e0`` is

  - ``e0`` given in the study file, or
  - Eq. (5.10) when ``curve`` and ``W`` (section modulus for
    :math:`M_{Rk} = W f_y`) are given:

    .. math::

        e_0 = \alpha (\bar\lambda - 0.2) \frac{M_{Rk}}{N_{Rk}}
              \frac{1 - \chi \bar\lambda^2 / \gamma_{M1}}{1 - \chi\bar\lambda^2},
        \quad \bar\lambda = \sqrt{\alpha_{ult,k} / \alpha_{cr}}

    with :math:`N_{Rk} = A f_y`, :math:`\alpha_{ult,k} = N_{Rk} / |N_{Ed}|`
    (axial force only, unless ``alpha_ult_k`` is given), :math:`\chi` from
    Eq. (6.49) for the curve's imperfection factor (Table 6.1) and
    :math:`e_0 = 0` for :math:`\bar\lambda \le 0.2`;
  - else :math:`e_0 = L / d` with ``d`` from Table 5.1 (elastic analysis) for
    ``curve`` (default ``"b"``: L/250), ``L`` the member's length.
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import InputError

#: EN 1993-1-1:2005 Table 6.1 imperfection factors
CURVE_ALPHA = {"a0": 0.13, "a": 0.21, "b": 0.34, "c": 0.49, "d": 0.76}
#: EN 1993-1-1:2005 Table 5.1 bow imperfection e0/L = 1/d, elastic analysis (from memory)
CURVE_BOW = {"a0": 350.0, "a": 300.0, "b": 250.0, "c": 200.0, "d": 150.0}
CLAUSE = "EN 1993-1-1:2005 clause 5.3.2(11)"


def chi(lam: float, alpha: float) -> float:
    """Reduction factor, EN 1993-1-1:2005 Eq. (6.49)."""
    phi = 0.5 * (1 + alpha * (lam - 0.2) + lam * lam)
    return min(1.0, 1.0 / (phi + math.sqrt(phi * phi - lam * lam)))


def e0_formula(lam: float, alpha: float, M_Rk: float, N_Rk: float, gamma_M1: float = 1.0) -> float:
    """EN 1993-1-1:2005 Eq. (5.10); 0 for lam <= 0.2."""
    if lam <= 0.2:
        return 0.0
    c = chi(lam, alpha)
    return alpha * (lam - 0.2) * M_Rk / N_Rk * (1 - c * lam * lam / gamma_M1) / (1 - c * lam * lam)


def end_moments(fine, mode: np.ndarray, axial: np.ndarray | None, alpha: float,
                which: np.ndarray, warping_mode: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray]:
    r"""Largest |bending moment| of the mode at the ends of sub-elements ``which``, about local y and z.

    The end forces of a sub-element in the buckled state are
    :math:`f_e = (K_e + \alpha K_{g,e}) u_e` (local); their moment entries are
    the bending moments :math:`E I \eta''` of the mode at the sub-division
    points, far more accurate than the Hermite curvature of the displacements
    (for a pinned column with 8 sub-elements: 3e-5 against 1.3e-2 relative error).
    ``fine`` is the case's :class:`~framebuckle.engineering.solvedmatrices.CaseMatrices` (the matrices
    the solve used: a released end has zero rows in them, so its moment is zero) or the
    refined Frame with its ``axial`` forces.  Returns arrays over the beam sub-elements of
    ``which`` in element order.
    """
    from .solvedmatrices import CaseMatrices
    cm = fine if isinstance(fine, CaseMatrices) else CaseMatrices(fine, np.asarray(axial, float), None, None)
    mask = np.zeros(cm.fine.n_elements, bool)
    mask[np.asarray(which)] = True
    mask &= ~cm.fine.bar
    sel = np.flatnonzero(mask)
    phi = cm.mode_vectors(mode[None], None if warping_mode is None else np.asarray(warping_mode)[None])
    My = np.zeros(cm.fine.n_elements)
    Mz = np.zeros(cm.fine.n_elements)
    for b in cm.blocks(sel):
        u = b.local(phi)[0]
        f = np.einsum("eij,ej->ei", b.K + alpha * b.G, u)
        My[b.sel] = np.abs(f[:, [4, 10]]).max(axis=1)
        Mz[b.sel] = np.abs(f[:, [5, 11]]).max(axis=1)
    return My[sel], Mz[sel]


def scale_for(result, members, case_index: int, mode_index: int, eff, share, settings: dict,
              fy=None, source: str = "<study>") -> dict:
    """The scale ``s`` and how it was obtained (a dict for the summary)."""
    c = result.cases[case_index]
    alpha = float(c.load_factors[mode_index])
    info = {"case": c.name, "mode": mode_index + 1, "load_factor": alpha}
    if "amplitude" in settings:
        a = float(settings["amplitude"])
        return {**info, "method": "amplitude", "scale": a, "amplitude": a,
                "formula": "eta_init = amplitude * eta_cr / max|eta_cr|"}
    # member at the critical location
    if "member" in settings:
        try:
            m = members.index_of(settings["member"])
        except KeyError:
            raise InputError(f"[imperfection] member = {settings['member']} is not a member label; labels "
                             f"run {members.label.min()}..{members.label.max()}", source=source) from None
        if eff.status[m] not in ("compression",):
            raise InputError(f"[imperfection] member = {settings['member']} is not a compressed beam member "
                             f"in case '{c.name}' ({eff.status[m]})", source=source)
    else:
        cand = np.flatnonzero(eff.status == "compression")
        if cand.size == 0:
            raise InputError(f"case '{c.name}': no compressed beam member to scale the imperfection by "
                             f"clause 5.3.2(11); give [imperfection] amplitude", source=source)
        m = int(cand[np.argmax(share[cand])])
    g = int(eff.governing_element[m])
    frame = result.model
    N_Ed = abs(float(eff.N_Ed[m]))
    N_cr = alpha * N_Ed
    axis = eff.axis[m] or ("y" if frame.Iy[g] <= frame.Iz[g] else "z")
    from .solvedmatrices import for_case
    in_m = members.of_element[result.refined.element_map] == m
    wm = None if c.warping_modes is None else c.warping_modes[mode_index]
    My, Mz = end_moments(for_case(result, c), c.modes[mode_index], None, alpha, in_m, wm)
    EI = frame.E[g] * (frame.Iy[g] if axis == "y" else frame.Iz[g])
    M_cr = float((My if axis == "y" else Mz).max())
    if not M_cr > 0:
        raise InputError(f"case '{c.name}' mode {mode_index + 1}: member {members.label[m]} is not bent by "
                         f"the mode; choose another [imperfection] member or give amplitude", source=source)
    L = float(members.length[m])
    curve = settings.get("curve", "b")
    if curve not in CURVE_ALPHA:
        raise InputError(f"[imperfection] curve = '{curve}' is not one of {', '.join(CURVE_ALPHA)}",
                         source=source)
    extra = {}
    if "e0" in settings:
        e0 = float(settings["e0"])
        how = "e0 given in the study file"
    elif "W" in settings:
        f = settings.get("fy")
        if f is None and fy is not None and np.isfinite(fy[g]):
            f = float(fy[g])
        if f is None:
            raise InputError("[imperfection] W is given but no yield strength: give fy in [imperfection] "
                             "or in the section/material table", source=source)
        N_Rk = float(frame.A[g]) * float(f)
        M_Rk = float(settings["W"]) * float(f)
        a_ult = float(settings.get("alpha_ult_k", N_Rk / N_Ed))
        lam = math.sqrt(a_ult / alpha)
        gm1 = float(settings.get("gamma_M1", 1.0))
        e0 = e0_formula(lam, CURVE_ALPHA[curve], M_Rk, N_Rk, gm1)
        how = "EN 1993-1-1:2005 Eq. (5.10)"
        extra = {"slenderness": lam, "chi": chi(lam, CURVE_ALPHA[curve]), "imperfection_factor": CURVE_ALPHA[curve],
                 "N_Rk": N_Rk, "M_Rk": M_Rk, "alpha_ult_k": a_ult, "gamma_M1": gm1}
    else:
        e0 = L / CURVE_BOW[curve]
        how = f"L / {CURVE_BOW[curve]:g} for curve {curve}, EN 1993-1-1:2005 Table 5.1 (elastic analysis)"
    s = e0 * N_cr / M_cr
    return {**info, "method": "EN1993-5.3.2(11)", "clause": CLAUSE, "scale": s, "amplitude": s,
            "formula": "eta_init = e0 * N_cr / (E I |eta''_cr|max) * eta_cr",
            "e0": e0, "e0_from": how, "curve": curve, "member": int(members.label[m]), "axis": axis,
            "N_Ed": -N_Ed, "N_cr": N_cr, "EI": float(EI), "M_cr": M_cr,
            "member_length": L, **extra}


def imperfect_grid(result, case_index: int, mode_index: int, scale: float):
    """The input mesh (a :class:`framebuckle.io.vtu.Grid`) with points moved by ``scale * mode``, a note if the bow is lost,
    and the largest translation applied to an input point."""
    from ..io.vtu import from_meshio
    grid = from_meshio(result.input.mesh)           # a copy of the input's points and data
    n = result.model.n_nodes
    mode = result.cases[case_index].modes[mode_index]
    d = scale * np.asarray(mode[:n, :3])
    grid.point_data["imperfection"] = d
    grid.points = np.asarray(grid.points, float) + d
    grid.field_data["imperfection_scale"] = np.array([scale])
    note = None
    full = np.linalg.norm(mode[:, :3], axis=1).max()
    at_input = np.linalg.norm(mode[:n, :3], axis=1).max() if n else 0.0
    if full > 0 and at_input < 0.5 * full:
        note = (f"the largest translation of the mode at the input points is {at_input / full:.0%} of its "
                f"largest value: the bow lies inside cells, which the input mesh cannot show; "
                f"sub-divide the members of the input mesh to carry the imperfection")
    return grid, note, float(scale * at_input)
