"""One self-contained HTML report of a buckling run, to send to a checker.

Everything is in the one file: pictures and plots are PNG embedded as base64
``data:`` URIs, the style sheet is inline, there is no script and no link to
the network.  Sections: job summary, cautions, model statistics, load factors
per case (with the verdict band of EN 1993-1-1:2005 5.2.1(3) / 5.2.2), the
governing members of each case, the picture of each case's first mode, the plots,
notes, cautions again.  The page is at most ~60 characters
wide per column of text on a laptop and prints to A4 (``@media print``: page
size, margins, no picture split across pages).

Governing members are the input cells that carry the largest share of the
elastic strain energy ``u_e^T K_e u_e / 2`` of the first mode (summed over
the sub-elements of each cell).  When the engineering check
(:mod:`framebuckle.engineering.check`) is installed, its members and verdicts are used instead, and members
are ranked by what governs them: the member critical factor N_cr / |N_Ed| from each member's
governing mode (the lowest mode in which it takes part), lowest first; not by the largest
L_cr / L, which a lightly loaded member reaches in a mode it takes no part in.
"""

from __future__ import annotations

import base64
import datetime as _dt
import html
import time
from pathlib import Path

import numpy as np

from .. import __version__
from ..pipeline.results import CAUTIONS
from .reportnumbers import energy_shares, model_stats

#: governing members listed per case
N_GOVERNING = 5
#: members of the design table listed per case (engineering check)
N_DESIGN = 10

CSS = """
:root { color-scheme: light; }
body { font-family: system-ui, -apple-system, "Segoe UI", Roboto, "DejaVu Sans", sans-serif;
       font-size: 15px; line-height: 1.45; color: #1a1a1a; background: #fff;
       max-width: 64rem; margin: 0 auto; padding: 1.2rem 1.5rem 3rem; }
h1 { font-size: 1.6rem; margin: 0.2rem 0 0.3rem; }
h2 { font-size: 1.2rem; margin: 1.8rem 0 0.5rem; border-bottom: 2px solid #0072B2; padding-bottom: 0.15rem; }
h3 { font-size: 1.02rem; margin: 1.1rem 0 0.3rem; }
p, li { max-width: 48rem; }
.meta { color: #444; font-size: 0.9rem; }
.caution { border: 2px solid #D55E00; background: #fff6ef; padding: 0.5rem 1rem; margin: 1rem 0; }
.caution ul { margin: 0.3rem 0; padding-left: 1.2rem; }
table { border-collapse: collapse; margin: 0.4rem 0 0.8rem; font-size: 0.9rem; }
th, td { border: 1px solid #bbb; padding: 0.25rem 0.55rem; text-align: left; vertical-align: top; }
th { background: #eef3f8; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
.band { display: inline-block; width: 0.8rem; height: 0.8rem; border: 1px solid #333;
        vertical-align: -0.1rem; margin-right: 0.35rem; }
figure { margin: 0.8rem 0 1.2rem; }
figure img { max-width: 100%; height: auto; border: 1px solid #ccc; }
figcaption { font-size: 0.85rem; color: #333; }
.note { font-size: 0.9rem; }
@media (max-width: 700px) { body { padding: 0.6rem; font-size: 14px; } }
@media print {
  @page { size: A4; margin: 14mm 12mm 16mm; }
  body { max-width: none; padding: 0; font-size: 10pt; }
  h2 { page-break-after: avoid; break-after: avoid; }
  figure, table, .caution { page-break-inside: avoid; break-inside: avoid; }
  figure img { max-height: 120mm; width: auto; max-width: 100%; }
  a { color: inherit; text-decoration: none; }
}
"""


def _e(x) -> str:
    return html.escape(str(x), quote=True)


def _img(png: bytes, alt: str) -> str:
    return (f'<img alt="{_e(alt)}" src="data:image/png;base64,'
            f'{base64.b64encode(png).decode("ascii")}">')


def _fmt(x, digits=4) -> str:
    return "-" if x is None or not np.isfinite(x) else f"{x:.{digits}g}"


def verdict_band(alpha, thresholds=(3.0, 10.0, 15.0)) -> str:
    """EN 1993-1-1:2005 5.2.1(3) / 5.2.2(5)-(6) band of a load factor, in words."""
    from .plots import BAND_LABELS
    if alpha is None or not np.isfinite(alpha):
        return "no compressive instability"
    i = int(np.searchsorted(np.asarray(thresholds), alpha, side="right"))
    return BAND_LABELS[i].format(*thresholds)


def _check_stage():
    """The engineering check's ``run_check`` if that stage is installed, else None."""
    try:
        from ..engineering.check import run_check
    except ImportError:
        return None
    return run_check


def _check(result, study, progress=None):
    """The engineering check if that stage is installed, else None."""
    run_check = _check_stage()
    return None if run_check is None else run_check(result, study, progress=progress)


# ---------------------------------------------------------------- document


def build_html(result, pictures: dict, plots: list, check=None, when: str | None = None,
               no_pictures: str | None = None) -> str:
    """The report as one HTML string.

    ``pictures``: case name -> PNG bytes of its first mode; ``plots``: (title, PNG bytes, caption);
    ``no_pictures``: why the mode pictures are missing (said in the report), if they are.
    """
    from .plots import BAND_COLOURS
    s = result.summary()
    src = result.input.source
    when = when or _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    name = Path(src).name if src and not src.startswith("<") else "model"
    alphas = [(c.name, c.alpha_cr) for c in result.cases]
    found = [(n, a) for n, a in alphas if a is not None]
    gov = min(found, key=lambda t: t[1]) if found else None
    out = []
    w = out.append
    w("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">")
    w('<meta name="viewport" content="width=device-width, initial-scale=1">')
    w(f"<title>Buckling report - {_e(name)}</title><style>{CSS}</style></head><body>")
    w(f"<h1>Elastic buckling report: {_e(name)}</h1>")
    w(f'<p class="meta">input <code>{_e(src)}</code> &middot; {when} &middot; framebuckle {__version__} '
      f"&middot; {result.settings.get('modes')} modes per case, sub-division "
      f"{result.settings.get('subdivide')}, eigensolver {_e(result.settings.get('eigensolver'))}</p>")

    w('<h2 id="summary">Summary</h2>')
    sw = _sway_governing(check)
    if gov and sw:              # the engineering check: verdicts from the global sway mode
        name_sw, val, bounded = sw
        w(f"<p>The lowest elastic critical load factor is alpha_cr = {gov[1]:.4g} in load case "
          f"<b>{_e(gov[0])}</b>. The lowest global sway mode gives <b>alpha_cr,sway "
          f"{'&gt;=' if bounded else '='} {val:.4g}</b> in load case <b>{_e(name_sw)}</b>: "
          f"{_e(verdict_band(val))} (EN 1993-1-1:2005, 5.2.1(3) and 5.2.2)"
          f"{' (a certified lower bound: no sway mode below it)' if bounded else ''}. Lower modes are member "
          f"buckling, covered by member design with the effective lengths. "
          f"{len(found)} of {len(alphas)} load case(s) have a buckling load factor.</p>")
    elif gov:
        w(f"<p>The lowest elastic critical load factor is <b>alpha_cr = {gov[1]:.4g}</b> in load case "
          f"<b>{_e(gov[0])}</b>: {_e(verdict_band(gov[1]))} (EN 1993-1-1:2005, 5.2.1(3) and 5.2.2). "
          f"{len(found)} of {len(alphas)} load case(s) have a buckling load factor.</p>")
    else:
        w("<p>No load case has a positive buckling load factor (no member in compression, or the "
          "compressed members do not buckle).</p>")
    _cautions(w)

    w('<h2 id="model">Model</h2><table>')
    for a, b in model_stats(result):
        w(f"<tr><th>{_e(a)}</th><td>{_e(b)}</td></tr>")
    w("</table>")

    w('<h2 id="load-factors">Load factors</h2>')
    w('<table class="load-factors"><thead><tr><th>case</th><th>alpha_cr</th><th>further load factors</th>'
      '<th>verdict band (EN 1993-1-1:2005 5.2.1(3), 5.2.2)</th>'
      + ("<th>code checks</th><th>mode type</th><th>alpha_cr,sway (global sway mode)</th>"
         "<th>storey-drift estimate (EN 1993-1-1:2005 5.2.1(4)B)</th>" if check else "") + "</tr></thead><tbody>")
    ctab = {row[0]: row for row in (check.table if check else [])}
    centry = {e["name"]: e for e in (check.summary["cases"] if check else [])}
    thresholds = np.array([3.0, 10.0, 15.0])
    for c in result.cases:
        a = c.alpha_cr
        if check:              # the 5.2.1(3) / 5.2.2 band of the global sway mode (or its bound)
            e = centry.get(c.name, {})
            a = e.get("alpha_cr_sway") or e.get("alpha_cr_sway_min") or a
        band = "" if a is None else (f'<span class="band" style="background:'
                                     f'{BAND_COLOURS[int(np.searchsorted(thresholds, a, side="right"))]}"></span>')
        more = ", ".join(_fmt(x) for x in c.load_factors[1:]) or "-"
        w(f"<tr><td>{_e(c.name)}</td><td class=\"num\">{_fmt(c.alpha_cr)}</td><td>{_e(more)}</td>"
          f"<td>{band}{_e(verdict_band(a) if a is not None else c.message())}</td>")
        if check:
            row = ctab.get(c.name)
            w(f"<td>{_e(row[3] if row else '-')} ({'pass' if row and row[6] else 'FAIL'})</td>"
              f"<td>{_e(row[2] if row else '-')}</td><td class=\"num\">{_e(row[7] if row else '-')}</td>"
              f"<td class=\"num\">{_e(row[8] if row else '-')}</td>")
        w("</tr>")
    w("</tbody></table>")

    w('<h2 id="governing">Governing members</h2>')
    if check:
        _design_table(w, check)
        below = [(e["name"], m) for e in check.summary["cases"] for m in e.get("member_buckling", [])]
        if below:
            w("<p>Modes below the global sway mode: member buckling, to be covered by member design "
              "with the effective lengths (not a failure of EN 1993-1-1:2005 5.2.1(3)).</p><table><thead>"
              "<tr><th>case</th><th>mode</th><th>load factor</th><th>type</th><th>members</th><th>verdict</th>"
              "</tr></thead><tbody>")
            for name, m in below:
                w(f"<tr><td>{_e(name)}</td><td class=\"num\">{m['mode']}</td><td class=\"num\">"
                  f"{_fmt(m['load_factor'])}</td><td>{_e(m['type'])}</td><td>"
                  f"{_e(', '.join(str(x) for x in m['members_carrying'][:8]))}</td><td>{_e(m['verdict'])}</td></tr>")
            w("</tbody></table>")
    else:
        w(f"<p>Input cells carrying the largest share of the elastic strain energy of each case's first "
          f"mode (the members that take part in the buckling), {N_GOVERNING} per case. Cell numbers "
          f"count all cells of the input file in order.</p>")
        w("<table><thead><tr><th>case</th><th>cell</th><th>energy share</th><th>axial force N_Ed</th>"
          "<th>length</th></tr></thead><tbody>")
        for c in result.cases:
            if c.alpha_cr is None:
                w(f"<tr><td>{_e(c.name)}</td><td colspan=\"4\">{_e(c.message())}</td></tr>")
                continue
            share = energy_shares(result, c.name)
            axial = next(x.axial for x in result.input.cases if x.name == c.name)
            L = result.model.lengths()
            for j in np.argsort(-share, kind="stable")[:N_GOVERNING]:
                w(f"<tr><td>{_e(c.name)}</td><td class=\"num\">{int(result.input.cell_ids[j])}</td>"
                  f"<td class=\"num\">{100 * share[j]:.1f} %</td><td class=\"num\">{axial[j]:.6g}</td>"
                  f"<td class=\"num\">{L[j]:.4g}</td></tr>")
        w("</tbody></table>")

    w('<h2 id="modes">First mode of each case</h2>')
    w("<p>Undeformed structure thin grey; buckled shape as tubes coloured by displacement magnitude "
      "(mode normalised to a largest node translation of 1, drawn at about 10 % of the model size). "
      "Members are drawn as the cubic curves of the analysis, so a member bowing between its joints "
      "shows.</p>")
    if no_pictures:
        w(f'<p class="caution" id="no-pictures"><b>No pictures of the modes in this report:</b> '
          f"{_e(no_pictures)}. The load factors, members and plots above and below are complete.</p>")
    for c in result.cases:
        png = pictures.get(c.name)
        if png is None:
            continue
        w(f"<figure>{_img(png, f'first buckling mode of case {c.name}')}<figcaption>case "
          f"{_e(c.name)}, mode 1, alpha_cr = {_fmt(c.alpha_cr)}</figcaption></figure>")

    if plots:
        w('<h2 id="plots">Plots</h2>')
        for t, png, cap in plots:
            w(f"<h3>{_e(t)}</h3><figure>{_img(png, t)}<figcaption>{_e(cap)}</figcaption></figure>")

    notes = list(s["notes"]) + [f"[{c['name']}] {n}" for c in s["cases"] for n in c["notes"]]
    if notes:
        w('<h2 id="notes">Notes</h2><ul class="note">')
        for n in notes:
            w(f"<li>{_e(n)}</li>")
        w("</ul>")
    w('<h2 id="cautions">Cautions</h2>')
    _cautions(w)
    w("</body></html>\n")
    return "\n".join(out)


def _design_table(w, check):
    """Members ranked by their critical factor N_cr / |N_Ed| (governing mode of each member)."""
    cases = check.summary["cases"]
    share = next((c["design"]["member_share"] for c in cases if "design" in c), None)
    w("<p>Per case, the compressed members ranked by what governs them: the member critical factor "
      "alpha_m = N_cr / |N_Ed| from the member's governing mode, the lowest computed mode in which it "
      "takes part (its strain-energy share at least "
      f"{_fmt(share, 3)} of the mode's largest member share), lowest first. N_cr and L_cr of a member come "
      f"from its own governing mode, not from mode 1. {N_DESIGN} members per case; all of them are in "
      "the members CSV (rows with <code>row_type</code> = design).</p>")
    w('<table class="design"><thead><tr><th>case</th><th>rank</th><th>member</th><th>governing mode</th>'
      "<th>alpha_m = N_cr / |N_Ed|</th><th>N_Ed</th><th>N_cr</th><th>L_cr / L (axis)</th>"
      "<th>relative share</th></tr></thead><tbody>")
    types = {}
    for c in cases:
        types[c["name"]] = {m["mode"]: m["type"] for m in c.get("modes", [])}
        d = c.get("design") or {"members": [], "not_governed": []}
        if not d["members"]:
            w(f"<tr><td>{_e(c['name'])}</td><td colspan=\"8\">no member has a governing mode</td></tr>")
        for x in d["members"][:N_DESIGN]:
            kind = types[c["name"]].get(x["governing_mode"], "")
            ratio = "-" if x["L_cr_ratio"] is None else f"{x['L_cr_ratio']:.4g} ({x['axis']})"
            w(f"<tr><td>{_e(c['name'])}</td><td class=\"num\">{x['rank']}</td><td class=\"num\">{x['member']}</td>"
              f"<td>{x['governing_mode']} ({_e(kind)})</td><td class=\"num\">{_fmt(x['alpha'])}</td>"
              f"<td class=\"num\">{_fmt(x['N_Ed'], 6)}</td><td class=\"num\">{_fmt(x['N_cr'])}</td>"
              f"<td class=\"num\">{_e(ratio)}</td><td class=\"num\">{x['relative_share']:.3g}</td></tr>")
        if d["not_governed"]:
            ng = d["not_governed"]
            w(f"<tr><td>{_e(c['name'])}</td><td colspan=\"8\">not governed by any mode found ({len(ng)} "
              f"member(s): {_e(', '.join(str(v) for v in ng[:12]))}{' ...' if len(ng) > 12 else ''}): "
              f"ask for more modes</td></tr>")
    w("</tbody></table>")


def _sway_governing(check):
    """(case, alpha_cr,sway or its lower bound, bounded) of the case with the lowest one, or None."""
    if not check:
        return None
    vals = [(e["name"], e["alpha_cr_sway"], False) if e.get("alpha_cr_sway") is not None else
            (e["name"], e["alpha_cr_sway_min"], True) for e in check.summary["cases"]
            if e.get("alpha_cr_sway") is not None or e.get("alpha_cr_sway_min") is not None]
    return min(vals, key=lambda t: t[1]) if vals else None


def _cautions(w):
    w('<div class="caution"><b>Cautions</b><ul>')
    for c in CAUTIONS:
        w(f"<li>{_e(c)}</li>")
    w("</ul></div>")


# ---------------------------------------------------------------- files


def make_report(result, out_dir, stem: str | None = None, study=None, force: bool = True,
                window=(1000, 750), progress=None, skipped: list | None = None,
                timings: dict | None = None) -> Path:
    """Render the pictures and plots, assemble and write ``<stem>.report.html``; return its path.

    ``timings``: a dict given here gets the seconds of ``check``, each of the ``pictures``,
    the ``plots`` and the ``write``.

    When no off-screen window can be made (:func:`framebuckle.pictures.render.gl_probe`) the report is
    written without the mode pictures, says so, and the reason is appended to ``skipped``.
    """
    from . import plots as pl
    from . import render
    from ..io.progress import Progress
    from .shapes import from_result
    from ..io.write import output_stem, prepare_dir, write_text
    out = prepare_dir(Path(out_dir))
    stem = stem or output_stem(result.input.source)
    from ..errors import OutputError
    from ..io.outputs import check_target
    target = out / f"{stem}.report.html"
    protect = [result.input.source] if result.input.source and not result.input.source.startswith("<") else []
    check_target(target, force, protect)       # before any drawing
    with_modes = [c for c in result.cases if c.alpha_cr is not None]
    # steps: each case checked (2) + imperfection, the GL probe, one picture per case, 2 plots, the file
    n_check = 2 * len(result.cases) + 1 if _check_stage() else 0
    total = n_check + (1 + len(with_modes) if with_modes else 0) + 3
    tm = timings if timings is not None else {}
    clock = [time.perf_counter()]

    def lap():
        t, clock[0] = clock[0], time.perf_counter()
        return clock[0] - t
    with (progress or Progress(total, "report")) as bar:
        check = _check(result, study, progress=bar)
        tm["check"] = lap()
        ms = from_result(result)
        pictures = {}
        no_pictures = None
        if with_modes:
            try:
                render.gl_probe()
            except OutputError as exc:
                no_pictures = str(exc).split(": ", 1)[-1]
                with_modes = []
                if skipped is not None:
                    skipped.append(no_pictures)
            bar.step("off-screen window")
        tm["pictures"] = []
        lap()
        for c in with_modes:
            img = render.render_mode(ms, c.name, 1, scale=None, window=window, return_img=True)
            pictures[c.name] = _png(img)
            tm["pictures"].append(lap())
            bar.step(f"picture {c.name}")
        figs = [("alpha_cr per load case",
                 pl.png_bytes(pl.alpha_plot([c.name for c in result.cases], [c.alpha_cr for c in result.cases],
                                            [c.message() for c in result.cases])),
                 "Bars coloured by verdict band; dashed lines at alpha_cr = 3, 10 and 15.")]
        bar.step("plots")
        member = _member_plot(result, check)
        if member:
            figs.append(member)
        bar.step("plots")
        tm["plots"] = lap()
        write_text(target, build_html(result, pictures, figs, check, no_pictures=no_pictures), True, protect)
        tm["write"] = lap()
        bar.step(target.name)
    return target


def _png(img: np.ndarray) -> bytes:
    import io

    from PIL import Image
    buf = io.BytesIO()
    Image.fromarray(img).save(buf, format="PNG", optimize=True)
    return buf.getvalue()


def _member_plot(result, check):
    """Member critical factor per member, lowest first (engineering check), or first-mode energy
    share per cell."""
    from . import plots as pl
    found = [c for c in result.cases if c.alpha_cr is not None]
    if not found:
        return None
    gov = min(found, key=lambda c: c.alpha_cr)
    if check:
        entry = next(c for c in check.summary["cases"] if c["name"] == gov.name)
        ms = (entry.get("design") or {}).get("members", [])
        if ms:
            fig = pl.member_plot(
                [f"member {x['member']} (mode {x['governing_mode']})" for x in ms], [x["alpha"] for x in ms],
                "alpha_m = N_cr / |N_Ed| (member critical factor, governing mode of each member)",
                f"members by what governs them, case {gov.name}, lowest first",
                reference=gov.alpha_cr, reference_label="alpha_cr", ascending=True,
                notes=["" if x["L_cr_ratio"] is None else f"L_cr/L {x['L_cr_ratio']:.3g} ({x['axis']})"
                       for x in ms])
            return ("Members by critical factor", pl.png_bytes(fig),
                    f"Compressed members of the governing case {gov.name} (alpha_cr = {gov.alpha_cr:.4g}) "
                    f"ranked by their critical factor N_cr / |N_Ed|, from each member's own governing mode "
                    f"(the lowest mode in which it takes part), lowest first; L_cr / L and the axis beside "
                    f"each bar.")
    share = energy_shares(result, gov.name)
    fig = pl.member_plot([f"cell {int(i)}" for i in result.input.cell_ids], 100 * share,
                         "share of the first mode's strain energy (%)",
                         f"participation per input cell, case {gov.name}, mode 1")
    return ("Participation per member", pl.png_bytes(fig),
            f"Share of the elastic strain energy of the first mode of the governing case {gov.name} "
            f"(alpha_cr = {gov.alpha_cr:.4g}) in each input cell: the members that buckle.")
