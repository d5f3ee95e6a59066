"""Writing results: VTU meshes with mode fields, JSON summaries; all atomically.

Every output is written to a temporary file in the target folder and renamed
into place, so an interrupted run leaves either the old file or the complete
new one.  Inputs are never written.  VTU files are encoded in memory by
:mod:`framebuckle.io.vtu` (it keeps field data, which meshio's VTU writer drops; VTK's
XML writer for PyVista grids) and then written to the file by Python, so a full disk is an
``OSError`` and never an abort inside a library.  A command's outputs are written together, all or nothing
(:class:`framebuckle.io.outputs.OutputSet`).
"""

from __future__ import annotations

import json
import os
from contextlib import contextmanager
from pathlib import Path

import numpy as np

from .outputs import PAUSE_ENV, _pause_hook, make_dir  # noqa: F401  (PAUSE_ENV: the tests' hook)
from ..errors import OutputError


@contextmanager
def atomic_path(target: Path, force: bool = True, protect=()):
    """Yield a temporary path next to ``target``; rename it into place on success."""
    from .outputs import _tmp_for, check_target, os_message
    target = Path(target)
    check_target(target, force, protect)
    try:
        tmp = _tmp_for(target)
    except OSError as exc:
        raise OutputError(f"cannot write in the output folder: {os_message(exc)}",
                          source=str(target.parent)) from None
    try:
        try:
            yield Path(tmp)
            _pause_hook(Path(tmp), target)
            os.replace(tmp, target)
        except OSError as exc:
            raise OutputError(f"cannot write the output: {os_message(exc)}", source=str(target)) from None
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise


def prepare_dir(out: Path) -> Path:
    out = make_dir(out)
    if not os.access(out, os.W_OK):
        raise OutputError("the output folder is not writable", source=str(out))
    return out


def write_text(target: Path, text: str, force: bool = True, protect=()):
    with atomic_path(target, force, protect) as tmp:
        tmp.write_text(text, encoding="utf-8")


def write_json(target: Path, data, force: bool = True, protect=()):
    write_text(target, json_text(data), force, protect)


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
    """Grid of the input mesh (its numeric data, a copy) with mode fields and load factors."""
    from .vtu import from_meshio
    grid = from_meshio(result.input.mesh)
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
    """Grid of the refined model with modes and the input cell of each element."""
    from .vtu import line_grid
    f = result.fine
    grid = line_grid(f.nodes, f.elements)
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


#: field data marking a file written by framebuckle (value: the layout version)
RESULT_MARK = "framebuckle_result"


def add_field_data(grid, result):
    """Load factors per case, the case order and the result mark, all numeric field data.

    Case names are stored as ``case_names_utf8``: the UTF-8 bytes of the names, each ended by a
    0 byte (uint8), because meshio's VTU reader refuses string arrays; ``case_names`` (strings)
    of older files is still read (:func:`case_names`).
    """
    grid.field_data[RESULT_MARK] = np.array([1], np.int32)
    grid.field_data["case_names_utf8"] = encode_names([c.name for c in result.cases])
    for c in result.cases:
        grid.field_data[f"load_factors.{c.name}"] = np.asarray(c.load_factors, float)


def encode_names(names) -> np.ndarray:
    return np.frombuffer(b"".join(str(n).encode("utf-8") + b"\0" for n in names), np.uint8).copy()


def case_names(field_data) -> list[str] | None:
    """Case order stored in a result's field data (new uint8 or old string form), else None."""
    keys = list(field_data.keys())
    if "case_names_utf8" in keys:
        raw = np.asarray(field_data["case_names_utf8"]).astype(np.uint8).tobytes()
        return [x.decode("utf-8", "replace") for x in raw.split(b"\0")[:-1]]
    if "case_names" in keys:
        return [str(x) for x in np.asarray(field_data["case_names"]).ravel()]
    return None


def vtu_bytes(grid) -> bytes:
    """The grid as a VTU file in memory (raw appended binary, no compression): a
    :class:`framebuckle.io.vtu.Grid` by our own encoder, a PyVista grid by VTK's XML writer."""
    from .vtu import Grid
    from .vtu import vtu_bytes as encode
    if isinstance(grid, Grid):
        return encode(grid)
    from vtkmodules.vtkIOXML import vtkXMLUnstructuredGridWriter
    w = vtkXMLUnstructuredGridWriter()
    w.SetInputData(grid)
    # raw binary, not zlib: 3-4 x faster to write for about 20 % more bytes (mode shapes
    # compress poorly); any VTK XML reader and meshio read it, no decompressor needed
    w.SetDataModeToAppended()
    w.EncodeAppendedDataOff()
    w.SetCompressorTypeToNone()
    w.WriteToOutputStringOn()
    if not w.Write():
        raise OutputError("VTK could not encode the output mesh")
    data = w.GetOutputString()
    return data if isinstance(data, bytes) else data.encode("utf-8", "surrogateescape")


def write_grid(grid, target: Path, force=True, protect=()):
    data = vtu_bytes(grid)
    with atomic_path(target, force, protect) as tmp:
        tmp.write_bytes(data)


def protected_inputs(result) -> list[str]:
    src = result.input.source
    return [src] if src and not src.startswith("<") else []


def write_result(result, out_dir, stem: str | None = None, force: bool = True) -> dict:
    """Write ``<stem>.modes.vtu``, ``<stem>.modes_fine.vtu`` and ``<stem>.summary.json``.

    All three or none (:class:`framebuckle.io.outputs.OutputSet`); every target is checked first.
    """
    from .outputs import OutputSet
    out = prepare_dir(Path(out_dir))
    stem = stem or output_stem(result.input.source)
    paths = {"modes": out / f"{stem}.modes.vtu", "modes_fine": out / f"{stem}.modes_fine.vtu",
             "summary": out / f"{stem}.summary.json"}
    with OutputSet(force, protected_inputs(result)) as outs:
        outs.add_all(paths.values())
        outs.write_bytes(paths["modes"], vtu_bytes(input_grid(result)))
        outs.write_bytes(paths["modes_fine"], vtu_bytes(fine_grid(result)))
        outs.write_text(paths["summary"], json_text(result.summary()))
        outs.commit()
    return paths


def json_text(data) -> str:
    return json.dumps(data, indent=2, default=_jsonable) + "\n"


def is_result_file(path) -> bool:
    """True for a VTU written by framebuckle (mode fields and load factors), read cheaply.

    Looks for the result mark or the case-name field data in the XML head of the file (field
    data names are written before any appended data).
    """
    p = Path(path)
    if p.suffix.lower() != ".vtu":
        return False
    try:
        with open(p, "rb") as f:
            head = f.read(1 << 20)
    except OSError:
        return False
    head = head.split(b"<AppendedData", 1)[0]
    return (f'Name="{RESULT_MARK}"'.encode() in head or b'Name="case_names' in head) and \
        b'Name="load_factors.' in head


def refuse_result_file(path):
    """InputError when ``path`` is a result file of framebuckle rather than an input mesh."""
    if is_result_file(path):
        from ..errors import InputError
        raise InputError("this is a framebuckle result file (mode shapes written by solve or check), "
                         "not the mesh of a linear run: give the original input mesh to analyse, or "
                         f"draw this file with `framebuckle render {path}`", source=str(path))


def output_stem(source: str) -> str:
    name = Path(source).name if source and not source.startswith("<") else "model"
    for suf in (".vtu", ".xdmf", ".xmf", ".msh", ".vtk", ".h5"):
        if name.lower().endswith(suf):
            return name[: -len(suf)]
    return Path(name).stem
