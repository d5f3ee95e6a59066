"""Command line: ``framebuckle solve INPUT [--study F] [--modes N] [--subdivide M] [--out DIR]``.

Exit codes: 0 done, 2 bad input or a model that cannot be solved (message, no traceback).
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from . import __version__
from .errors import FrameBuckleError
from .results import CAUTIONS


def _positive_int(text):
    try:
        v = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a whole number, got {text!r}") from None
    if v < 1:
        raise argparse.ArgumentTypeError(f"must be at least 1, got {v}")
    return v


def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(prog="framebuckle",
                                description="Elastic critical load factors and buckling modes of frames "
                                            "and trusses from a linear run's line-element mesh.")
    p.add_argument("--version", action="version", version=f"framebuckle {__version__}")
    sub = p.add_subparsers(dest="command", required=True)
    s = sub.add_parser("solve", help="load factors and modes of every load case")
    _common(s)
    s.set_defaults(func=cmd_solve)
    b = sub.add_parser("batch", help="many files (or globs) and all their cases on a Dask cluster: "
                                     "one combined table (CSV and JSON)")
    b.add_argument("inputs", nargs="+", help="mesh files or glob patterns (quote them)")
    b.add_argument("--study", help="study file (TOML) used for every file")
    b.add_argument("--modes", type=_positive_int, help="load factors per case (default 4)")
    b.add_argument("--subdivide", type=_positive_int, help="sub-elements per beam cell (default 4)")
    b.add_argument("--out", default="framebuckle_out", help="output folder (default ./framebuckle_out)")
    b.add_argument("--scheduler", help="address of an existing Dask scheduler (default: a local "
                                       "cluster of worker processes on this machine)")
    b.add_argument("--workers", type=_positive_int, help="worker processes of the local cluster")
    b.add_argument("--force", action="store_true", help="replace an existing table")
    b.set_defaults(func=cmd_batch)
    return p


def _common(s):
    s.add_argument("input", help="mesh file (VTU, XDMF, Gmsh MSH, or any format meshio reads)")
    s.add_argument("--study", help="study file (TOML)")
    s.add_argument("--modes", type=_positive_int, help="load factors per case (default 4)")
    s.add_argument("--subdivide", type=_positive_int, help="sub-elements per beam cell (default 4)")
    s.add_argument("--out", default="framebuckle_out", help="output folder (default ./framebuckle_out)")
    s.add_argument("--force", action="store_true", help="replace existing outputs")
    s.add_argument("--timings", action="store_true", help="print the time of each stage")


def _fmt_table(result) -> str:
    rows = []
    for c in result.cases:
        lf = "  ".join(f"{x:10.4g}" for x in c.load_factors) if len(c.load_factors) else c.message()
        rows.append((c.name, lf))
    w = max([len("case")] + [len(r[0]) for r in rows])
    out = [f"{'case':<{w}}  load factors (alpha_cr first)", "-" * (w + 40)]
    out += [f"{n:<{w}}  {lf}" for n, lf in rows]
    return "\n".join(out)


def print_result(result, paths, stream=sys.stdout):
    s = result.summary()
    m = s["model"]
    print(f"{result.input.source}: {m['nodes']} points, {m['elements']} members, "
          f"{m['dofs']} DOFs after sub-division ({m['free_dofs']} free)", file=stream)
    for n in s["notes"]:
        print(f"note: {n}", file=stream)
    print(_fmt_table(result), file=stream)
    for c in result.cases:
        for n in c.notes:
            print(f"note [{c.name}]: {n}", file=stream)
    if paths:
        print("wrote: " + ", ".join(str(p) for p in paths.values()), file=stream)
    print("caution: " + " ".join(CAUTIONS), file=stream)


def cmd_solve(args) -> int:
    import time
    from .api import solve
    from .progress import Progress
    from .write import write_result
    prog = Progress()
    try:
        prog.stage("reading")
        result = solve(args.input, args.study, modes=args.modes, subdivide=args.subdivide,
                       progress=prog)
        prog.stage("writing")
        t = time.perf_counter()
        paths = write_result(result, Path(args.out), force=args.force)
        result.timings["write"] = time.perf_counter() - t
    finally:
        prog.close()
    print_result(result, paths)
    if getattr(args, "timings", False):
        tm = result.timings
        cases = ", ".join(f"{x:.3f}" for x in tm.get("cases", []))
        print(f"timings [s]: read {tm.get('read', 0):.3f}, assembly {tm.get('assembly', 0):.3f}, "
              f"factorization {tm.get('factorization', 0):.3f}, cases [{cases}], "
              f"write {tm.get('write', 0):.3f}")
    return 0


def cmd_batch(args) -> int:
    from .batch import run_batch, write_table
    from .progress import Progress
    from .write import prepare_dir
    from .errors import OutputError
    out = prepare_dir(Path(args.out))
    if not args.force and ((out / "batch.csv").exists() or (out / "batch.json").exists()):
        raise OutputError("output exists; use --force to replace it", source=str(out / "batch.csv"))
    prog = Progress()
    try:
        prog.stage("starting the cluster" if not args.scheduler else f"connecting to {args.scheduler}")
        rows = run_batch(args.inputs, args.study, scheduler=args.scheduler, workers=args.workers,
                         modes=args.modes, subdivide=args.subdivide, progress=prog)
    finally:
        prog.close()
    paths = write_table(rows, out, force=True)
    w = max([4] + [len(str(r["file"])) for r in rows])
    print(f"{'file':<{w}}  {'case':<16} {'alpha_cr':>10}  {'verdict':<8} governing member / error")
    for r in rows:
        a = "" if r["alpha_cr"] is None else f"{r['alpha_cr']:10.4g}"
        tail = r["error"] if r["status"] == "error" else (
            "" if r["governing_member"] is None else str(r["governing_member"]))
        print(f"{r['file']:<{w}}  {r['case']:<16} {a:>10}  {str(r['verdict']):<8} {tail}")
    failed = sorted({r["file"] for r in rows if r["status"] == "error"})
    print("wrote: " + ", ".join(str(p) for p in paths.values()))
    print("caution: " + " ".join(CAUTIONS))
    if failed:
        print(f"framebuckle: error: {len(failed)} of {len({r['file'] for r in rows})} file(s) failed "
              f"(see the error column)", file=sys.stderr)
        return 2
    return 0


def main(argv=None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        return int(args.func(args) or 0)
    except FrameBuckleError as exc:
        print(f"framebuckle: error: {exc}", file=sys.stderr)
        return exc.exit_code
    except KeyboardInterrupt:
        print("framebuckle: interrupted; no partial output was left", file=sys.stderr)
        return 130


if __name__ == "__main__":
    sys.exit(main())
