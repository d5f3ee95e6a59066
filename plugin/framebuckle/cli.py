"""Command line: ``framebuckle solve INPUT [--study F] [--modes N] [--subdivide M] [--out DIR]``.

Exit codes: 0 done, 2 bad input or a model that cannot be solved (message, no traceback).
"""

from __future__ import annotations

import argparse
import signal
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
    return p


def _common(s):
    s.add_argument("input", help="mesh file (VTU, XDMF, Gmsh MSH, or any format meshio reads)")
    s.add_argument("--study", help="study file (TOML)")
    s.add_argument("--modes", type=_positive_int, help="load factors per case (default 4)")
    s.add_argument("--subdivide", type=_positive_int, help="sub-elements per beam cell (default 4)")
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
    for w in getattr(result, "warnings", ()):
        print(f"framebuckle: warning: {w}", file=sys.stderr)
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


def _terminate(signum, frame):
    raise KeyboardInterrupt   # SIGTERM: unwind like Ctrl-C so temporary outputs are removed


def main(argv=None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        signal.signal(signal.SIGTERM, _terminate)
    except ValueError:        # not in the main thread (embedded use): keep the default
        pass
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
