"""Markdown table of benchmarks/results.jsonl (the last record of each size)."""

import json
import re
import sys
from pathlib import Path

rows, baselines = {}, {}
for line in open(Path(__file__).with_name("results.jsonl")):
    r = json.loads(line)
    rows[r["size"]] = r
    if "baseline" in r:
        baselines[r["size"]] = r["baseline"]       # the baseline is run once per size
for size, b in baselines.items():
    rows[size].setdefault("baseline", b)


def floor_of(r):
    out = {}
    for k in ("floor_splu", "floor_mkl", "floor_pardiso"):
        if k in r and r[k]["status"] == 0:
            m = re.search(r"factorization=([\d.]+)", r[k]["output"])
            out[k.split("_")[1]] = (r[k]["wall_s"], float(m[1]) if m else None, r[k]["peak_MiB"])
    return out


def tools_of(r):
    """(backend, record, stages) of every tool run of a record (older records: scipy only)."""
    out = []
    for key in [k for k in r if k == "tool" or k.startswith("tool_")]:
        t = r[key]
        st = t.get("stages") or (r.get("stages", {}) if key == "tool" else {})
        bk = st.get("backend") or t.get("backend") or "scipy"
        out.append((bk, t, st))
    return out


def baseline_of(r):
    if "baseline" not in r:
        return None
    o = r["baseline"]["output"]
    a = re.search(r"baseline assembly ([\d.]+) s", o)
    e = re.search(r"baseline eigensolution ([\d.]+) s", o)
    x = re.search(r"extrapolated ([\d.]+) s", o)
    if a and e:
        return float(a[1]) + float(e[1]), "measured"
    if x:
        return float(x[1]), "assembly extrapolated, eigensolution not reached"
    return None


hdr = ("| size | DOFs | backend | tool process [s] | read / assembly / factor / case 1 / case 2 / write [s] | "
       "tool peak [MiB] (process tree) | floor splu [s] (factor) | floor mkl [s] (factor) | tool / floor | "
       "1 case / floor | extra case / first | baseline [s] | baseline / tool | baseline / 1 case |")
print(hdr)
print("|" + "|".join(["---"] * (hdr.count("|") - 1)) + "|")
for size in sorted(rows):
    r = rows[size]
    fl = floor_of(r)
    best = min(v[0] for v in fl.values()) if fl else None      # the fastest floor available
    bl = baseline_of(r)
    for bk, t, st in tools_of(r):
        cases = st.get("cases", [])
        one = t["wall_s"] - (cases[1] if len(cases) > 1 else 0.0)
        extra = (cases[1] / one) if len(cases) > 1 else None
        f = lambda x, d=1: "-" if x is None else f"{x:.{d}f}"
        stage = (f"{f(st.get('read'), 2)} / {f(st.get('assembly'), 2)} / {f(st.get('factorization'), 2)} / "
                 f"{' / '.join(f(c, 2) for c in cases)} / {f(st.get('write'), 2)}") if st else "failed"
        peak = f"{t['peak_MiB']:.0f}" + (f" ({t['tree_peak_MiB']:.0f})" if t.get("tree_peak_MiB") else "")
        fcol = lambda k: f"{fl[k][0]:.1f} ({fl[k][1]:.2f})" if k in fl else "-"
        print(f"| {size:.0e} | {r.get('dofs', '-')} | {bk} | {t['wall_s']:.1f} | {stage} | {peak} | "
              + f"{fcol('splu')} | {fcol('mkl')} | "
              + f"{f(t['wall_s'] / best if best else None, 2)} | {f(one / best if best else None, 2)} | "
              + f"{f(extra, 2)} | " + (f"{bl[0]:.1f} ({bl[1]})" if bl else "-") + " | "
              + (f"{bl[0] / t['wall_s']:.1f}" if bl else "-") + " | "
              + (f"{bl[0] / one:.1f}" if bl else "-") + " |")
m = next(iter(rows.values()))["machine"]
print(f"\nMachine: {m['nproc']} cores, {m['memory_GiB']} GiB, {m['cpu']}, Python {m['python']}.")
