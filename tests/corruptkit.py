"""Random small steel frames and one-slip corruptions of them, for tests/test_corruption_property.py.

A frame is a plain dict of numpy arrays (points, cells, per-cell fields, restraint, load cases)
so a corruption is a small edit of that dict; ``to_vtu`` writes it with meshio.  Everything is
invented: rectangular storey/bay grids in N and m, doubly symmetric I sections drawn from the
range of rolled sections (depth 0.1 .. 0.6 m) with their constants derived from the plate
dimensions (thin-walled formulas, Trahair, *Flexural-Torsional Buckling of Structures*, 1993,
sec. 1.5 and App. A, from memory):

    A  = 2 b tf + (h - 2 tf) tw
    Iy = (b h^3 - (b - tw) (h - 2 tf)^3) / 12            (strong axis)
    Iz = (2 tf b^3 + (h - 2 tf) tw^3) / 12               (weak axis)
    J  = (2 b tf^3 + (h - tf) tw^3) / 3                  (open thin-walled section)
    Iw = Iz (h - tf)^2 / 4                               (flange centroid distance h - tf)
    Ip = Iy + Iz                                         (shear centre = centroid)

so J <= Iy + Iz and Iw A / (Iz Iy) is about 1 .. 3, as for real I sections.
"""

from __future__ import annotations

import re
from pathlib import Path

import meshio
import numpy as np

E_STEEL, G_STEEL = 2.1e11, 8.1e10
SECTION_FIELDS = ("E", "A", "Iy", "Iz", "J", "Iw")


def i_section(h, b, tf, tw) -> dict:
    hw = h - 2 * tf
    Iz = (2 * tf * b ** 3 + hw * tw ** 3) / 12
    Iy = (b * h ** 3 - (b - tw) * hw ** 3) / 12
    return {"A": 2 * b * tf + hw * tw, "Iy": Iy, "Iz": Iz,
            "J": (2 * b * tf ** 3 + (h - tf) * tw ** 3) / 3, "Iw": Iz * (h - tf) ** 2 / 4, "Ip": Iy + Iz}


def frame(storeys, bays, depth_bays, heights, spans, spans_y, col_sec, beam_sec, pinned, loads):
    """A rectangular frame: ``bays`` x ``depth_bays`` bays (``depth_bays = 0``: a plane frame in x-z),
    ``storeys`` storeys; columns strong axis about global y (plane frames: in plane);
    ``loads`` = list of (case name, per-column-line weights); column forces accumulate downwards."""
    xs = np.r_[0.0, np.cumsum(spans)]
    ys = np.r_[0.0, np.cumsum(spans_y)] if depth_bays else np.zeros(1)
    zs = np.r_[0.0, np.cumsum(heights)]
    nx, ny = len(xs), len(ys)
    gx, gy, gz = np.meshgrid(xs, ys, zs, indexing="ij")
    points = np.c_[gx.ravel(), gy.ravel(), gz.ravel()]
    idx = np.arange(points.shape[0]).reshape(nx, ny, len(zs))
    cells, kind, orient, level, line = [], [], [], [], []
    for i in range(nx):
        for j in range(ny):
            for k in range(storeys):
                cells.append((idx[i, j, k], idx[i, j, k + 1]))
                kind.append("col"); orient.append((1.0, 0, 0)); level.append(k); line.append(i * ny + j)
    for k in range(1, storeys + 1):
        for j in range(ny):
            for i in range(nx - 1):
                cells.append((idx[i, j, k], idx[i + 1, j, k]))
                kind.append("beam"); orient.append((0, 0, 1.0)); level.append(k); line.append(-1)
        for i in range(nx):
            for j in range(ny - 1):
                cells.append((idx[i, j, k], idx[i, j + 1, k]))
                kind.append("beam"); orient.append((0, 0, 1.0)); level.append(k); line.append(-1)
    kind = np.array(kind)
    col = kind == "col"
    fields = {"E": np.full(len(cells), E_STEEL), "G": np.full(len(cells), G_STEEL)}
    for name in ("A", "Iy", "Iz", "J", "Iw", "Ip"):
        fields[name] = np.where(col, col_sec[name], beam_sec[name])
    fields["orientation"] = np.array(orient)
    level, line = np.array(level), np.array(line)
    cases = {}
    for name, weights in loads:
        w = np.asarray(weights, float)[np.maximum(line, 0)]
        # storey k's columns carry the storeys k+1 .. storeys above them
        cases[name] = np.where(col, -w * (storeys - level) / storeys, 0.0)
    # a plane frame restrains only in-plane DOFs (ux, uz, ry), so it is analysed in its plane;
    # a pinned 3D base still holds the column's twist (rz, a fork)
    base = points[:, 2] == 0
    keep = ([0, 2] if pinned else [0, 2, 4]) if not depth_bays else ([0, 1, 2, 5] if pinned else range(6))
    restraint = np.zeros((len(points), 6))
    restraint[np.ix_(base, list(keep))] = 1
    return {"points": points, "cells": np.array(cells), "fields": fields, "cases": cases,
            "restraint": restraint, "point_data": {}}


def to_vtu(f: dict, path: Path, rename=()) -> Path:
    """Write the frame as a VTU; ``rename`` = pairs (old, new) renaming data arrays in the
    XML text after writing (to make two arrays of one name, which meshio's own writer cannot)."""
    cd = {k: [np.asarray(v)] for k, v in f["fields"].items()}
    for name, a in f["cases"].items():
        cd["axial_force" if name is None else f"axial_force.{name}"] = [np.asarray(a, float)]
    pd = {"restraint": f["restraint"], **f["point_data"]}
    mesh = meshio.Mesh(f["points"], [("line", f["cells"])], point_data=pd, cell_data=cd)
    meshio.write(path, mesh, binary=True)
    if rename:
        text = path.read_text()
        for pair in rename:
            old, new = (f'Name="{s}"' for s in pair)
            assert text.count(old) == 1
            text = text.replace(old, new)
        path.write_text(text)
    return path


def scale_field(f, field, cell, factor):
    g = _copy(f)
    g["fields"][field] = g["fields"][field].astype(float)
    g["fields"][field][cell] *= factor
    return g


def set_bar(f, cell, value):
    g = _copy(f)
    g["fields"]["bar"] = np.zeros(len(g["cells"]))
    g["fields"]["bar"][cell] = value
    return g


def duplicate_cell(f, cell, reverse):
    g = _copy(f)
    c = g["cells"][cell]
    g["cells"] = np.vstack([g["cells"], c[::-1] if reverse else c])
    for k, v in g["fields"].items():
        g["fields"][k] = np.concatenate([v, v[cell:cell + 1]])
    for k, v in g["cases"].items():
        g["cases"][k] = np.r_[v, v[cell]]
    return g


def shift_point(f, point, axis, delta):
    g = _copy(f)
    g["points"] = g["points"].copy()
    g["points"][point, axis] += delta
    return g


def add_far_point(f, where):
    g = _copy(f)
    g["points"] = np.vstack([g["points"], where])
    g["restraint"] = np.vstack([g["restraint"], np.zeros(6)])
    return g


def _copy(f):
    return {"points": f["points"], "cells": f["cells"], "restraint": f["restraint"],
            "fields": dict(f["fields"]), "cases": dict(f["cases"]), "point_data": dict(f["point_data"])}


def no_temporaries(out: Path) -> bool:
    return not out.exists() or not any(re.search(r"\.part|\.tmp", p.name) for p in out.rglob("*"))
