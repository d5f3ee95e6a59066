"""Command line: ``framebuckle solve INPUT ...`` and ``framebuckle check INPUT ... [--min-alpha X] [--json]``.

Exit codes: 0 done (check: every case passes), 1 (check only) a case fails, 2 bad input or a model
that cannot be solved (message, no traceback).
"""

from __future__ import annotations

import argparse
import os
import signal
import sys
from pathlib import Path

from . import __version__
from .errors import FrameBuckleError
from .pipeline.results import CAUTIONS


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
    _combinations_option(b)
    b.set_defaults(func=cmd_batch)
    c = sub.add_parser("check", help="load factors, effective lengths, participation, stiffening advice, "
                                     "code verdicts and an imperfection; exit 1 when a case fails")
    _common(c)
    c.add_argument("--min-alpha", type=_positive_float, dest="min_alpha",
                   help="alpha_cr every case must reach (default: EN 1993-1-1 5.2.1(3) limit, 10 elastic)")
    c.add_argument("--json", action="store_true", help="print the summary as JSON on stdout")
    c.set_defaults(func=cmd_check)
    _picture_commands(sub)
    return p


def _positive_float(text):
    try:
        v = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a number, got {text!r}") from None
    if not v > 0 or v == float("inf"):
        raise argparse.ArgumentTypeError(f"must be a positive number, got {text}")
    return v


def _picture_commands(sub):
    """``render``, ``view`` and ``report`` (pictures and the HTML report)."""
    r = sub.add_parser("render", help="PNG pictures (and GIF animations) of buckling modes, off-screen")
    _common(r)
    r.set_defaults(out="framebuckle_out")
    r.add_argument("--case", action="append", help="load case to draw (repeatable; default: every case)")
    r.add_argument("--mode", type=_positive_int, default=1, help="mode number, 1 = alpha_cr (default 1)")
    r.add_argument("--scale", type=float, help="shape scale: drawn displacement of the largest node "
                                                "(model units; default 10 %% of the model size)")
    r.add_argument("--animate", action="store_true", help="also write a looping GIF of the mode")
    r.add_argument("--window", type=_window, default=(1200, 900), metavar="WxH",
                   help="picture size in pixels (default 1200x900)")
    r.set_defaults(func=cmd_render)
    v = sub.add_parser("view", help="interactive window: mode, case and scale sliders (needs a display)")
    _common(v)
    v.add_argument("--case", help="load case shown first")
    v.add_argument("--mode", type=_positive_int, default=1, help="mode shown first (default 1)")
    v.set_defaults(func=cmd_view)
    h = sub.add_parser("report", help="one self-contained HTML report (pictures embedded)")
    _common(h)
    h.set_defaults(func=cmd_report)


def _window(text):
    try:
        w, h = (int(x) for x in text.lower().split("x"))
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected WIDTHxHEIGHT in pixels, e.g. 800x600, got {text!r}") from None
    if not (64 <= w <= 8192 and 64 <= h <= 8192):
        raise argparse.ArgumentTypeError(f"picture size must be 64 to 8192 pixels each way, got {text!r}")
    return w, h


def cmd_render(args) -> int:
    from .errors import InputError
    from .io.outputs import folder_lock
    from .io.progress import Progress
    from .pictures.render import gl_probe, render_all
    from .pictures.viewer import load_modes, result_stem
    if args.scale is not None and not (args.scale >= 0 and args.scale < float("inf")):
        raise InputError(f"--scale must be a finite number >= 0, got {args.scale}")
    gl_probe()                      # no GL: the documented error now, not a crash after the solve
    with folder_lock(args.out, args.force) as out:
        with Progress(0, "solve") as bar:
            ms, result = load_modes(args.input, args.study, args.modes, args.subdivide, progress=bar)
        stem = result_stem(args.input)
        cases = args.case or [c.name for c in ms.cases if len(c.load_factors)]
        if not cases:
            raise InputError("no load case has a buckling mode to draw: "
                             + "; ".join(f"{c.name}: {c.message}" for c in ms.cases), source=ms.source)
        paths = render_all(ms, out, stem, cases, (args.mode,), args.scale, args.animate, args.window,
                           force=args.force, protect=[args.input])
    for c in cases:
        case = ms.case(c)
        print(f"{c}: mode {args.mode}, load factor {case.load_factors[args.mode - 1]:.4g} "
              f"(alpha_cr {case.load_factors[0]:.4g})")
    print("wrote: " + ", ".join(str(p) for p in paths))
    print("caution: " + " ".join(CAUTIONS))
    return 0


def cmd_view(args) -> int:
    from .pictures.render import has_display
    if not has_display():
        print("framebuckle: error: no display (DISPLAY and WAYLAND_DISPLAY are not set), so no window "
              f"can open; write pictures instead: framebuckle render {args.input} --out DIR",
              file=sys.stderr)
        return 2
    from .pictures.viewer import build_viewer, load_modes
    ms, _ = load_modes(args.input, args.study, args.modes, args.subdivide)
    plotter, _ = build_viewer(ms, args.case, args.mode)
    print("caution: " + " ".join(CAUTIONS))
    plotter.show()
    return 0


def cmd_report(args) -> int:
    import time
    from .pipeline.api import solve
    from .io.outputs import folder_lock
    from .io.progress import Progress
    from .pictures.report import make_report
    from .io.study import load_study
    from .io.write import output_stem
    study = (load_study(args.study) if isinstance(args.study, str) else args.study) if args.study else None
    with folder_lock(args.out, args.force) as out:
        _precheck(out, [f"{output_stem(args.input)}.report.html"], args)
        t = time.perf_counter()
        with Progress(0, "solve") as bar:
            result = solve(args.input, study, modes=args.modes, subdivide=args.subdivide,
                           sturm_worker=True, progress=bar)
        skipped, tm = [], {"solve": time.perf_counter() - t}
        path = make_report(result, out, study=study, force=args.force, skipped=skipped, timings=tm)
    print_result(result, {"report": path})
    if getattr(args, "timings", False):
        print(f"timings [s]: solve {tm['solve']:.3f}, check {tm.get('check', 0):.3f}, pictures "
              f"[{', '.join(f'{x:.3f}' for x in tm.get('pictures', []))}], plots {tm.get('plots', 0):.3f}, "
              f"write {tm.get('write', 0):.3f}")
    for why in skipped:
        print(f"framebuckle: warning: the report was written without pictures: {why}", file=sys.stderr)
    return 0


def _precheck(out, names, args):
    """Refuse unusable output targets before the solve (they are checked again when written)."""
    from .io.outputs import check_target
    for n in names:
        check_target(out / n, args.force, [args.input])


def _common(s):
    s.add_argument("input", help="mesh file (VTU, XDMF, Gmsh MSH, or any format meshio reads)")
    s.add_argument("--study", help="study file (TOML)")
    s.add_argument("--modes", type=_positive_int, help="load factors per case (default 4)")
    s.add_argument("--subdivide", type=_positive_int, help="sub-elements per beam cell (default 8)")
    s.add_argument("--out", default="framebuckle_out", help="output folder (default ./framebuckle_out)")
    s.add_argument("--force", action="store_true", help="replace existing outputs")
    s.add_argument("--timings", action="store_true", help="print the time of each stage")
    _combinations_option(s)


def _combinations_option(s):
    s.add_argument("--combinations", metavar="FILE.csv",
                   help="table of load combinations: a name column, then one factor column per basic "
                        "case (also [analysis] combinations_file)")


def _fmt_table(result) -> str:
    rows = []
    for c in result.cases:
        lf = "  ".join(f"{x:10.4g}" for x in c.load_factors) if len(c.load_factors) else c.message()
        rows.append((c.name, lf))
    w = max([len("case")] + [len(r[0]) for r in rows])
    out = [f"{'case':<{w}}  load factors (alpha_cr first)", "-" * (w + 40)]
    out += [f"{n:<{w}}  {lf}" for n, lf in rows]
    return "\n".join(out)


def print_result(result, paths, stream=None):
    stream = stream or sys.stdout     # looked up at call time (tests and callers redirect it)
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
    from .pipeline.combosolve import envelope_lines
    for line in envelope_lines(s.get("envelope")):
        print(line, file=stream)
    if paths:
        print("wrote: " + ", ".join(str(p) for p in paths.values()), file=stream)
    print("caution: " + " ".join(CAUTIONS), file=stream)


def cmd_solve(args) -> int:
    import time
    from .pipeline.api import solve
    from .io.outputs import folder_lock
    from .io.progress import Progress
    from .io.write import output_stem, write_result
    with folder_lock(args.out, args.force) as out:
        stem = output_stem(args.input)
        _precheck(out, [f"{stem}.modes.vtu", f"{stem}.modes_fine.vtu", f"{stem}.summary.json"], args)
        with Progress(0, "solve") as bar:      # drawn only on a terminal
            result = solve(args.input, args.study, modes=args.modes, subdivide=args.subdivide,
                           sturm_worker=True, progress=bar)
        t = time.perf_counter()
        paths = write_result(result, out, force=args.force)
        result.timings["write"] = time.perf_counter() - t
    print_result(result, paths)
    if getattr(args, "timings", False):
        tm = result.timings
        cases = ", ".join(f"{x:.3f}" for x in tm.get("cases", []))
        print(f"timings [s]: read {tm.get('read', 0):.3f}, assembly {tm.get('assembly', 0):.3f}, "
              f"factorization {tm.get('factorization', 0):.3f} ({tm.get('backend', 'scipy')}), cases [{cases}], "
              f"write {tm.get('write', 0):.3f}"
              + (f", waiting for the parallel Sturm counts {tm['sturm_wait']:.3f}" if "sturm_wait" in tm else ""))
    return 0


def cmd_batch(args) -> int:
    from .batch import expand_inputs, run_batch, write_table
    from .io.outputs import check_target, folder_lock
    from .io.progress import Progress
    with folder_lock(args.out, args.force) as out:
        for n in ("batch.csv", "batch.json"):
            check_target(out / n, args.force)
        with Progress(len(expand_inputs(args.inputs)), "batch") as bar:   # drawn only on a terminal
            rows = run_batch(args.inputs, args.study, scheduler=args.scheduler, workers=args.workers,
                             modes=args.modes, subdivide=args.subdivide, progress=bar)
        paths = write_table(rows, out, force=args.force)
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


def _terminate(signum, frame):
    raise KeyboardInterrupt   # SIGTERM, SIGHUP: unwind like Ctrl-C so temporary outputs are removed


def cmd_check(args) -> int:
    """Exit 0 when every case passes, 1 when any fails (2 on bad input, from main)."""
    import json
    import time

    from .pipeline.api import _as_study, solve
    from .engineering.checkfiles import format_table, write_check
    from .engineering.check import run_check
    from .io.write import _jsonable
    from .io.outputs import folder_lock
    from .io.progress import Progress
    from .io.write import output_stem
    study = _as_study(args.study)
    with folder_lock(args.out, args.force) as out:
        stem = output_stem(args.input)
        _precheck(out, [f"{stem}.{x}" for x in ("modes.vtu", "modes_fine.vtu", "summary.json",
                                                  "members.csv")], args)
        tm = {"start": time.perf_counter()}
        with Progress(0, "solve") as bar:      # drawn only on a terminal
            result = solve(args.input, study, modes=args.modes, subdivide=args.subdivide,
                           sturm_worker=True, progress=bar)
        tm["solve"] = time.perf_counter()
        with Progress(2 * len(result.cases) + 1 + 5, "check") as bar:   # cases, imperfection, files
            report = run_check(result, study, args.min_alpha, progress=bar)
            tm["check"] = time.perf_counter()
            bar.total -= report.imperfection_mode is None         # no imperfect mesh to write
            paths = write_check(result, report, out, force=args.force, progress=bar)
            tm["write"] = time.perf_counter()
        for w in result.warnings:
            print(f"framebuckle: warning: {w}", file=sys.stderr)
        if report.summary["check"].get("sign_convention"):
            print(f"framebuckle: {report.summary['check']['sign_convention']}", file=sys.stderr)
    times = (f"timings [s]: solve {tm['solve'] - tm['start']:.3f}, check {tm['check'] - tm['solve']:.3f}, "
             f"write {tm['write'] - tm['check']:.3f}" if getattr(args, "timings", False) else None)
    if args.json:
        json.dump(report.summary, sys.stdout, indent=2, default=_jsonable)
        print()
        if times:
            print(times, file=sys.stderr)     # standard output stays JSON
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
    from .pipeline.combosolve import envelope_lines
    for line in envelope_lines(s.get("envelope")):
        print(line)
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
    if times:
        print(times)
    return report.exit_code


def main(argv=None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    previous = {}
    for sig in (signal.SIGTERM, getattr(signal, "SIGHUP", None)):   # SIGHUP: the terminal closed
        if sig is None:
            continue
        try:
            previous[sig] = signal.signal(sig, _terminate)
        except ValueError:        # not in the main thread (embedded use): keep the default
            pass
    try:
        return _run(args)
    finally:                      # called in-process (tests, scripts): give the handlers back
        for sig, h in previous.items():
            signal.signal(sig, h if h is not None else signal.SIG_DFL)


def _run(args) -> int:
    try:
        if getattr(args, "combinations", None):     # --combinations: the study with the table's path
            from .io.combinations import study_with_table
            args.study = study_with_table(args.study, args.combinations)
        return int(args.func(args) or 0)
    except FrameBuckleError as exc:
        print(f"framebuckle: error: {exc}", file=sys.stderr)
        return exc.exit_code
    except BrokenPipeError:          # e.g. `framebuckle check ... | head`: stop quietly
        try:
            devnull = os.open(os.devnull, os.O_WRONLY)
            os.dup2(devnull, sys.stdout.fileno())
        except OSError:
            pass
        return 141                  # what a process ended by SIGPIPE reports
    except KeyboardInterrupt:
        try:
            print("framebuckle: interrupted; no partial output was left", file=sys.stderr)
        except OSError:              # SIGHUP: the terminal may be gone
            pass
        return 130
    except OSError as exc:           # a file error no stage turned into a message: still no traceback
        from .io.outputs import os_message
        where = f"{exc.filename}: " if getattr(exc, "filename", None) else ""
        print(f"framebuckle: error: {where}{os_message(exc)}", file=sys.stderr)
        return 2


if __name__ == "__main__":
    sys.exit(main())
