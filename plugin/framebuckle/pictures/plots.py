"""Plots with matplotlib (no display: the Agg canvas, no global backend state).

* :func:`alpha_plot` - alpha_cr of every load case on a log axis, with the verdict
  thresholds 3, 10 and 15 drawn (EN 1993-1-1:2005, 5.2.1(3): first-order elastic
  analysis allowed at alpha_cr >= 10, plastic at >= 15; 5.2.2(5): below 3 a
  second-order analysis is needed, between 3 and 10 sway effects may be
  amplified by 1 / (1 - 1/alpha_cr)).
* :func:`member_plot` - one value per member (critical factor, axial force,
  energy share ...) for one case, largest first or (``ascending``) smallest first.

Colours are from the Okabe-Ito colour-blind-safe palette; every band is also
labelled in text, so the plot reads in grey print.
"""

from __future__ import annotations

import io

import numpy as np

#: (threshold, label) drawn on the alpha_cr plot
THRESHOLDS = (3.0, 10.0, 15.0)
#: what each band means (EN 1993-1-1:2005, 5.2.1(3) and 5.2.2(5)-(6))
BAND_LABELS = ("below {0:g}: second-order analysis needed",
               "{0:g} to {1:g}: first-order with sway amplification 1/(1 - 1/alpha_cr)",
               "{1:g} to {2:g}: first-order elastic analysis allowed",
               "{2:g} and above: first-order plastic analysis allowed")
#: band colours, Okabe-Ito: vermillion, orange, sky blue, bluish green
BAND_COLOURS = ("#D55E00", "#E69F00", "#56B4E9", "#009E73")


def _figure(w, h):
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure
    fig = Figure(figsize=(w, h), dpi=110, layout="constrained")
    FigureCanvasAgg(fig)
    return fig


def png_bytes(fig) -> bytes:
    buf = io.BytesIO()
    fig.savefig(buf, format="png", facecolor="white")
    return buf.getvalue()


def save(fig, path):
    from ..io.write import atomic_path
    with atomic_path(path) as tmp:
        tmp.write_bytes(png_bytes(fig))
    return path


def band_colour(alpha: float, thresholds=(3.0, 10.0, 15.0)) -> str:
    return BAND_COLOURS[int(np.searchsorted(np.asarray(thresholds), alpha, side="right"))]


def alpha_plot(names, alphas, notes=None, thresholds=THRESHOLDS):
    """Horizontal bars of alpha_cr per case; ``None`` = no buckling (note shown instead)."""
    names = [str(n) for n in names]
    notes = notes or [""] * len(names)
    n = len(names)
    fig = _figure(7.0, 1.9 + 0.38 * max(n, 1))
    ax = fig.add_subplot()
    vals = [a for a in alphas if a is not None and np.isfinite(a) and a > 0]
    lo = min([1.0] + [v / 1.5 for v in vals])
    hi = max([30.0] + [v * 2.0 for v in vals])
    ts = list(thresholds)
    y = np.arange(n)[::-1]
    for yi, name, a, note in zip(y, names, alphas, notes):
        if a is None or not np.isfinite(a) or a <= 0:
            ax.text(lo * 1.05, yi, note or "no buckling", va="center", fontsize=8, style="italic")
            continue
        ax.barh(yi, a - lo, left=lo, color=band_colour(a, ts), edgecolor="black", linewidth=0.5,
                height=0.6)
        ax.text(a * 1.04, yi, f"{a:.3g}", va="center", fontsize=8)
    for t in ts:
        ax.axvline(t, color="black", linestyle=(0, (4, 3)), linewidth=0.9)
    ax.set_xscale("log")
    ax.set_xlim(lo, hi)
    from matplotlib.patches import Patch
    from matplotlib.ticker import FixedLocator, NullFormatter
    ticks = sorted({v for v in (1, 2, 3, 5, 10, 15, 20, 30, 50, 100, 200, 500, 1000, 1e4, 1e5, *ts)
                    if lo <= v <= hi})
    ax.xaxis.set_major_locator(FixedLocator(ticks))
    ax.set_xticklabels([f"{v:g}" for v in ticks], fontsize=8)
    ax.xaxis.set_minor_formatter(NullFormatter())
    handles = [Patch(facecolor=c, edgecolor="black", linewidth=0.5, label=lab.format(*ts))
               for c, lab in zip(BAND_COLOURS, BAND_LABELS)]
    fig.legend(handles=handles, loc="outside lower center", ncols=2, fontsize=7, frameon=False)
    ax.set_ylim(-0.7, n - 0.3)
    ax.set_yticks(y, names)
    ax.set_xlabel("alpha_cr (elastic critical load factor, log scale)")
    ax.set_title("alpha_cr per load case (thresholds: EN 1993-1-1:2005, 5.2.1(3) and 5.2.2)",
                 fontsize=9)
    ax.grid(axis="x", which="both", color="#dddddd", linewidth=0.5)
    ax.set_axisbelow(True)
    return fig


def member_plot(labels, values, xlabel: str, title: str, top: int = 25, reference: float | None = None,
                reference_label: str = "", ascending: bool = False, notes=None):
    """Horizontal bars of one value per member, the ``top`` largest (``ascending``: smallest)
    first; ``notes`` (one text per member) is written after each bar's value."""
    labels = [str(x) for x in labels]
    values = np.asarray(values, float)
    notes = [""] * len(labels) if notes is None else [str(x) for x in notes]
    ok = np.isfinite(values)
    idx = np.flatnonzero(ok)[np.argsort(values[ok] if ascending else -values[ok], kind="stable")][:top]
    n = len(idx)
    fig = _figure(7.0, 1.3 + 0.26 * max(n, 1))
    ax = fig.add_subplot()
    y = np.arange(n)[::-1]
    ax.barh(y, values[idx], color="#0072B2", edgecolor="black", linewidth=0.4, height=0.65)
    for yi, v, i in zip(y, values[idx], idx):
        ax.text(v, yi, f" {v:.3g}" + (f"  {notes[i]}" if notes[i] else ""), va="center", fontsize=7)
    if reference is not None:
        ax.axvline(reference, color="black", linestyle=(0, (4, 3)), linewidth=0.9)
        if reference_label:
            ax.text(reference, n - 0.4, " " + reference_label, va="top", fontsize=7)
    ax.set_yticks(y, [labels[i] for i in idx], fontsize=7)
    ax.set_ylim(-0.7, max(n, 1) - 0.3)
    ax.set_xlabel(xlabel)
    if values.size and ok.sum() > n:
        title += f" ({n} {'smallest' if ascending else 'largest'} of {int(ok.sum())})"
    ax.set_title(title, fontsize=9)
    ax.grid(axis="x", color="#dddddd", linewidth=0.5)
    ax.set_axisbelow(True)
    ax.margins(x=0.35 if any(notes) else 0.12)
    return fig
