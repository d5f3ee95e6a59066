"""A plain unstructured grid and its VTU (VTK XML) encoding, without VTK.

The result files are written from numpy arrays by a few lines of Python: the XML head
(field, point and cell data, points, cells) followed by the arrays as raw appended binary
(little-endian, each preceded by its byte count as UInt32, as VTK's own XML writer does by
default; UInt64 when an array exceeds 4 GiB) and no compression (Kitware, "VTK File Formats",
VTK User's Guide, 11th ed., 2010, sec. "XML File Formats").  meshio and PyVista read it
(tests/test_outputs.py reads every output back with both).  Writing without VTK keeps the
graphics libraries out of ``solve`` (importing PyVista cost about 0.35 s of a 2 s run).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from xml.sax.saxutils import quoteattr

import numpy as np

#: VTK cell type numbers of the meshio cell types an input mesh may hold (VTK's vtkCellType.h)
VTK_TYPE = {"vertex": 1, "line": 3, "triangle": 5, "polygon": 7, "quad": 9, "tetra": 10,
            "hexahedron": 12, "wedge": 13, "pyramid": 14, "line3": 21, "triangle6": 22,
            "quad8": 23, "tetra10": 24, "hexahedron20": 25, "quad9": 28}

_VTK_NAME = {"f": {4: "Float32", 8: "Float64"},
             "i": {1: "Int8", 2: "Int16", 4: "Int32", 8: "Int64"},
             "u": {1: "UInt8", 2: "UInt16", 4: "UInt32", 8: "UInt64"}}


@dataclass
class Grid:
    """Points, cells (blocks of one VTK type) and named data; the subset of a PyVista grid the
    writers use (``point_data``, ``cell_data``, ``field_data``, ``n_cells``, ``n_points``)."""

    points: np.ndarray                                   # (n, 3)
    blocks: list = field(default_factory=list)           # [(vtk_type, connectivity (m, k))]
    point_data: dict = field(default_factory=dict)
    cell_data: dict = field(default_factory=dict)
    field_data: dict = field(default_factory=dict)

    @property
    def n_points(self) -> int:
        return int(len(self.points))

    @property
    def n_cells(self) -> int:
        return int(sum(len(c) for _, c in self.blocks))


def numeric(a) -> np.ndarray | None:
    """``a`` as a numeric array VTU can hold (booleans as uint8), or None (strings, objects)."""
    a = np.asarray(a)
    if a.dtype.kind == "b":
        return a.astype(np.uint8)
    if a.dtype.kind in "fiu" and a.dtype.itemsize in _VTK_NAME[a.dtype.kind]:
        return a
    return None


def from_meshio(mesh) -> Grid:
    """The grid of a meshio mesh: its cell blocks, numeric point data, and the numeric cell data
    present on every block (concatenated in block order, as the cells are)."""
    blocks = []
    for cb in mesh.cells:
        if cb.type not in VTK_TYPE:
            raise ValueError(f"cell type {cb.type!r} cannot be written to a VTU file here")
        blocks.append((VTK_TYPE[cb.type], np.asarray(cb.data)))
    pts = np.asarray(mesh.points, float)
    if pts.shape[1] < 3:
        pts = np.column_stack([pts, np.zeros((len(pts), 3 - pts.shape[1]))])
    g = Grid(pts, blocks)
    for name, a in mesh.point_data.items():
        a = numeric(a)
        if a is not None and len(a) == len(pts):
            g.point_data[name] = a
    for name, parts in mesh.cell_data.items():
        arrs = [numeric(p) for p in parts]
        if len(arrs) != len(blocks) or any(a is None for a in arrs):
            continue
        if len({a.shape[1:] for a in arrs}) != 1:
            continue
        g.cell_data[name] = np.concatenate(arrs) if len(arrs) > 1 else arrs[0]
    return g


def line_grid(points, elements) -> Grid:
    """A grid of two-node line cells."""
    return Grid(np.asarray(points, float), [(VTK_TYPE["line"], np.asarray(elements))])


def _array(name: str | None, a: np.ndarray, offset: int, tuples: bool = False) -> str:
    kind = _VTK_NAME[a.dtype.kind][a.dtype.itemsize]
    comps = int(np.prod(a.shape[1:])) if a.ndim > 1 else 1
    attrs = f'type="{kind}"'
    if name is not None:
        attrs += f" Name={quoteattr(str(name))}"
    if comps != 1:
        attrs += f' NumberOfComponents="{comps}"'
    if tuples:
        attrs += f' NumberOfTuples="{len(a)}"'
    return f'<DataArray {attrs} format="appended" offset="{offset}"/>'


def vtu_bytes(grid: Grid) -> bytes:
    """The grid as a VTU file (raw appended binary, UInt32 headers, little-endian).

    The arrays are laid out in the appended block in the reverse of their order in the XML
    head.  VTK's reader does not mind; meshio's (5.3) converts raw data by looking up each
    array by its offset while rewriting the offsets of those already converted, and with the
    arrays in head order a rewritten offset can equal a later raw one, so that a lookup finds
    the wrong array (found by tests/test_vtu_writer.py).
    """
    pts = np.asarray(grid.points, np.float64).reshape(-1, 3)
    conn = [np.asarray(c, np.int64).reshape(len(c), -1) for _, c in grid.blocks]
    sizes = np.concatenate([np.full(len(c), c.shape[1], np.int64) for c in conn]) if conn else \
        np.zeros(0, np.int64)
    flat = np.concatenate([c.ravel() for c in conn]) if conn else np.zeros(0, np.int64)
    types = np.concatenate([np.full(len(c), t, np.uint8) for t, c in grid.blocks]) if conn else \
        np.zeros(0, np.uint8)
    # (section, name, array, with NumberOfTuples) in the order of the head
    items = []
    for tag, data, n in (("FieldData", grid.field_data, None), ("PointData", grid.point_data, grid.n_points),
                         ("CellData", grid.cell_data, grid.n_cells)):
        for name, a in data.items():
            arr = numeric(a)
            if arr is None or (n is not None and len(arr) != n):
                raise ValueError(f"{tag} array {name!r} is not numeric or has a wrong length")
            items.append((tag, name, arr, tag == "FieldData"))
    items += [("Points", None, pts, False), ("Cells", "connectivity", flat, False),
              ("Cells", "offsets", np.cumsum(sizes), False), ("Cells", "types", types, False)]
    big = any(it[2].nbytes >= 2**32 for it in items)
    header = "<u8" if big else "<u4"
    blobs, offsets, pos = [], [0] * len(items), 0
    for i in reversed(range(len(items))):      # the last array of the head first
        arr = items[i][2]
        raw = np.ascontiguousarray(arr, dtype=arr.dtype.newbyteorder("<")).tobytes()
        blobs.append(np.array([len(raw)]).astype(header).tobytes() + raw)
        offsets[i] = pos
        pos += len(blobs[-1])

    def lines(tag):
        out = ["    " + _array(nm, arr, offsets[i], tup)
               for i, (t, nm, arr, tup) in enumerate(items) if t == tag]
        return [f"  <{tag}>", *out, f"  </{tag}>"] if out else []

    head = ['<?xml version="1.0"?>',
            f'<VTKFile type="UnstructuredGrid" version="{"1.0" if big else "0.1"}" '
            f'byte_order="LittleEndian" header_type="{"UInt64" if big else "UInt32"}">',
            "<UnstructuredGrid>", *lines("FieldData"),
            f'<Piece NumberOfPoints="{grid.n_points}" NumberOfCells="{grid.n_cells}">',
            *lines("PointData"), *lines("CellData"), *lines("Points"), *lines("Cells"),
            "</Piece>", "</UnstructuredGrid>", '<AppendedData encoding="raw">']
    tail = b"\n</AppendedData>\n</VTKFile>\n"
    return ("\n".join(head) + "\n_").encode("utf-8") + b"".join(blobs) + tail
