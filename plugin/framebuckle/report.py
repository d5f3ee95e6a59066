"""One self-contained HTML report of a buckling run, to send to a checker.

Everything is in the one file: pictures and plots are PNG embedded as base64
``data:`` URIs, the style sheet is inline, there is no script and no link to
the network.  Sections: job summary, cautions, model statistics, load factors
per case (with the verdict band of EN 1993-1-1:2005 5.2.1(3) / 5.2.2), the
governing members of each case's first mode, the picture of each case's first
mode, the plots, notes, cautions again.  The page is at most ~60 characters
wide per column of text on a laptop and prints to A4 (``@media print``: page
size, margins, no picture split across pages).

Governing members are the input cells that carry the largest share of the
elastic strain energy ``u_e^T K_e u_e / 2`` of the first mode (summed over
the sub-elements of each cell).  When the engineering check
(:mod:`framebuckle.check`) is installed, its members, verdicts and
effective-length ratios are used instead.
"""

from __future__ import annotations

import base64
import datetime as _dt
import html
from pathlib import Path

import numpy as np

from . import __version__
from .results import CAUTIONS

#: governing members listed per case
N_GOVERNING = 5

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


# ---------------------------------------------------------------- numbers


def energy_shares(result, case, k: int = 1) -> np.ndarray:
    """Share of mode ``k``'s elastic strain energy in every input element, shape (e_input,)."""
    from .elements import element_dofs, element_matrices
    c = result.case(case)
    fine = result.fine
    Ke, _, _ = element_matrices(fine)
    u = c.modes[k - 1].reshape(-1)[element_dofs(fine)]            # (e_fine, 12)
    energy = 0.5 * np.einsum("ei,eij,ej->e", u, Ke, u)
    per = np.bincount(result.refined.element_map, weights=energy, minlength=result.model.n_elements)
    tot = per.sum()
    return per / tot if tot > 0 else per


def model_stats(result) -> list[tuple[str, str]]:
    s = result.summary()["model"]
    f = result.model
    L = f.lengths()
    ext = np.ptp(f.nodes, axis=0)
    units = result.input.units or {}
    lu = f" {units['length']}" if units.get("length") else ""
    rows = [("input points", s["nodes"]),
            ("members (input line elements)", f"{s['elements']} ({int((~f.bar).sum())} beams, "
                                               f"{int(f.bar.sum())} pin-ended bars)"),
            ("total member length", f"{L.sum():.4g}{lu}"),
            ("extent X x Y x Z", " x ".join(f"{v:.4g}" for v in ext) + lu),
            ("analysis points / elements", f"{s['fine_nodes']} / {s['fine_elements']} "
                                           f"(sub-division {result.settings.get('subdivide')})"),
            ("degrees of freedom (free)", f"{s['dofs']} ({s['free_dofs']})"),
            ("rotations restrained automatically", s["auto_restrained_rotations"]),
            ("planar analysis", s["planar"] or "no (3D)"),
            ("load cases", len(result.cases)),
            ("units", ", ".join(f"{k} {v}" for k, v in units.items() if v) or "as in the input file")]
    return [(a, str(b)) for a, b in rows]


def _check(result, study):
    """The engineering check if that stage is installed, else None."""
    try:
        from .check import run_check
    except ImportError:
        return None
    return run_check(result, study)


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
    if gov:
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
      + ("<th>code checks</th><th>mode type</th>" if check else "") + "</tr></thead><tbody>")
    ctab = {row[0]: row for row in (check.table if check else [])}
    thresholds = np.array([3.0, 10.0, 15.0])
    for c in result.cases:
        a = c.alpha_cr
        band = "" if a is None else (f'<span class="band" style="background:'
                                     f'{BAND_COLOURS[int(np.searchsorted(thresholds, a, side="right"))]}"></span>')
        more = ", ".join(_fmt(x) for x in c.load_factors[1:]) or "-"
        w(f"<tr><td>{_e(c.name)}</td><td class=\"num\">{_fmt(a)}</td><td>{_e(more)}</td>"
          f"<td>{band}{_e(verdict_band(a) if a is not None else c.message())}</td>")
        if check:
            row = ctab.get(c.name)
            w(f"<td>{_e(row[3] if row else '-')} ({'pass' if row and row[6] else 'FAIL'})</td>"
              f"<td>{_e(row[2] if row else '-')}</td>")
        w("</tr>")
    w("</tbody></table>")

    w('<h2 id="governing">Governing members</h2>')
    if check:
        w("<p>Members carrying most of each case's first-mode strain energy (from the engineering check).</p><ul>")
        for row in check.table:
            w(f"<li><b>{_e(row[0])}</b>: members {_e(row[4])}; stiffen first: {_e(row[5])}</li>")
        w("</ul>")
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


def _cautions(w):
    w('<div class="caution"><b>Cautions</b><ul>')
    for c in CAUTIONS:
        w(f"<li>{_e(c)}</li>")
    w("</ul></div>")


# ---------------------------------------------------------------- files


def make_report(result, out_dir, stem: str | None = None, study=None, force: bool = True,
                window=(1000, 750), progress=None, skipped: list | None = None) -> Path:
    """Render the pictures and plots, assemble and write ``<stem>.report.html``; return its path.

    When no off-screen window can be made (:func:`framebuckle.render.gl_probe`) the report is
    written without the mode pictures, says so, and the reason is appended to ``skipped``.
    """
    from . import plots as pl
    from . import render
    from .progress import Progress
    from .shapes import from_result
    from .write import output_stem, prepare_dir, write_text
    out = prepare_dir(Path(out_dir))
    stem = stem or output_stem(result.input.source)
    from .errors import OutputError
    from .outputs import check_target
    target = out / f"{stem}.report.html"
    protect = [result.input.source] if result.input.source and not result.input.source.startswith("<") else []
    check_target(target, force, protect)       # before any drawing
    check = _check(result, study)
    ms = from_result(result)
    with_modes = [c for c in result.cases if c.alpha_cr is not None]
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
    with (progress or Progress(len(with_modes) + 2, "report")) as bar:
        for c in with_modes:
            img = render.render_mode(ms, c.name, 1, scale=None, window=window, return_img=True)
            pictures[c.name] = _png(img)
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
    write_text(target, build_html(result, pictures, figs, check, no_pictures=no_pictures), True, protect)
    return target


def _png(img: np.ndarray) -> bytes:
    import io

    from PIL import Image
    buf = io.BytesIO()
    Image.fromarray(img).save(buf, format="PNG", optimize=True)
    return buf.getvalue()


def _member_plot(result, check):
    """Effective-length ratio per member (engineering check) or first-mode energy share per cell."""
    from . import plots as pl
    found = [c for c in result.cases if c.alpha_cr is not None]
    if not found:
        return None
    gov = min(found, key=lambda c: c.alpha_cr)
    if check:
        rows = [r for r in check.rows if r.get("case") == gov.name and r.get("mode") == 1
                and r.get("L_cr_ratio") is not None]
        if rows:
            fig = pl.member_plot([f"member {r['member']}" for r in rows], [r["L_cr_ratio"] for r in rows],
                                 "L_cr / L (effective-length ratio)",
                                 f"effective-length ratio per member, case {gov.name}, mode 1",
                                 reference=1.0, reference_label="L_cr = L")
            return ("Effective-length ratio per member", pl.png_bytes(fig),
                    f"L_cr / L of the compressed members for the governing case {gov.name} "
                    f"(alpha_cr = {gov.alpha_cr:.4g}).")
    share = energy_shares(result, gov.name)
    fig = pl.member_plot([f"cell {int(i)}" for i in result.input.cell_ids], 100 * share,
                         "share of the first mode's strain energy (%)",
                         f"participation per input cell, case {gov.name}, mode 1")
    return ("Participation per member", pl.png_bytes(fig),
            f"Share of the elastic strain energy of the first mode of the governing case {gov.name} "
            f"(alpha_cr = {gov.alpha_cr:.4g}) in each input cell: the members that buckle.")
