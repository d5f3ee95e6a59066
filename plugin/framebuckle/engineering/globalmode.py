r"""The lowest global sway mode of a case, on which the EN 1993-1-1 5.2.1(3) / 5.2.2 verdicts rest.

EN 1993-1-1:2005 clauses 5.2.1(3) and 5.2.2 concern instability in a *global sway* mode.  A
mode is ``sway`` when its chord share (the part of the translational geometric work done by
the rigid chord rotation of the members, :mod:`framebuckle.engineering.participation`) is at least the
sway limit (0.5): the joints move sideways relative to each other.  Members are physical
members (:mod:`framebuckle.mechanics.members`: a column meshed in 1 or 10 cells is one member) and the
work integrals converge with the sub-division, so the type does not depend on mesh density.

:func:`lowest_sway` takes the case's modes; when none is ``sway`` it extends the solution
upward with the case's own matrices (:func:`framebuckle.solver.upward.search_upward`) until a sway
mode appears, or a Sturm count proves that no sway load factor lies below the bound ``B``
(then ``alpha_cr_sway >= B``, a certified lower bound).  Modes below the sway mode are member
buckling, to be covered by member design with the effective lengths.
"""

from __future__ import annotations

import numpy as np

from .participation import chord_work, element_energies, participation
from ..solver.upward import MAX_MODES, search_upward

MEMBER_TEXT = "member buckling (cover by member design with the effective lengths)"


def lowest_sway(result, case, part, fine_axial, members, mof, limits, bound: float,
                max_modes: int = MAX_MODES) -> dict:
    """``{"alpha_cr_sway", "alpha_cr_sway_min", "sway_mode", "sway_share", "found_by", "sturm",
    "below": [(mode, load_factor, type, members_carrying)]}`` of one solved case."""
    kinds = list(part.kinds)
    lam = np.asarray(case.load_factors, float)
    if "sway" in kinds:
        i = kinds.index("sway")
        return {"alpha_cr_sway": float(lam[i]), "alpha_cr_sway_min": None, "sway_mode": i + 1,
                "sway_share": float(part.sway_share[i]), "found_by": "among the requested modes",
                "sturm": {}, "below": _below(part, members, lam, i)}
    pencil = getattr(result, "pencil", None)
    if pencil is None:
        return {"alpha_cr_sway": None, "alpha_cr_sway_min": None, "sway_mode": None, "sway_share": None,
                "found_by": "not searched (the solve's matrices are not available)", "sturm": {},
                "below": _below(part, members, lam, len(lam))}
    factor, Kc, Gff = pencil(case.name)
    seen = {}

    def wanted(lam_j, V):
        modes = pencil.full_modes(V)
        en = element_energies(result.fine, modes, fine_axial)
        ch = chord_work(result.fine, modes, fine_axial, mof, members.ends, members.length)
        p = participation(en, ch, mof, members.n, *limits)
        seen["part"] = p
        return np.array([k == "sway" for k in p.kinds])

    # the case's own modes as free-DOF vectors (warm start); the Result keeps only the nodal DOFs
    fr = pencil.free
    if (fr < case.modes[0].size).all():
        # in the coordinates of the solved (scaled) pencil: physical = d * scaled
        V, lam_in = case.modes.reshape(len(lam), -1)[:, fr].T / pencil.scale[:, None], lam
    else:                                       # appended (warping) DOFs: start afresh
        V, lam_in = np.zeros((len(fr), 0)), np.empty(0)
    up = search_upward(factor, Kc, Gff, lam_in, V, wanted, bound, max_modes=max_modes,
                       method=pencil.method, source=result.input.source, case=case.name)
    p = seen.get("part", part)
    if up.first is not None:
        i = up.first
        return {"alpha_cr_sway": float(up.load_factors[i]), "alpha_cr_sway_min": None,
                "sway_mode": i + 1, "sway_share": float(p.sway_share[i]), "found_by": up.how,
                "sturm": up.sturm, "below": _below(p, members, up.load_factors, i)}
    return {"alpha_cr_sway": None, "alpha_cr_sway_min": up.bound, "sway_mode": None, "sway_share": None,
            "found_by": up.how, "sturm": up.sturm,
            "below": _below(p, members, up.load_factors, len(up.load_factors))}


def _below(part, members, lam, n) -> list:
    """The modes below the sway mode (member or torsional buckling)."""
    out = []
    for j in range(min(n, len(lam))):
        out.append({"mode": j + 1, "load_factor": float(lam[j]), "type": part.kinds[j],
                    "members_carrying": [int(members.label[m]) for m in part.carrying[j]][:20],
                    "verdict": MEMBER_TEXT})
    return out


def verdicts(case, sway: dict | None, settings: dict, storeys: list, gate: float,
             member_min: float) -> tuple[bool, list, dict, list]:
    """``(passed, verdicts, summary fields, notes)`` of one case from its sway search ``sway``
    (None for a case without modes).

    EN 1993-1-1 5.2.1(3) / 5.2.2 and the gate use alpha_cr,sway (or its certified lower bound);
    a case whose solution could not be searched falls back to the lowest load factor
    (conservative).  Any mode below ``member_min`` (1: buckling under the design loads
    themselves) fails the case.
    """
    from . import codecheck
    alpha = case.alpha_cr
    notes = []
    if sway is None:
        vs = codecheck.case_verdicts(None, settings, storeys, case.name)
        ok = all(v["passes"] for v in vs if v["code"] == "AISC360")
        return ok, vs, {"alpha_cr_sway": None, "alpha_cr_sway_min": None, "member_buckling": []}, notes
    a_sw, a_min = sway["alpha_cr_sway"], sway["alpha_cr_sway_min"]
    if a_sw is None and a_min is None:
        basis, name = alpha, "alpha_cr"
        notes.append("no global sway mode among the modes and the solution could not be searched "
                      "further: the verdicts use the lowest load factor (conservative)")
    else:
        basis, name = a_sw, "alpha_cr,sway"
    vs = codecheck.case_verdicts(basis, settings, storeys, case.name, a_min, name)
    gate_ok = basis >= gate if basis is not None else a_min >= gate
    member_ok = alpha is None or alpha >= member_min
    ok = gate_ok and member_ok and all(v["passes"] for v in vs if v["code"] == "AISC360")
    below = sway["below"] if basis is not alpha else []
    if below:
        top = below[-1]
        span = (f"mode 1 (alpha = {below[0]['load_factor']:.4g})" if len(below) == 1 else
                f"modes 1-{len(below)} (alpha = {below[0]['load_factor']:.4g} to {top['load_factor']:.4g})")
        where = (f"the lowest global sway mode is mode {sway['sway_mode']} (alpha_cr,sway = {a_sw:.4g}, "
                 f"{sway['found_by']})" if a_sw is not None else
                 f"no global sway mode lies below {a_min:.4g} (alpha_cr,sway >= {a_min:.4g}: {sway['found_by']})")
        notes.append(f"{span}: {MEMBER_TEXT}; they are not a failure of EN 1993-1-1 5.2.1(3). "
                     f"The 5.2.1(3) / 5.2.2 verdicts use the global sway mode: {where}")
    if not member_ok:
        notes.append(f"mode 1 (alpha = {alpha:.4g}) lies below {member_min:g}: members buckle elastically "
                     f"under the design loads themselves, which no member design can pass "
                     f"(N_Ed > N_cr); the case fails")
    fields = {"alpha_cr_sway": a_sw, "alpha_cr_sway_min": a_min,
              "alpha_cr_sway_bounded": a_sw is None and a_min is not None,
              "sway_mode": sway["sway_mode"], "sway_found_by": sway["found_by"],
              "sway_sturm": sway["sturm"], "member_buckling": below, "member_min_alpha": member_min,
              "verdict_basis": "lowest load factor (not searched)" if basis is alpha and a_sw is None
              else "global sway mode"}
    return bool(ok), vs, fields, notes


def sway_text(fields: dict) -> str:
    """Short form for the terminal table: ``21.68``, ``>= 10`` or ``-``."""
    if fields.get("alpha_cr_sway") is not None:
        return f"{fields['alpha_cr_sway']:.4g}"
    if fields.get("alpha_cr_sway_min") is not None:
        return f">= {fields['alpha_cr_sway_min']:.4g}"
    return "-"
