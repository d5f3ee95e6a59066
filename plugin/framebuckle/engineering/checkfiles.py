"""The ``check`` stage's outputs: the members CSV, the terminal table, and the files (modes with
member cell fields, fine modes, summary, CSV, imperfect mesh), written atomically."""

from __future__ import annotations

import csv
import io
from pathlib import Path

from ..errors import OutputError
from .check import CSV_COLUMNS, CheckReport
from .imperfection import imperfect_grid

COLUMN_SET = frozenset(CSV_COLUMNS)


def _cell(v):
    return "" if v is None else (f"{v:.10g}" if isinstance(v, float) else v)


def members_csv(rows) -> str:
    """The rows (dicts with keys of CSV_COLUMNS) as CSV text, floats with 10 significant digits."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(CSV_COLUMNS)
    for r in rows:
        extra = r.keys() - COLUMN_SET
        if extra:
            raise ValueError(f"members CSV: unknown column(s) {sorted(extra)}")
    w.writerows([_cell(r.get(k)) for k in CSV_COLUMNS] for r in rows)
    return buf.getvalue()


def format_table(report: CheckReport) -> str:
    head = ("case", "alpha_cr", "mode", "alpha_cr,sway", "storey-drift", "verdicts", "governing members",
            "stiffen", "result")
    rows = [(n, "-" if a is None else f"{a:.4g}", t, sw, dr, v, g, s, "pass" if ok else "FAIL")
            for n, a, t, v, g, s, ok, sw, dr in report.table]
    w = [max(len(h), *(len(r[i]) for r in rows)) if rows else len(h) for i, h in enumerate(head)]
    line = lambda r: "  ".join(f"{x:<{w[i]}}" for i, x in enumerate(r)).rstrip()
    return "\n".join([line(head), "-" * (sum(w) + 2 * (len(w) - 1))] + [line(r) for r in rows])


def write_check(result, report: CheckReport, out_dir, force: bool = False, progress=None) -> dict:
    """Write modes (with member cell fields), fine modes, summary, members CSV, imperfect mesh.

    ``progress``: called with a short text after each file is made (4 or 5 calls).
    """
    step = progress or (lambda what: None)
    from ..io.outputs import OutputSet
    from ..io.write import fine_grid, input_grid, json_text, output_stem, prepare_dir, vtu_bytes
    out = prepare_dir(Path(out_dir))
    stem = output_stem(result.input.source)
    src = result.input.source
    protect = [src] if src and not src.startswith("<") else []
    paths = {"modes": out / f"{stem}.modes.vtu", "modes_fine": out / f"{stem}.modes_fine.vtu",
             "summary": out / f"{stem}.summary.json", "members": out / f"{stem}.members.csv"}
    if report.imperfection_mode is not None:
        paths["imperfect"] = out / f"{stem}.imperfect.vtu"
    outs = OutputSet(force, protect).add_all(paths.values())    # every target checked first
    grid = input_grid(result)
    if grid.n_cells != result.input.n_cells:
        raise OutputError(f"the output mesh has {grid.n_cells} cells, the input {result.input.n_cells}",
                          source=str(paths["modes"]))
    for name, a in report.cell_fields.items():
        grid.cell_data[name] = a
    summary = report.summary
    if report.imperfection_mode is not None:
        ci, mi, s = report.imperfection_mode
        igrid, note, moved = imperfect_grid(result, ci, mi, s)
        report.imperfection["largest_translation_at_input_points"] = moved
        if note:
            report.imperfection["note"] = note
    with outs:                    # all or nothing
        outs.write_bytes(paths["modes"], vtu_bytes(grid))
        step(paths["modes"].name)
        outs.write_bytes(paths["modes_fine"], vtu_bytes(fine_grid(result)))
        step(paths["modes_fine"].name)
        outs.write_text(paths["members"], members_csv(report.rows))
        step(paths["members"].name)
        if report.imperfection_mode is not None:
            outs.write_bytes(paths["imperfect"], vtu_bytes(igrid))
            step(paths["imperfect"].name)
        summary["outputs"] = {k: str(v) for k, v in paths.items()}
        outs.write_text(paths["summary"], json_text(summary))
        step(paths["summary"].name)
        outs.commit()
    return paths
