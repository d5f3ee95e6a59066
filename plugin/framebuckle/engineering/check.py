"""The engineering check of a solved model: members, effective lengths, participation,
stiffening advice, code verdicts and the imperfection; pure data, files are written by
:func:`checkfiles.write_check`.

Data flow: ``Result`` -> :func:`members.group_members` -> per case and mode
:func:`participation.case_energies` -> effective lengths, participation,
sensitivity -> verdicts -> :class:`CheckReport` (summary dict, CSV rows, cell fields).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from . import codecheck
from . import storeydrift
from .globalmode import MEMBER_TEXT, lowest_sway, sway_text
from .globalmode import verdicts as verdicts_of
from .effective import (MEMBER_SHARE, NEGLIGIBLE, design_lengths, design_summary, effective_lengths,
                        member_forces)
from ..errors import InputError
from .imperfection import scale_for
from ..mechanics.members import Members, group_members
from ..model.plausible import fy_errors, imperfection_errors
from .participation import (ENERGY_CUT, SWAY_LIMIT, TWIST_LIMIT, case_energies, chord_work,
                            participation)
from ..pipeline.results import CAUTIONS
from .checksettings import _fy, _num, _settings, _storeys, _validate_settings
from .sensitivity import bending_sensitivity, ranking, repeated
from ..io.study import Study
from ..solver.upward import MAX_MODES

#: a mode below this load factor buckles under the design loads themselves: no member design
#: can pass (N_Ed > N_cr gives chi A fy < N_cr < N_Ed, EN 1993-1-1:2005 6.3.1.2); [checks] member_min_alpha
MEMBER_MIN_ALPHA = 1.0

#: ``row_type`` "design": a member's design values, from its governing mode (``governing_mode``,
#: ``mode`` empty, ``design_rank`` 1 = lowest member critical factor); "mode": one mode's values
#: (``mode`` set, ``governing_mode`` empty), for inspection only
CSV_COLUMNS = ("case", "row_type", "mode", "governing_mode", "load_factor", "mode_type", "member", "cells",
               "length", "status", "N_Ed", "N_cr", "L_cr_y", "L_cr_z", "L_cr_ratio_y", "L_cr_ratio_z", "axis",
               "L_cr", "L_cr_ratio", "slenderness", "energy_share", "relative_share", "sensitivity",
               "sensitivity_rank", "design_rank")

# per case: the global sway mode's load factor, or its certified lower bound (framebuckle.engineering.globalmode)
CSV_COLUMNS += ("alpha_cr_sway", "alpha_cr_sway_min")
# per case: a combination's factors, "G=1.35;Q=1.5" (framebuckle.io.combinations); empty for a basic case
CSV_COLUMNS += ("factors",)

#: ratio storey-drift / eigenvalue alpha_cr,sway inside which the two agree as usual for beam-and-column
#: frames (common practice: the simple method ignores the columns' own bowing, about 12 / pi^2 = 1.22 at
#: most for fixed-base columns under rigid beams, and axial shortening); outside it a note says so
DRIFT_AGREE = (0.8, 1.25)

#: load factors closer than this (relative) are a cluster: sensitivities marked indicative
CLOSE = 0.01

#: cell fields written on the input mesh per case: the design values of every member (from its
#: governing mode, ``governing_mode`` 1-based, NaN where none; ``member_alpha`` = N_cr / |N_Ed|),
#: and ``energy_share`` / ``sensitivity`` of mode 1 (they explain alpha_cr)
CELL_FIELDS = ("N_Ed", "N_cr", "L_cr_y", "L_cr_z", "L_cr_ratio_y", "L_cr_ratio_z", "slenderness",
               "governing_mode", "member_alpha", "design_rank", "energy_share", "sensitivity")


@dataclass
class CheckReport:
    members: Members
    summary: dict
    rows: list                                   # dicts with CSV_COLUMNS
    cell_fields: dict                            # name -> (n_cells,) float
    imperfection: dict | None = None
    imperfection_mode: tuple | None = None       # (case index, mode index, scale)
    passed: bool = True
    table: list = field(default_factory=list)    # compact terminal rows

    @property
    def exit_code(self) -> int:
        return 0 if self.passed else 1


def _judge_fy(result, st: dict, src) -> None:
    """Rule yield-modulus: a table's fy against its own cell's E; the ``[checks] fy`` default, one
    value for cells of any material (steel frame with timber purlins), against the median E of the
    cells it fills in, where a unit slip shows (a steel fy beside timber's E is no slip)."""
    E = np.asarray(result.model.E, float)
    own = result.input.extra.get("fy")
    own = np.zeros(E.shape, bool) if own is None else np.isfinite(np.asarray(own, float))
    if own.any():
        fy_errors(np.asarray(result.input.extra["fy"], float)[own], E[own],
                  "yield strength fy (section/material table)", src)
    if st.get("fy") is not None and not own.all():
        fy_errors(float(st["fy"]), float(np.median(E[~own])),
                  "[checks] fy (default for cells without their own fy, against their median E)", src)


def run_check(result, study: Study | None = None, min_alpha: float | None = None,
              progress=None) -> CheckReport:
    """Everything the ``check`` command reports, from a solved :class:`~framebuckle.pipeline.results.Result`.

    ``progress``: called with a short text twice per case (members and effective lengths; then the
    sway search and verdicts) and after the imperfection (``2 * len(result.cases) + 1`` calls), e.g.
    a :class:`framebuckle.io.progress.Progress`.
    """
    step = progress or (lambda what: None)
    study = study or Study()
    st = _settings(study)
    _validate_settings(st, study.source)
    st.setdefault("codes", ["EN1993", "AISC360"])
    storeys = _storeys(study, result)
    gate = float(min_alpha if min_alpha is not None else st.get("min_alpha", codecheck.first_order_limit(st)))
    im = result.input
    fy = _fy(result, st)
    if fy is not None:
        _judge_fy(result, st, study.source)
    members = group_members(result.model, im.extra.get("member"), im.source)
    ctx = {
        "result": result, "members": members, "fy": fy, "gate": gate,
        "mof": members.of_element[result.refined.element_map],      # member of every fine element
        "storeys": [x for x in storeys if "P_story" in x],
        "neg": float(st.get("negligible_compression", NEGLIGIBLE)),
        "member_share": float(st.get("member_share", MEMBER_SHARE)),
        "limits": (float(st.get("twist_limit", TWIST_LIMIT)), float(st.get("sway_limit", SWAY_LIMIT)),
                   float(st.get("energy_cut", ENERGY_CUT))),
        "cells": _cells_text(members, im.cell_ids), "settings": st,
        "bound": max(gate, codecheck.first_order_limit(st)),
        "step": lambda name: step(f"case {name}: members and effective lengths"),
        "levels": storeydrift.floor_levels(result.model, [s["level"] for s in storeys if "level" in s]),
        "suffix": (lambda name: "") if len(result.cases) == 1 and result.cases[0].name == "default"
        else (lambda name: f".{name}"),
    }
    summary = result.summary()
    rows, table = [], []
    fields = {"member": np.full(im.n_cells, np.nan)}
    fields["member"][im.cell_ids] = members.label[members.of_element]
    by_name = {c["name"]: c for c in summary["cases"]}
    for c in result.cases:
        ok, row = _case(ctx, c, by_name[c.name], rows, fields)
        table.append(row)
        step(f"case {c.name}: sway search and verdicts")
    tension = _all_tension(result, st)
    if tension:         # a sign slip must not pass as "no compressive instability"
        for c in summary["cases"]:
            c["passed"] = False
        table = [row[:6] + (False,) + row[7:] for row in table]      # item 6 is "passed"
    passed = all(c["passed"] for c in summary["cases"])
    imp_info, imp_mode = _imperfection(result, study, members, ctx["fy"], ctx["mof"], result.fine)
    step("imperfection")
    tl, sl, cut = ctx["limits"]
    summary["check"] = {
        "passed": bool(passed), "min_alpha": gate,
        "min_alpha_from": ("--min-alpha" if min_alpha is not None else
                           "[checks] min_alpha" if "min_alpha" in st else
                           f"{codecheck.EN_CLAUSE_FIRST_ORDER} ({st.get('analysis', 'elastic')} analysis)"),
        "members": {"count": members.n, "from": "cell field 'member'" if members.explicit else
                    "automatic (collinear chains of equal section through free points)"},
        "indicators": {"twist_limit": tl, "sway_limit": sl, "energy_cut": cut, "negligible_compression": ctx["neg"],
                       "member_share": ctx["member_share"]},
        "sway_search": {"bound": ctx["bound"], "max_modes": int(st.get("sway_search_modes", MAX_MODES))},
        "member_min_alpha": float(st.get("member_min_alpha", MEMBER_MIN_ALPHA)),
        "imperfection": imp_info,
    }
    if tension:
        summary["check"]["sign_convention"] = tension
    summary["cautions"] = list(CAUTIONS)
    from ..io.combinations import factors_of_cases
    fac = factors_of_cases(im.cases)
    for r in rows:
        r["factors"] = fac.get(r["case"], "")
    return CheckReport(members, summary, rows, fields, imp_info, imp_mode, bool(passed), table)


def _all_tension(result, st) -> str | None:
    """The refusal when no case has a member in compression (unless allow_all_tension)."""
    if not result.cases or any(c.status != "no_compression" for c in result.cases):
        return None
    if st.get("allow_all_tension", False):
        return None
    how = ("compression positive ([analysis] compression = \"positive\")"
           if result.input.extra.get("compression") == "positive" else "tension positive")
    return (f"no load case has a member in compression, read {how}: a check of such a file cannot "
            f"pass, because a sign convention slip looks exactly like this; if compression is "
            f"positive in the file set [analysis] compression = \"positive\", if the structure "
            f"really is in tension only set [checks] allow_all_tension = true")


def _case(ctx, c, entry, rows, fields):
    """Fill the summary entry, CSV rows and cell fields of one case; return (passed, table row)."""
    result, members = ctx["result"], ctx["members"]
    im, frame = result.input, result.model
    axial = im.cases[[x.name for x in im.cases].index(c.name)].axial
    alpha = c.alpha_cr
    entry.update({"alpha_cr": alpha, "min_alpha": ctx["gate"]})
    st = ctx["settings"]
    member_min = float(st.get("member_min_alpha", MEMBER_MIN_ALPHA))
    if c.status != "ok":
        ctx["step"](c.name)
        ok, verdicts, extra, _ = verdicts_of(c, None, st, ctx["storeys"], ctx["gate"], member_min)
        entry.update({"passed": ok, "verdicts": verdicts, **extra})
        N, _ = member_forces(frame, members, axial)
        for m in range(members.n):
            rows.append(_row(c.name, None, None, "", members, m, ctx["cells"], N[m],
                             "tension" if N[m] > 0 else "negligible", row_type="design"))
        entry.update({"modes": [], "governing_members": [], "stiffen_first": [],
                      "design": {"member_share": ctx["member_share"], "members": [], "not_governed": []}})
        return ok, (c.name, None, "-", _verdict_short(verdicts), "-", "-", ok, "-", "-")
    fine_axial = result.refined.fine_axial(axial)
    mof = ctx["mof"]
    en = case_energies(result, c)                 # the matrices the solve used (releases, ...)
    chord = chord_work(result.fine, c.modes, fine_axial, mof, members.ends, members.length)
    part = participation(en, chord, mof, members.n, *ctx["limits"])
    sens = bending_sensitivity(en, mof, members.n)
    close = repeated(c.load_factors, CLOSE)
    modes_out, effs, ranks, start = [], [], [], len(rows)
    for i, lam in enumerate(float(x) for x in c.load_factors):
        eff = effective_lengths(frame, members, axial, lam, part.bend_y[i], part.bend_z[i], ctx["fy"],
                                ctx["neg"], result.constraints.planar_axis)
        rank = ranking(sens[i])
        rk = np.empty(members.n, np.int64)
        rk[rank] = np.arange(1, members.n + 1)
        effs.append(eff)
        ranks.append(rk)
        for m in range(members.n):
            rows.append(_row(c.name, i + 1, lam, part.kinds[i], members, m, ctx["cells"], eff.N_Ed[m],
                             eff.status[m], eff, part.share[i, m], sens[i, m], rk[m]))
        carrying = [int(members.label[j]) for j in part.carrying[i]]
        modes_out.append({
            "mode": i + 1, "load_factor": lam, "type": part.kinds[i],
            "twist_share": float(part.twist_share[i]), "sway_share": float(part.sway_share[i]),
            "members_carrying": carrying[:20], "n_members_carrying": len(carrying),
            "close_to_another": bool(close[i]),
            "stiffen_first": [{"member": int(members.label[j]), "d_alpha_d_scale": float(sens[i, j]),
                               "relative": float(sens[i, j] / lam)} for j in rank[:5] if sens[i, j] > 1e-9 * lam],
        })
    design = design_lengths(effs, part.share, c.load_factors, ctx["member_share"])
    rows[start:start] = _design_rows(c.name, design, part, sens, ranks, members, ctx["cells"])
    _put_fields(fields, ctx["suffix"](c.name), im.cell_ids, members, design, part.share[0], sens[0],
                im.n_cells)
    entry["design"] = design_summary(design, members.label, ctx["member_share"])
    if entry["design"]["not_governed"]:
        ng = entry["design"]["not_governed"]
        entry["notes"].append(f"{len(ng)} compressed member(s) take part in none of the {len(modes_out)} computed "
                              f"mode(s) (energy share below {ctx['member_share']:g} of the mode's largest): "
                              f"{', '.join(str(x) for x in ng[:10])}{' ...' if len(ng) > 10 else ''}; their "
                              f"effective lengths are not known: ask for more modes (--modes)")
    first = modes_out[0]
    ctx["step"](c.name)
    sw = lowest_sway(result, c, part, fine_axial, members, mof, ctx["limits"], ctx["bound"],
                     int(st.get("sway_search_modes", MAX_MODES)))
    ok, verdicts, extra, vnotes = verdicts_of(c, sw, st, ctx["storeys"], ctx["gate"], member_min)
    for m in modes_out:
        m["verdict"] = ("global sway mode: EN 1993-1-1 5.2.1(3) / 5.2.2" if m["mode"] == extra["sway_mode"]
                        else MEMBER_TEXT if extra["sway_mode"] is None or m["mode"] < extra["sway_mode"] else "")
    drift = _storey_drift(ctx, c, axial, extra["alpha_cr_sway"])
    entry.update({"modes": modes_out, "passed": ok, "verdicts": verdicts, **extra, "storey_drift": drift,
                  "governing_members": first["members_carrying"], "stiffen_first": first["stiffen_first"]})
    for r in rows[start:]:
        r.update(alpha_cr_sway=extra["alpha_cr_sway"], alpha_cr_sway_min=extra["alpha_cr_sway_min"])
    if close[0]:
        entry["notes"].append(f"alpha_cr is within {CLOSE:.0%} of another load factor: the modes of such a "
                              f"cluster mix when stiffness changes, so their sensitivities and stiffening "
                              f"advice are indicative")
    entry["notes"] += vnotes
    if drift and drift["alpha_cr_drift"] is not None:
        entry["notes"].append(f"storey-drift estimate ({storeydrift.CLAUSE}): alpha_cr = "
                              f"{drift['alpha_cr_drift']:.4g} (lowest storey; levels from {drift['levels_from']})")
        ratio = drift.get("ratio_to_eigenvalue")
        if extra["alpha_cr_sway"] is not None and ratio is not None and not DRIFT_AGREE[0] <= ratio <= DRIFT_AGREE[1]:
            entry["notes"].append(f"the storey-drift estimate is {ratio:.2f} x the eigenvalue alpha_cr,sway: outside "
                                  f"the {DRIFT_AGREE[0]:g}-{DRIFT_AGREE[1]:g} agreement usual for beam-and-column "
                                  f"frames, so this structure is outside the simple method's scope (for example "
                                  f"compressed rafters, bracing or storeys that do not sway as units); the "
                                  f"eigenvalue result governs")
    gov = first["members_carrying"]
    stiff = first["stiffen_first"]
    dtext = "-" if not drift or drift["alpha_cr_drift"] is None else f"{drift['alpha_cr_drift']:.4g}"
    return ok, (c.name, alpha, first["type"], _verdict_short(verdicts),
                ", ".join(str(x) for x in gov[:4]) + (" ..." if len(gov) > 4 else ""),
                str(stiff[0]["member"]) if stiff else "-", ok, sway_text(extra), dtext)


def _storey_drift(ctx, c, axial, alpha_sway):
    """EN 1993-1-1 5.2.1(4)B per storey with the solve's own K (None when no storeys or no K)."""
    result = ctx["result"]
    pencil = getattr(result, "pencil", None)
    levels, base, source = ctx["levels"]
    if pencil is None or len(levels) == 0:
        return None
    rows = storeydrift.storey_drift(result.model, axial, levels, base, pencil.solve_static, pencil.free,
                                    pencil.asm.n, result.constraints.planar_axis)
    return storeydrift.summary(rows, source, alpha_sway if alpha_sway is not None else c.alpha_cr)


def _imperfection(result, study, members, fy, mof, fine):
    imp = dict(study.get("imperfection", default={}) or {})
    for key in ("amplitude", "W", "fy", "gamma_M1", "alpha_ult_k"):
        if key in imp and not (math.isfinite(imp[key]) and imp[key] > 0):
            raise InputError(f"[imperfection] {key} must be a positive number, got {imp[key]}", source=study.source)
    if "e0" in imp and not (math.isfinite(imp["e0"]) and imp["e0"] >= 0):
        raise InputError(f"[imperfection] e0 must be >= 0, got {imp['e0']}", source=study.source)
    imperfection_errors(imp, result.model, study.source)
    ok_cases = [i for i, c in enumerate(result.cases) if c.status == "ok"]
    if not ok_cases:
        return ({"skipped": True, "note": "no load case has a buckling mode: no imperfect mesh written"}
                if imp else None), None
    if "case" in imp:
        names = [c.name for c in result.cases]
        if imp["case"] not in names:
            raise InputError(f"[imperfection] case = '{imp['case']}' is not a load case; cases: "
                             f"{', '.join(names)}", source=study.source)
        ci = names.index(imp["case"])
        if result.cases[ci].status != "ok":
            raise InputError(f"[imperfection] case '{imp['case']}' has no buckling mode", source=study.source)
    else:       # the governing case: the lowest alpha_cr (the first of equal ones)
        ci = min(ok_cases, key=lambda i: result.cases[i].alpha_cr)
    c = result.cases[ci]
    im = result.input
    axial = im.cases[[x.name for x in im.cases].index(c.name)].axial
    fine_axial = result.refined.fine_axial(axial)
    st = _settings(study)
    en = case_energies(result, c)
    chord = chord_work(fine, c.modes, fine_axial, mof, members.ends, members.length)
    part = participation(en, chord, mof, members.n, float(st.get("twist_limit", TWIST_LIMIT)),
                         float(st.get("sway_limit", SWAY_LIMIT)))
    if "mode" in imp:
        mi = int(imp["mode"]) - 1
        if not 0 <= mi < len(c.load_factors):
            raise InputError(f"[imperfection] mode = {mi + 1}: case '{c.name}' has modes "
                             f"1..{len(c.load_factors)}", source=study.source)
    else:   # the lowest mode that has a translational shape
        flex = [i for i, kind in enumerate(part.kinds) if kind != "torsional"]
        if not flex:
            return ({"case": c.name, "skipped": True,
                     "note": f"every computed mode of case '{c.name}' is torsional: a twist cannot be "
                             f"carried by point coordinates; no imperfect mesh written (set "
                             f"[imperfection] mode to force one)"}, None)
        mi = flex[0]
    eff = effective_lengths(result.model, members, axial, float(c.load_factors[mi]), part.bend_y[mi],
                            part.bend_z[mi], fy, float(st.get("negligible_compression", NEGLIGIBLE)),
                            result.constraints.planar_axis)
    info = scale_for(result, members, ci, mi, eff, part.share[mi], imp, fy, study.source)
    info["mode_type"] = part.kinds[mi]
    return info, (ci, mi, info["scale"])


def _design_rows(case, design, part, sens, ranks, members, cells) -> list:
    """One ``row_type`` "design" row per member, governed members by rank first, then member order."""
    out = []
    governed = np.flatnonzero(design.rank > 0)
    order = np.r_[governed[np.argsort(design.rank[governed])], np.flatnonzero(design.rank == 0)]
    for m in order:
        k = int(design.mode[m])
        if k < 0:
            out.append(_row(case, None, None, "", members, m, cells, design.eff.N_Ed[m], design.status[m],
                            row_type="design"))
            continue
        r = _row(case, None, float(design.alpha[m]), part.kinds[k], members, m, cells, design.eff.N_Ed[m],
                 design.status[m], design.eff, part.share[k, m], sens[k, m], ranks[k][m], row_type="design")
        r.update(governing_mode=k + 1, relative_share=_num(design.relative_share[m]),
                 design_rank=int(design.rank[m]))
        out.append(r)
    return out


def _put_fields(fields, suffix, cell_ids, members, design, share, sens, n_cells):
    eff = design.eff
    vals = {"N_Ed": eff.N_Ed, "N_cr": eff.N_cr, "L_cr_y": eff.L_cr_y, "L_cr_z": eff.L_cr_z,
            "L_cr_ratio_y": eff.ratio_y, "L_cr_ratio_z": eff.ratio_z, "slenderness": eff.slenderness,
            "governing_mode": np.where(design.mode >= 0, design.mode + 1.0, np.nan),
            "member_alpha": design.alpha, "design_rank": np.where(design.rank > 0, design.rank, np.nan),
            "energy_share": share, "sensitivity": sens}
    for name in CELL_FIELDS:
        a = np.full(n_cells, np.nan)
        a[cell_ids] = np.asarray(vals[name], float)[members.of_element]
        fields[name + suffix] = a


def _cells_text(members, cell_ids) -> list:
    order = np.argsort(members.of_element, kind="stable")
    split = np.cumsum(np.bincount(members.of_element, minlength=members.n))[:-1]
    return [" ".join(str(x) for x in np.unique(cell_ids[g])) for g in np.split(order, split)]


def _row(case, mode, lam, kind, members, m, cells, N, status, eff=None, share=None, sens=None, rank=None,
         row_type="mode"):
    r = {k: None for k in CSV_COLUMNS}
    r.update(case=case, row_type=row_type, mode=mode, load_factor=lam, mode_type=kind, member=int(members.label[m]),
             cells=cells[m], length=float(members.length[m]), status=str(status), N_Ed=float(N))
    if eff is not None:
        r.update(N_cr=_num(eff.N_cr[m]), L_cr_y=_num(eff.L_cr_y[m]), L_cr_z=_num(eff.L_cr_z[m]),
                 L_cr_ratio_y=_num(eff.ratio_y[m]), L_cr_ratio_z=_num(eff.ratio_z[m]), axis=str(eff.axis[m]),
                 L_cr=_num(eff.L_cr[m]), L_cr_ratio=_num(eff.ratio[m]), slenderness=_num(eff.slenderness[m]),
                 energy_share=_num(share), sensitivity=_num(sens), sensitivity_rank=int(rank))
    return r


def _verdict_short(verdicts) -> str:
    parts = []
    for v in verdicts:
        bounded = v.get("alpha_cr_min") is not None
        if v["check"] == "first_order_analysis":
            parts.append("1st order ok" if v["passes"] else "undecided" if bounded else "2nd order effects")
        elif v["check"] == "sway_amplification":
            parts.append(f"amp {'<= ' if bounded else ''}{v['amplifier']:.3f}"
                         if v["amplifier"] is not None and (v["alpha_cr"] is not None or bounded)
                         else ("" if v["passes"] or bounded else "2nd order analysis"))
        elif v["check"] == "storey_amplifier_B2":
            parts.append(f"B2[{v['storey']}] {v['B2']:.3f}" if v["B2"] is not None else f"B2[{v['storey']}] unstable")
    return "; ".join(p for p in parts if p)


