"""Small invented models and CLI helpers for the bad-input and fault tests.

The base model is an invented 3D portal: four 4 m columns with fixed bases at
the corners of a 6 m x 5 m plan, four edge beams at the top, steel-like
properties in N and m.  Columns carry -200 kN, beams -5 kN.
"""

from __future__ import annotations

import hashlib
import subprocess
import sys
from pathlib import Path

import meshio
import numpy as np

E, G, A, IY, IZ, J = 2.1e11, 8.1e10, 5.38e-3, 8.36e-5, 6.04e-6, 2.0e-7


def portal_arrays(h=4.0, bx=6.0, by=5.0):
    base = np.array([[0, 0, 0], [bx, 0, 0], [bx, by, 0], [0, by, 0]], float)
    top = base + [0, 0, h]
    points = np.vstack([base, top])
    cols = np.array([[0, 4], [1, 5], [2, 6], [3, 7]])
    beams = np.array([[4, 5], [5, 6], [6, 7], [7, 4]])
    cells = np.vstack([cols, beams])
    axial = np.r_[np.full(4, -2.0e5), np.full(4, -5.0e3)]
    restraint = np.zeros((8, 6))
    restraint[:4] = 1
    return points, cells, axial, restraint


def mesh_from(points, cells, axial, restraint=None, extra_cells=(), **fields):
    """A meshio mesh with one line block (plus ``extra_cells``) and the usual fields."""
    n = len(cells)
    cd = {"axial_force": axial, "E": E, "G": G, "A": A, "Iy": IY, "Iz": IZ, "J": J}
    cd.update(fields)
    cd = {k: v for k, v in cd.items() if v is not None}
    blocks = [("line", np.asarray(cells))] + list(extra_cells)
    cell_data = {}
    for k, v in cd.items():
        a = np.asarray(v, float)
        if a.ndim == 0:
            a = np.full(n, float(a))
        per = [a]
        for t, c in extra_cells:
            per.append(np.zeros((len(c),) + a.shape[1:]))
        cell_data[k] = per
    pd = {} if restraint is None else {"restraint": np.asarray(restraint)}
    return meshio.Mesh(np.asarray(points, float), blocks, point_data=pd, cell_data=cell_data)


def portal(**fields):
    p, c, ax, r = portal_arrays()
    return mesh_from(p, c, ax, r, **fields)


def sha(path: Path) -> str:
    return hashlib.sha256(Path(path).read_bytes()).hexdigest()


def run_cli(*args, cwd=None, env=None):
    """Run ``python -m framebuckle solve ...`` (or the command given first, e.g. ``"check"``);
    return the CompletedProcess."""
    cmd = [] if args and str(args[0]) in ("solve", "check", "report") else ["solve"]
    return subprocess.run([sys.executable, "-m", "framebuckle", *cmd, *map(str, args)],
                          capture_output=True, text=True, cwd=cwd, env=env, timeout=300)
