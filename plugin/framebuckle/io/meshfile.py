"""Mesh files into a ``meshio.Mesh``: any format meshio reads, Gmsh MSH with its point fields in
point order, XDMF time series (each step a load case).  Parser errors become InputError."""

from __future__ import annotations

import contextlib
import io
import re
from pathlib import Path

import meshio
import numpy as np

from ..errors import InputError


#: VTK cell type numbers meshio skips, by name (for the "cell types found" message)
VTK_SKIPPED = {"4": "VTK poly-line (type 4)", "2": "VTK poly-vertex (type 2)", "6": "VTK triangle strip (type 6)",
               "7": "VTK polygon (type 7)"}


def read_mesh(path: str | Path) -> tuple[meshio.Mesh, list]:
    """Read a mesh file; return the mesh and, for XDMF time series, the steps.

    Each step is ``(time, point_data, cell_data)``.
    """
    p = Path(path)
    src = str(p)
    if not p.exists():
        raise InputError("file not found", source=src)
    if not p.is_file():
        raise InputError("not a file", source=src)
    steps = []
    said = io.StringIO()
    try:
        # meshio prints its reader's complaint and calls sys.exit(1) on some corrupt files
        with contextlib.redirect_stdout(said), contextlib.redirect_stderr(said):
            if p.suffix.lower() in (".xdmf", ".xmf"):
                mesh, steps = _read_xdmf(p)
            elif p.suffix.lower() == ".msh":
                mesh = _read_msh(p)
            else:
                if p.suffix.lower() == ".vtu":
                    _vtu_unique_names(p)
                mesh = meshio.read(p)
    except InputError:
        raise
    except SystemExit:
        lines = [ln.strip() for ln in said.getvalue().splitlines() if ln.strip()]
        raise InputError(f"cannot read the mesh ({'; '.join(lines[:2]) or 'unreadable'}); the file "
                         f"may be truncated, corrupt or of an unsupported format", source=src) from None
    except Exception as exc:  # meshio raises many kinds for corrupt files
        kind = type(exc).__name__
        msg = str(exc).strip().splitlines()[0] if str(exc).strip() else kind
        raise InputError(f"cannot read the mesh ({kind}: {msg}); the file may be truncated, "
                         f"corrupt or of an unsupported format", source=src) from None
    skipped = re.findall(r"cannot handle \(types? \[?([\d, ]+)", said.getvalue())
    if skipped:
        kinds = {k.strip() for g in skipped for k in g.split(",") if k.strip()}
        mesh.info_skipped = sorted(VTK_SKIPPED.get(k, f"VTK type {k}") for k in kinds)
    return mesh, steps


_VTU_BLOCK = re.compile(r"<(CellData|PointData)\b[^>]*>(.*?)</\1\s*>", re.S)
_VTU_NAME = re.compile(r"<DataArray\b[^>]*?\bName\s*=\s*(?:\"([^\"]*)\"|'([^']*)')")


def _vtu_unique_names(p: Path) -> None:
    """Refuse a VTU whose CellData or PointData holds two arrays of one name (rule
    ``duplicate-array``): meshio keeps only the last of them, so a load case (or any field)
    would vanish or be replaced without a word.  Only the XML before any raw appended data
    is scanned (inline data, ASCII or base64, holds no quotes or '<')."""
    head = p.read_bytes()
    cut = head.find(b"<AppendedData")
    text = (head if cut < 0 else head[:cut]).decode("latin-1")
    for kind, body in _VTU_BLOCK.findall(text):
        names = [a or b for a, b in _VTU_NAME.findall(body)]
        dup = sorted({n for n in names if names.count(n) > 1})
        if dup:
            what = "cell" if kind == "CellData" else "point"
            raise InputError(f"{kind} holds {names.count(dup[0])} arrays named '{dup[0]}' (rule duplicate-array): "
                             f"a reader keeps only one of them, so a {what} field or load case would be lost; "
                             f"rename one of them", source=str(p))


def _read_msh(p: Path) -> meshio.Mesh:
    """Gmsh MSH through meshio, with point fields put in the order of the points.

    meshio (5.3) stores the points of an MSH 4.1 file in the order of the file's node
    blocks (one per geometric entity) but its ``$NodeData`` fields in node-tag order; when
    the two differ every point field would belong to another point.  The node tags are
    captured while meshio reads the file and the point fields are permuted to match.
    """
    import meshio.gmsh._gmsh41 as g41

    captured = []
    original = g41._read_nodes

    def _read_nodes(*args, **kwargs):
        points, tags, dim_tags = original(*args, **kwargs)
        captured.append(np.asarray(tags).copy())
        return points, tags, dim_tags

    g41._read_nodes = _read_nodes
    try:
        mesh = meshio.read(p)
    finally:
        g41._read_nodes = original
    if not captured:
        return mesh                       # MSH 2.2 stores node data by position
    tags = captured[-1]                   # 0-based node tag of each point, file order
    n = len(mesh.points)
    if np.array_equal(tags, np.arange(n)):
        return mesh
    if tags.min() < 0 or tags.max() >= n or len(np.unique(tags)) != n:
        fields = [k for k in mesh.point_data if not k.startswith("gmsh:")]
        if fields:
            raise InputError(f"node tags are not 1..{n}, so point fields {', '.join(fields)} cannot "
                             f"be matched to points", source=str(p))
        return mesh
    for k in list(mesh.point_data):
        if not k.startswith("gmsh:"):
            mesh.point_data[k] = np.asarray(mesh.point_data[k])[tags]
    return mesh


def _read_xdmf(p: Path):
    """XDMF: a plain mesh, or a time series whose steps become load cases."""
    try:
        with meshio.xdmf.TimeSeriesReader(p) as reader:
            points, cells = reader.read_points_cells()
            steps = []
            for k in range(reader.num_steps):
                t, pd, cd = reader.read_data(k)
                steps.append((t, pd, cd))
        if steps:
            pd0 = steps[0][1]
            mesh = meshio.Mesh(points, cells, point_data=dict(pd0),
                               cell_data={k: v for k, v in steps[0][2].items()})
            return mesh, steps
    except Exception:
        pass
    return meshio.read(p), []
