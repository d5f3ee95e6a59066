"""Check and report at scale (run by hand, not in CI).

For each size (DOFs after the default sub-division) it writes the benchmark building
(``building.py``, 2 load cases) and runs, each as its own process and one at a time,
``python -m framebuckle solve|check|report FILE --modes 10 --timings`` and ``draw``: a process
that only reads the solve's ``<stem>.modes_fine.vtu`` and draws the first mode of every case
(``render_mode``, as the report does), so the cost of a picture is seen without the solve's.
Wall time, CPU time and peak resident memory of each process
(``os.wait4``; the whole process tree sampled every 0.2 s) are printed as a table and
appended as JSON lines to ``benchmarks/results_pictures.jsonl`` with the machine, its
load before and after (``os.getloadavg``), the git commit and a free label.

Pictures need an off-screen window: without a display, the tool chooses VTK's EGL (or
OSMesa) window itself (``framebuckle.pictures.render.prepare_offscreen``).

``--plugin DIR`` runs another checkout's code (e.g. ``--plugin ../main/plugin --label before``).

Usage: python benchmarks/pictures.py 1e4 3e4 1e5 [--label after] [--commands solve,check,report,draw]
"""

import argparse
import json
import re
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

import run  # noqa: E402
from run import machine, measure  # noqa: E402

COMMANDS = ("solve", "check", "report", "draw")
#: the ``draw`` process: read the fine modes, draw mode 1 of every case, print the seconds of each
DRAW = """
import sys, time
from framebuckle.pictures import render, shapes
ms = shapes.load(sys.argv[1])
render.gl_probe()
for c in ms.cases:
    if len(c.load_factors):
        t = time.perf_counter()
        render.png_bytes(render.render_mode(ms, c.name, 1, window=(1000, 750), return_img=True))
        print(f"picture {c.name} {time.perf_counter() - t:.3f}", flush=True)
"""


def commit() -> str:
    try:
        return subprocess.run(["git", "-C", str(HERE), "rev-parse", "--short", "HEAD"],
                              capture_output=True, text=True).stdout.strip()
    except OSError:
        return ""


def main(argv=None):
    ap = argparse.ArgumentParser()
    ap.add_argument("sizes", nargs="+", type=float)
    ap.add_argument("--label", default="", help="free text kept with the record (e.g. before/after)")
    ap.add_argument("--commands", default=",".join(COMMANDS), help="comma-separated: solve,check,report,draw")
    ap.add_argument("--modes", type=int, default=10)
    ap.add_argument("--data", default=str(HERE / "_data"))
    ap.add_argument("--results", default=str(HERE / "results_pictures.jsonl"))
    ap.add_argument("--plugin", default=str(run.PLUGIN), help="the framebuckle code to run (its plugin/ folder)")
    args = ap.parse_args(argv)
    run.PLUGIN = Path(args.plugin).resolve()
    import building
    data = Path(args.data)
    data.mkdir(parents=True, exist_ok=True)
    info, rev = machine(), commit()
    rows = []
    for size in args.sizes:
        f = data / f"building_{size:.0e}.vtu"
        if not f.exists():
            building.write(size, str(f))
        rec = {"size": size, "file": str(f), "label": args.label, "commit": rev, "plugin": str(run.PLUGIN),
               "machine": info,
               "date": time.strftime("%Y-%m-%d %H:%M")}
        keep = tempfile.TemporaryDirectory()        # the solve's outputs, for ``draw``
        for cmd in args.commands.split(","):
            if cmd == "draw":
                fine = Path(keep.name) / f"{f.stem}.modes_fine.vtu"
                if not fine.exists():
                    continue
                rec[cmd] = measure([sys.executable, "-c", DRAW, str(fine)])
            else:
                with tempfile.TemporaryDirectory() as tmp:
                    out = keep.name if cmd == "solve" else tmp
                    rec[cmd] = measure([sys.executable, "-m", "framebuckle", cmd, str(f), "--modes",
                                        str(args.modes), "--out", out, "--force", "--timings"])
            text = rec[cmd]["output"]
            m = re.findall(r"^timings \[s\]: (.*)$", text, re.M)
            rec[cmd]["timings"] = m[-1] if m else ""
            rec[cmd]["pictures_s"] = [float(x) for x in re.findall(r"^picture \S+ ([\d.]+)$", text, re.M)]
            r = rec[cmd]
            ok = r["status"] == 0 or (cmd == "check" and r["status"] == 256)   # exit 1 = a case fails
            rows.append((size, cmd, r["wall_s"], r["cpu_s"], r["peak_MiB"], r["tree_peak_MiB"],
                         r["load_before"], "ok" if ok else f"status {r['status']}"))
            print(f"{size:8.0e} {cmd:7s} wall {r['wall_s']:7.2f} s  cpu {r['cpu_s']:7.2f} s  peak "
                  f"{r['peak_MiB']:7.0f} MiB (tree {r['tree_peak_MiB']:.0f})  load {r['load_before']:.2f}  "
                  f"{rows[-1][-1]}", flush=True)
            if r["timings"] or r["pictures_s"]:
                print(f"         {r['timings'] or 'pictures ' + str(r['pictures_s'])}", flush=True)
            if not ok:
                print(r["output"][-1500:], file=sys.stderr)
        keep.cleanup()
        with open(args.results, "a") as fh:
            fh.write(json.dumps(rec) + "\n")
    return 0


if __name__ == "__main__":
    sys.exit(main())
