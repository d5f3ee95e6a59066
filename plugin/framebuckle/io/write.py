"""Writing results: VTU meshes with mode fields, JSON summaries; all atomically.

Every output is written to a temporary file in the target folder and renamed
into place, so an interrupted run leaves either the old file or the complete
new one.  Inputs are never written.  VTU files are written through PyVista
(VTK's own writer keeps field data, which meshio's VTU writer drops), from a
copy of the input mesh.
"""

from __future__ import annotations

import copy
import json
import os
import tempfile
from contextlib import contextmanager
from pathlib import Path

import numpy as np

from ..errors import OutputError


@contextmanager
def atomic_path(target: Path, force: bool = True, protect=()):
    """Yield a temporary path next to ``target``; rename it into place on success."""
    target = Path(target)
    for p in protect:
        try:
            if Path(p).resolve() == target.resolve():
                raise OutputError("refusing to overwrite the input file", source=str(target))
        except OSError:
            pass
    if target.exists() and not force:
        raise OutputError("output exists; use --force to replace it", source=str(target))
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{target.stem}.", suffix=".part" + target.suffix,
                                   dir=target.parent)
        os.close(fd)
        _default_mode(tmp)
    except OSError as exc:
        raise OutputError(f"cannot write in the output folder: {exc.strerror or exc}",
                          source=str(target.parent)) from None
    try:
        yield Path(tmp)
        _pause_hook(Path(tmp), target)
        os.replace(tmp, target)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise


#: Test hook (used only by tests/test_nothing_lost.py): when this environment variable names a
#: file, every atomic write, after writing its temporary file and before renaming it into place,
#: writes "<temporary path>\n<target path>" to that file and waits until the file is removed.
#: A test can thus kill the process at a known point of a write.
PAUSE_ENV = "FRAMEBUCKLE_TEST_PAUSE_FILE"


def _pause_hook(tmp: Path, target: Path):
    flag = os.environ.get(PAUSE_ENV)
    if not flag:
        return
    import time
    Path(flag).write_text(f"{tmp}\n{target}\n")
    while os.path.exists(flag):
        time.sleep(0.02)


def _default_mode(path):
    """Give a new output the permissions of a normally created file (mkstemp makes it 0600)."""
    mask = os.umask(0o22)
    os.umask(mask)
    try:
        os.chmod(path, 0o666 & ~mask)
    except OSError:
        pass


def prepare_dir(out: Path) -> Path:
    out = Path(out)
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise OutputError(f"cannot create the output folder: {exc.strerror or exc}", source=str(out)) from None
    if not os.access(out, os.W_OK):
        raise OutputError("the output folder is not writable", source=str(out))
    return out


def write_text(target: Path, text: str, force: bool = True, protect=()):
    with atomic_path(target, force, protect) as tmp:
        tmp.write_text(text, encoding="utf-8")


def write_json(target: Path, data, force: bool = True, protect=()):
    write_text(target, json.dumps(data, indent=2, default=_jsonable) + "\n", force, protect)


def _jsonable(o):
    if isinstance(o, np.generic):
        return o.item()
    if isinstance(o, np.ndarray):
        return o.tolist()
    raise TypeError(type(o).__name__)


def mode_field_name(case: str, k: int, n_cases: int, rotation: bool = False) -> str:
    base = f"mode_{k}" + ("_rotation" if rotation else "")
    return base if (n_cases == 1 and case == "default") else f"{base}.{case}"


def input_grid(result):
    """PyVista grid of the input mesh (a copy) with mode fields and load factors."""
    import pyvista as pv
    mesh = copy.deepcopy(result.input.mesh)
    # pyvista cannot convert meshio's gmsh bookkeeping with strings; keep numeric data only
    grid = pv.from_meshio(mesh)
    n = result.input.frame.n_nodes
    nc = len(result.cases)
    for c in result.cases:
        for k in range(len(c.load_factors)):
            m = c.modes[k][:n]
            grid.point_data[mode_field_name(c.name, k + 1, nc)] = np.ascontiguousarray(m[:, :3])
            grid.point_data[mode_field_name(c.name, k + 1, nc, True)] = np.ascontiguousarray(m[:, 3:])
    add_field_data(grid, result)
    return grid


def fine_grid(result):
    """PyVista grid of the refined model with modes and the input cell of each element."""
    import pyvista as pv
    f = result.fine
    e = f.elements
    cells = np.column_stack([np.full(len(e), 2), e]).ravel()
    grid = pv.UnstructuredGrid(cells, np.full(len(e), pv.CellType.LINE, np.uint8), np.asarray(f.nodes))
    grid.cell_data["cell_id"] = np.asarray(result.input.cell_ids[result.refined.element_map])
    grid.cell_data["bar"] = np.asarray(f.bar, np.uint8)   # pictures draw bars straight
    nc = len(result.cases)
    im = result.input
    for case in im.cases:
        grid.cell_data[f"axial_force.{case.name}"] = result.refined.fine_axial(case.axial)
    for c in result.cases:
        for k in range(len(c.load_factors)):
            grid.point_data[mode_field_name(c.name, k + 1, nc)] = np.ascontiguousarray(c.modes[k][:, :3])
            grid.point_data[mode_field_name(c.name, k + 1, nc, True)] = np.ascontiguousarray(c.modes[k][:, 3:])
    add_field_data(grid, result)
    return grid


def add_field_data(grid, result):
    grid.field_data["case_names"] = np.array([c.name for c in result.cases])
    for c in result.cases:
        grid.field_data[f"load_factors.{c.name}"] = np.asarray(c.load_factors, float)


def write_grid(grid, target: Path, force=True, protect=()):
    with atomic_path(target, force, protect) as tmp:
        # raw binary, not zlib: 3-4 x faster to write for about 20 % more bytes (mode
        # shapes compress poorly); any VTK XML reader reads it, no decompressor needed
        grid.save(str(tmp), binary=True, compression=None)


def write_result(result, out_dir, stem: str | None = None, force: bool = True) -> dict:
    """Write ``<stem>.modes.vtu``, ``<stem>.modes_fine.vtu`` and ``<stem>.summary.json``."""
    out = prepare_dir(Path(out_dir))
    stem = stem or output_stem(result.input.source)
    protect = [result.input.source] if result.input.source and not result.input.source.startswith("<") else []
    paths = {"modes": out / f"{stem}.modes.vtu", "modes_fine": out / f"{stem}.modes_fine.vtu",
             "summary": out / f"{stem}.summary.json"}
    if not force:
        for p in paths.values():
            if p.exists():
                raise OutputError("output exists; use --force to replace it", source=str(p))
    write_grid(input_grid(result), paths["modes"], True, protect)
    write_grid(fine_grid(result), paths["modes_fine"], True, protect)
    write_json(paths["summary"], result.summary(), True, protect)
    return paths


def output_stem(source: str) -> str:
    name = Path(source).name if source and not source.startswith("<") else "model"
    for suf in (".vtu", ".xdmf", ".xmf", ".msh", ".vtk", ".h5"):
        if name.lower().endswith(suf):
            return name[: -len(suf)]
    return Path(name).stem
