"""Batch runs: many input files, all their load cases, one combined table.

The files are spread over a Dask distributed cluster: by default a
``distributed.LocalCluster`` of worker processes on this machine (loopback
only), or an existing scheduler given by its address (``--scheduler``), so an
office can spread thousands of files over its machines.  Each task reads and
solves one file and returns only its table rows (no modes), so the client stays
small.  A worker that dies in the middle loses nothing: the scheduler runs its
tasks again elsewhere.  A file that fails gives a row with its error; the others
go on.

Columns of the table (``batch.csv`` and ``batch.json``): ``file``, ``case``,
``alpha_cr``, ``verdict`` ("pass"/"fail" and the short code verdicts of the
``check`` stage, with the study's ``[checks]`` settings; "n/a" when the check
could not be made), ``governing_member`` (first member carrying mode 1, from the
check stage; else the member doing most geometric work in mode 1), ``status``,
``error``.
"""

from __future__ import annotations

import csv
import glob
import io
import os
from pathlib import Path

import numpy as np

from .errors import FrameBuckleError, InputError

COLUMNS = ("file", "case", "alpha_cr", "verdict", "governing_member", "status", "error", "factors")
NOT_AVAILABLE = "n/a"


def expand_inputs(patterns) -> list[str]:
    """Paths and glob patterns -> file list in the given order, without repeats.

    A pattern that matches nothing is kept as given, so that it is reported as
    a failed row ("file not found") instead of silently vanishing.
    """
    out, seen = [], set()
    for p in patterns:
        p = str(p)
        hits = sorted(glob.glob(p, recursive=True)) if glob.has_magic(p) else [p]
        for h in hits or [p]:
            key = os.path.abspath(h)
            if key not in seen:
                seen.add(key)
                out.append(h)
    return out


def governing_member(result, case) -> object:
    """Input member (``member`` field, else input cell number) doing most of the
    geometric work ``-u^T K_g,e u`` in the first mode of ``case`` (the matrices the solve
    used: :mod:`framebuckle.engineering.solvedmatrices`); None without modes."""
    from .engineering.participation import element_energies
    from .engineering.solvedmatrices import for_case
    c = result.case(case)
    if c.status != "ok" or not len(c.load_factors):
        return None
    fine = result.fine
    wm = None if c.warping_modes is None else c.warping_modes[:1]
    work = element_energies(for_case(result, c), c.modes[:1], warping_modes=wm).work[0]
    per_cell = np.bincount(fine.parent, weights=work, minlength=int(fine.parent.max()) + 1)
    cell = int(np.argmax(per_cell))
    member = result.input.extra.get("member")
    if member is not None:
        # per input element: the member of the first element of that cell
        idx = np.flatnonzero(result.input.frame.parent == cell)
        if idx.size:
            v = member[idx[0]]
            return int(v) if float(v).is_integer() else float(v)
    return cell


def _check(result, study):
    """The ``check`` stage's report (verdicts, governing members), or None if it fails."""
    try:
        from .engineering.check import run_check
    except ImportError:
        return None
    try:
        return run_check(result, study)
    except Exception:                           # a verdict must never sink the batch
        return None


def _verdict(entry) -> str:
    """"pass"/"fail" of a case (alpha_cr gate and code verdicts of the check stage) and the
    short verdict text; "n/a" when no check was made."""
    if not entry or "passed" not in entry:
        return NOT_AVAILABLE
    from .engineering.check import _verdict_short
    short = _verdict_short(entry.get("verdicts", []))
    return ("pass" if entry["passed"] else "fail") + (f" ({short})" if short else "")


def run_file(path: str, study=None, modes: int | None = None, subdivide: int | None = None) -> list[dict]:
    """Solve one file; return one row per case, or one error row (never raises)."""
    from .pipeline.api import _as_study, solve
    try:
        st = _as_study(study)
        res = solve(path, st, modes=modes, subdivide=subdivide)
        report = _check(res, st)
        entries = {e["name"]: e for e in report.summary["cases"]} if report is not None else {}
        rows = []
        from .io.combinations import factors_of_cases
        fac = factors_of_cases(res.input.cases)
        for c in res.cases:
            e = entries.get(c.name, {})
            gov = (e.get("governing_members") or [None])[0]
            if gov is None:
                try:
                    gov = governing_member(res, c.name)
                except Exception:
                    gov = None
            rows.append({"file": str(path), "case": c.name, "alpha_cr": c.alpha_cr,
                         "verdict": _verdict(e), "governing_member": gov,
                         "status": c.status, "error": "", "factors": fac.get(c.name, "")})
        return rows
    except FrameBuckleError as exc:
        msg = str(exc)
    except MemoryError:
        msg = "out of memory"
    except SystemExit as exc:                   # a reader library that calls sys.exit on bad files
        msg = f"cannot read the mesh (the reader gave up with exit status {exc.code})"
    except Exception as exc:                    # keep the batch going; report the fault
        msg = f"internal error ({type(exc).__name__}: {exc})"
    return [{"file": str(path), "case": "", "alpha_cr": None, "verdict": NOT_AVAILABLE,
             "governing_member": None, "status": "error", "error": msg}]


def _client(scheduler: str | None, workers: int | None):
    try:
        from distributed import Client, LocalCluster
    except ImportError:
        raise InputError("the batch command needs Dask distributed: "
                         "pip install 'framebuckle[batch]'", source="framebuckle batch") from None
    if scheduler:
        try:
            return Client(scheduler, timeout="20s"), None
        except Exception as exc:
            raise InputError(f"cannot connect to the Dask scheduler ({type(exc).__name__}: {exc})",
                             source=scheduler) from None
    n = workers or max(1, min(os.cpu_count() or 1, 4))
    cluster = LocalCluster(n_workers=n, threads_per_worker=1, processes=True, host="127.0.0.1",
                           dashboard_address=None)
    return Client(cluster), cluster


def run_batch(inputs, study=None, *, scheduler: str | None = None, client=None,
              workers: int | None = None, modes: int | None = None,
              subdivide: int | None = None, progress=None, on_row=None) -> list[dict]:
    """Run every file of ``inputs`` (paths or globs) on a Dask cluster; rows in input order.

    ``client``: an existing ``distributed.Client`` (else one is made from
    ``scheduler`` or a new local cluster).  ``on_row(rows)`` is called as each
    file finishes; ``progress(name)`` is called likewise (e.g. a :class:`~framebuckle.io.progress.Progress`).
    """
    files = expand_inputs(inputs)
    if not files:
        raise InputError("no input files", source="framebuckle batch")
    from .io.study import Study, load_study
    if study is not None and not isinstance(study, (dict, Study)):
        load_study(study)                       # a bad study file stops the batch before it starts
        study = str(Path(study).resolve())
    own = None
    if client is None:
        client, own = _client(scheduler, workers)
        own = (client, own)
    try:
        from distributed import as_completed
        futures = client.map(run_file, [str(Path(f).resolve()) if Path(f).exists() else f for f in files],
                             study=study, modes=modes, subdivide=subdivide, pure=False)
        index = {f.key: i for i, f in enumerate(futures)}
        out: list = [None] * len(files)
        for fut in as_completed(futures):
            i = index[fut.key]
            try:
                rows = fut.result()
            except Exception as exc:            # the task itself was lost (e.g. killed too often)
                rows = [{"file": files[i], "case": "", "alpha_cr": None, "verdict": NOT_AVAILABLE,
                         "governing_member": None, "status": "error",
                         "error": f"task failed on the cluster ({type(exc).__name__}: {exc})"}]
            for r in rows:
                r["file"] = files[i]
            out[i] = rows
            if progress is not None:
                progress(os.path.basename(files[i]))
            if on_row is not None:
                on_row(rows)
        return [r for rows in out for r in rows]
    finally:
        if own is not None:
            cl, cluster = own
            cl.close()
            if cluster is not None:
                cluster.close()


def table_csv(rows) -> str:
    buf = io.StringIO()
    w = csv.DictWriter(buf, fieldnames=COLUMNS, lineterminator="\n")
    w.writeheader()
    for r in rows:
        w.writerow({k: ("" if r.get(k) is None else (f"{r[k]:.6g}" if k == "alpha_cr" else r[k]))
                    for k in COLUMNS})
    return buf.getvalue()


def write_table(rows, out_dir, force: bool = True) -> dict:
    from .pipeline.results import CAUTIONS
    from .io.outputs import OutputSet
    from .io.write import json_text, prepare_dir
    out = prepare_dir(Path(out_dir))
    paths = {"csv": out / "batch.csv", "json": out / "batch.json"}
    with OutputSet(force).add_all(paths.values()) as outs:      # both or neither
        outs.write_text(paths["csv"], table_csv(rows))
        outs.write_text(paths["json"], json_text({"tool": "framebuckle", "columns": list(COLUMNS),
                                                  "rows": [{k: r.get(k) for k in COLUMNS} for r in rows],
                                                  "cautions": list(CAUTIONS)}))
        outs.commit()
    return paths
