"""Benchmark driver (run by hand, not in CI).

For each size (DOFs after the default sub-division) it writes a building frame
(``building.py``), then runs, each as its own process and one at a time:

* the tool: ``python -m framebuckle solve FILE --modes 10 --timings`` (2 load cases);
* with ``--backends scipy,mkl`` the tool once per sparse backend (``FRAMEBUCKLE_SOLVER``;
  records ``tool`` for the first, ``tool_<name>`` for the others);
* the floor (``floor.py``) with scipy SuperLU, with MKL PARDISO (the package's binding) when
  its library loads, and with pypardiso when installed;
* the hand-written baseline (``baseline.py``) when ``--baseline`` is given.

Wall time and peak resident memory of each process (``os.wait4``) are appended as
JSON lines to ``benchmarks/results.jsonl`` with the machine and its load.

Usage: python benchmarks/run.py 1e4 3e4 1e5 [--baseline] [--data DIR]
"""

import argparse
import json
import os
import platform
import re
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
PLUGIN = HERE.parent / "plugin"
sys.path.insert(0, str(HERE))
sys.path.insert(0, str(PLUGIN))


def machine():
    cpu = ""
    try:
        for line in open("/proc/cpuinfo"):
            if line.startswith("model name"):
                cpu = line.split(":", 1)[1].strip()
                break
    except OSError:
        pass
    mem = os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_PHYS_PAGES") / 2**30
    return {"nproc": os.cpu_count(), "memory_GiB": round(mem, 1), "cpu": cpu or platform.processor(),
            "python": platform.python_version()}


def _tree_rss_MiB(root: int) -> float:
    """Resident memory of a process and all its descendants now (Linux /proc), MiB."""
    parent, rss = {}, {}
    for d in os.listdir("/proc"):
        if not d.isdigit():
            continue
        try:
            with open(f"/proc/{d}/stat") as fh:
                parent[int(d)] = int(fh.read().rsplit(")", 1)[1].split()[1])
            with open(f"/proc/{d}/statm") as fh:
                rss[int(d)] = int(fh.read().split()[1]) * os.sysconf("SC_PAGE_SIZE")
        except (OSError, IndexError, ValueError):
            continue
    tree, todo = set(), [root]
    while todo:
        q = todo.pop()
        tree.add(q)
        todo += [c for c, pp in parent.items() if pp == q and c not in tree]
    return sum(rss.get(q, 0) for q in tree) / 2**20


class _TreePeak(threading.Thread):
    """Samples the whole process tree's resident memory every 0.2 s (the tool may run a
    worker process beside itself; wait4's ru_maxrss gives the largest single process)."""

    def __init__(self, pid):
        super().__init__(daemon=True)
        self.pid, self.peak, self.done = pid, 0.0, threading.Event()

    def run(self):
        while not self.done.wait(0.2):
            try:
                self.peak = max(self.peak, _tree_rss_MiB(self.pid))
            except OSError:
                pass


def measure(cmd, timeout=None, env=None):
    env = dict(os.environ, **(env or {}),
               PYTHONPATH=str(PLUGIN) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    t = time.perf_counter()
    load0 = os.getloadavg()[0]
    with tempfile.TemporaryFile("w+") as out:
        p = subprocess.Popen(cmd, stdout=out, stderr=subprocess.STDOUT, env=env, text=True)
        sampler = _TreePeak(p.pid)
        sampler.start()
        try:
            _, status, ru = os.wait4(p.pid, 0)
        except KeyboardInterrupt:
            p.kill()
            raise
        finally:
            sampler.done.set()
        wall = time.perf_counter() - t
        out.seek(0)
        text = out.read()
    return {"cmd": " ".join(map(str, cmd)), "wall_s": wall, "cpu_s": ru.ru_utime + ru.ru_stime,
            "peak_MiB": ru.ru_maxrss / 1024, "tree_peak_MiB": sampler.peak, "status": status, "load_before": load0,
            "load_after": os.getloadavg()[0], "output": text[-3000:]}


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("sizes", nargs="+", type=float)
    ap.add_argument("--baseline", action="store_true")
    ap.add_argument("--baseline-limit", type=float, default=1200.0)
    ap.add_argument("--data", default=str(HERE / "_data"))
    ap.add_argument("--no-pardiso", action="store_true")
    ap.add_argument("--backends", default="auto", help="comma-separated: scipy, mkl, auto")
    args = ap.parse_args()
    import building
    data = Path(args.data)
    data.mkdir(parents=True, exist_ok=True)
    info = machine()
    res_file = HERE / "results.jsonl"
    for size in args.sizes:
        f = data / f"building_{size:.0e}.vtu"
        if not f.exists():
            building.write(size, str(f))
        rec = {"size": size, "file": str(f), "machine": info, "date": time.strftime("%Y-%m-%d %H:%M")}
        for ib, bk in enumerate(args.backends.split(",")):
            key = "tool" if ib == 0 else f"tool_{bk}"
            with tempfile.TemporaryDirectory() as out:
                rec[key] = measure([sys.executable, "-m", "framebuckle", "solve", str(f), "--modes", "10",
                                    "--out", out, "--force", "--timings"], env={"FRAMEBUCKLE_SOLVER": bk})
            rec[key]["backend"] = bk
            m = re.search(r"timings \[s\]: read ([\d.]+), assembly ([\d.]+), factorization ([\d.]+) "
                          r"\((\w+)\), cases \[([\d., ]*)\], write ([\d.]+)", rec[key]["output"])
            if m:
                rec[key]["stages"] = {"read": float(m[1]), "assembly": float(m[2]),
                                      "factorization": float(m[3]), "backend": m[4],
                                      "cases": [float(x) for x in m[5].split(",") if x.strip()],
                                      "write": float(m[6])}
        rec["stages"] = rec["tool"].get("stages", {})
        d = re.search(r"(\d+) DOFs after sub-division \((\d+) free\)", rec["tool"]["output"])
        if d:
            rec["dofs"], rec["free"] = int(d[1]), int(d[2])
        rec["floor_splu"] = measure([sys.executable, str(HERE / "floor.py"), str(f), "splu"])
        from framebuckle.solver import pardiso as _pd
        if _pd.available():
            rec["floor_mkl"] = measure([sys.executable, str(HERE / "floor.py"), str(f), "mkl"])
        try:
            import pypardiso  # noqa: F401
            have_pardiso = not args.no_pardiso
        except ImportError:
            have_pardiso = False
        if have_pardiso:
            rec["floor_pardiso"] = measure([sys.executable, str(HERE / "floor.py"), str(f), "pardiso"])
        if args.baseline:
            rec["baseline"] = measure([sys.executable, str(HERE / "baseline.py"), str(f), "10",
                                       str(args.baseline_limit)])
        with open(res_file, "a") as fh:
            fh.write(json.dumps(rec) + "\n")
        floor = min(rec[k]["wall_s"] for k in ("floor_splu", "floor_mkl", "floor_pardiso") if k in rec)
        st = rec.get("stages", {})
        print(f"{size:.0e}: dofs {rec.get('dofs')} tool {rec['tool']['wall_s']:.1f} s "
              f"({rec['tool']['peak_MiB']:.0f} MiB) floor {floor:.1f} s -> {rec['tool']['wall_s'] / floor:.2f} x; "
              f"stages {st}", flush=True)
        for key in [k for k in rec if k.startswith("tool_")]:
            print(f"    {key}: {rec[key]['wall_s']:.1f} s ({rec[key]['peak_MiB']:.0f} MiB) -> "
                  f"{rec[key]['wall_s'] / floor:.2f} x floor; stages {rec[key].get('stages')}", flush=True)


if __name__ == "__main__":
    main()
