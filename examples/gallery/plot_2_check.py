"""
Engineering check: verdicts and the member table
================================================

Run ``framebuckle check`` on the workshop sample (two-bay steel workshop, pinned bases) with the
study file of the worked example (S355, imperfection by EN 1993-1-1:2005 Eq. (5.10)), print the
check table with the code verdicts and their clauses, and show the members' design values from
``workshop_portal.members.csv``.
"""

import csv
import json
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

import matplotlib.pyplot as plt

HERE = Path(__file__).resolve().parent if "__file__" in globals() else Path.cwd()
ROOT = HERE.parents[1]
SAMPLE = ROOT / "sample_meshes" / "workshop_portal.vtu"
STUDY = ROOT / "examples" / "workshop_portal.check.toml"

# %%
# The check table
# ---------------
# The command exits 0 when every load case passes, 1 when a case fails and 2 on bad input, so it
# can gate a pipeline after every linear run.

out = Path(tempfile.mkdtemp(prefix="framebuckle_gallery_"))
run = subprocess.run([sys.executable, "-m", "framebuckle", "check", str(SAMPLE), "--study", str(STUDY),
                      "--out", str(out)], capture_output=True, text=True)
table = [line for line in run.stdout.splitlines() if not line.startswith(("note", "wrote"))]
print("\n".join(table))
print("exit code:", run.returncode)
assert run.returncode in (0, 1), run.stderr

# %%
# Verdicts with their clauses
# ---------------------------
# The summary (``workshop_portal.summary.json``) holds every verdict with the clause it applies.

def num(text):
    """A CSV or JSON value as a number (empty or null where a value does not apply)."""
    return float("nan") if text in ("", None) else float(text)


summary = json.loads((out / "workshop_portal.summary.json").read_text())
for case in summary["cases"]:
    print(f"{case['name']}: alpha_cr = {num(case['alpha_cr']):.2f}, "
          f"alpha_cr,sway = {num(case['alpha_cr_sway']):.2f}, "
          f"{'pass' if case['passed'] else 'FAIL'}")
    for v in case["verdicts"]:
        print(f"  {v['clause']}: {v['text']}")

# %%
# Design values per member
# ------------------------
# One design row per compressed member and case: the member's critical factor
# ``alpha_m = N_cr / |N_Ed|`` from its governing mode, the effective length ratio about the axis that
# mode bends and the slenderness (with fy = 355 MPa from the study file). Lowest first.

with open(out / "workshop_portal.members.csv", newline="") as f:
    rows = [r for r in csv.DictReader(f) if r["case"] == "gravity" and r["row_type"] == "design"
            and r["design_rank"]]
rows.sort(key=lambda r: int(r["design_rank"]))
print(f"{'rank':>4} {'member':>6} {'mode':>4} {'alpha_m':>8} {'N_Ed [kN]':>10} {'L_cr/L':>7} "
      f"{'axis':>4} {'slenderness':>11}")
for r in rows[:10]:
    print(f"{r['design_rank']:>4} {r['member']:>6} {r['governing_mode']:>4} {num(r['load_factor']):8.2f} "
          f"{num(r['N_Ed']) / 1e3:10.1f} {num(r['L_cr_ratio']):7.3f} {r['axis']:>4} "
          f"{num(r['slenderness']):11.3f}")

fig, ax = plt.subplots(figsize=(8, 3.5))
ranked = rows[:20]
ax.bar([r["member"] for r in ranked], [num(r["load_factor"]) for r in ranked], color="#3b528b")
ax.axhline(10, color="#b2182b", lw=1, ls="--", label="EN 1993-1-1 5.2.1(3): 10")
ax.set_xlabel("member (lowest critical factor first)")
ax.set_ylabel("alpha_m = N_cr / |N_Ed|")
ax.set_title("workshop_portal, case gravity: members by their governing mode")
ax.legend(loc="upper left")
fig.tight_layout()

shutil.rmtree(out)

# %%
# The inner columns of the two middle frames (members 11 and 16) govern: they carry the
# largest share of the sway mode and are the ones to stiffen first. alpha_cr is an elastic
# indicator, not a resistance: check every result against the governing local design code; a
# qualified engineer reviews it.
