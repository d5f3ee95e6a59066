"""Command line: ``framebuckle solve INPUT ...`` and ``framebuckle check INPUT ... [--min-alpha X] [--json]``.

Exit codes: 0 done (check: every case passes), 1 (check only) a case fails, 2 bad input or a model
that cannot be solved (message, no traceback).
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
    c = sub.add_parser("check", help="load factors, effective lengths, participation, stiffening advice, "
                                     "code verdicts and an imperfection; exit 1 when a case fails")
    _common(c)
    c.add_argument("--min-alpha", type=_positive_float, dest="min_alpha",
                   help="alpha_cr every case must reach (default: EN 1993-1-1 5.2.1(3) limit, 10 elastic)")
    c.add_argument("--json", action="store_true", help="print the summary as JSON on stdout")
    c.set_defaults(func=cmd_check)
    return p


def _positive_float(text):
    try:
        v = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a number, got {text!r}") from None
    if not v > 0 or v == float("inf"):
        raise argparse.ArgumentTypeError(f"must be a positive number, got {text}")
    return v


def _common(s):
    s.add_argument("input", help="mesh file (VTU, XDMF, Gmsh MSH, or any format meshio reads)")
    s.add_argument("--study", help="study file (TOML)")
    s.add_argument("--modes", type=_positive_int, help="load factors per case (default 4)")
    s.add_argument("--subdivide", type=_positive_int, help="sub-elements per beam cell (default 8)")
    s.add_argument("--out", default="framebuckle_out", help="output folder (default ./framebuckle_out)")
    s.add_argument("--force", action="store_true", help="replace existing outputs")


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
    from .api import solve
    from .write import write_result
    result = solve(args.input, args.study, modes=args.modes, subdivide=args.subdivide)
    paths = write_result(result, Path(args.out), force=args.force)
    print_result(result, paths)
    return 0


def cmd_check(args) -> int:
    """Exit 0 when every case passes, 1 when any fails (2 on bad input, from main)."""
    import json

    from .api import _as_study, solve
    from .check import format_table, run_check, write_check
    from .write import _jsonable
    study = _as_study(args.study)
    result = solve(args.input, study, modes=args.modes, subdivide=args.subdivide)
    report = run_check(result, study, args.min_alpha)
    paths = write_check(result, report, Path(args.out), force=args.force)
    if args.json:
        json.dump(report.summary, sys.stdout, indent=2, default=_jsonable)
        print()
        return report.exit_code
    s = report.summary
    m = s["model"]
    print(f"{result.input.source}: {m['nodes']} points, {m['elements']} members "
          f"({s['check']['members']['count']} grouped), {m['dofs']} DOFs after sub-division")
    for n in s["notes"]:
        print(f"note: {n}")
    print(format_table(report))
    for c in s["cases"]:
        for n in c["notes"]:
            print(f"note [{c['name']}]: {n}")
    imp = s["check"]["imperfection"]
    if imp and imp.get("skipped"):
        print(f"imperfection: {imp['note']}")
    elif imp:
        print(f"imperfection: case {imp['case']} mode {imp['mode']}, largest translation "
              f"{imp['amplitude']:.4g} ({imp['formula']})")
    print(f"minimum alpha_cr {s['check']['min_alpha']:g} ({s['check']['min_alpha_from']}): "
          f"{'all cases pass' if report.passed else 'FAILED'}")
    print("wrote: " + ", ".join(str(p) for p in paths.values()))
    print("caution: " + " ".join(CAUTIONS))
    return report.exit_code


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
