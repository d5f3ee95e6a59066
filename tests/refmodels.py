"""Small models for the published-reference tests (not a test module itself).

Every builder returns a ``meshio.Mesh`` that follows the input contract of
:mod:`framebuckle.io.read` (one ``line`` cell per member, cell fields for the
section and the axial force, point field ``restraint``), so the checks run
through the same path a user's file does: ``framebuckle.solve(mesh)``.
"""

from __future__ import annotations

import math

import meshio
import numpy as np

# a steel-like material and a compact section (SI units; values are arbitrary but realistic)
E = 2.1e11
G = 8.1e10
A = 5.0e-3
I = 8.0e-6
J = 2.0e-6

#: support kinds as rows of [ux, uy, uz, rx, ry, rz]
FREE = (0, 0, 0, 0, 0, 0)
FIXED = (1, 1, 1, 1, 1, 1)
PIN = (1, 1, 1, 0, 0, 0)


def line_mesh(points, cells, *, axial, restraint, E=E, G=G, A=A, Iy=I, Iz=I, J=J, Ip=None,
              orientation=None, bar=None, cases=None, extra=None) -> meshio.Mesh:
    """A meshio line mesh; scalars are broadcast to one value per cell.

    ``axial`` is one case (tension positive); ``cases`` a dict ``name -> axial`` of several;
    ``extra`` more cell fields (``name -> scalar or per-cell values``).
    """
    points = np.asarray(points, float)
    cells = np.asarray(cells, np.int64).reshape(-1, 2)
    ne = len(cells)

    def per_cell(v):
        a = np.asarray(v, float)
        return [np.full(ne, float(a)) if a.ndim == 0 else a.copy()]

    cd = {"E": per_cell(E), "G": per_cell(G), "A": per_cell(A), "Iy": per_cell(Iy),
          "Iz": per_cell(Iz), "J": per_cell(J)}
    if cases is None:
        cd["axial_force"] = per_cell(axial)
    else:
        for name, a in cases.items():
            cd[f"axial_force.{name}"] = per_cell(a)
    if Ip is not None:
        cd["Ip"] = per_cell(Ip)
    if orientation is not None:
        o = np.asarray(orientation, float)
        cd["orientation"] = [np.broadcast_to(o, (ne, 3)).copy()]
    if bar is not None:
        cd["bar"] = per_cell(np.asarray(bar, float))
    for name, v in (extra or {}).items():
        cd[name] = per_cell(v)
    r = np.asarray(restraint, float)
    return meshio.Mesh(points, [("line", cells)], point_data={"restraint": r}, cell_data=cd)


def column_restraint(axis: int, ends: str) -> np.ndarray:
    """Restraints of a single column along global ``axis`` (start = base, end = top).

    ``ends``: "pinned-pinned", "fixed-free", "fixed-fixed", "fixed-pinned".  The top
    end is always free to move along the member so that the axial load does work;
    the twist is held at the base so that the model is not a mechanism.
    """
    trans = [i for i in range(3) if i != axis]          # transverse translations
    r = np.zeros((2, 6))
    base, top = ends.split("-")
    r[0, :3] = 1                                         # base never translates
    r[0, 3 + axis] = 1                                   # twist held at the base
    if base == "fixed":
        r[0, 3:] = 1
    if top in ("pinned", "fixed"):
        r[1, trans] = 1
    if top == "fixed":
        r[1, 3:] = 1
    return r


def column(axis: int, ends: str, L: float = 4.0, N: float = -1000.0, **section) -> meshio.Mesh:
    """ONE line cell along global ``axis`` from the origin, axial force ``N``."""
    p = np.zeros((2, 3))
    p[1, axis] = L
    return line_mesh(p, [[0, 1]], axial=N, restraint=column_restraint(axis, ends), **section)


def euler_load(EI: float, L: float, K: float) -> float:
    """P = pi^2 EI / (K L)^2 (Timoshenko & Gere 1961, Theory of Elastic Stability, sec. 2.1-2.3)."""
    return math.pi ** 2 * EI / (K * L) ** 2


def rel(computed: float, reference: float) -> float:
    """Signed relative error of a computed value against its reference."""
    return (computed - reference) / reference


def frame3d(orientation_seed: int = 3) -> dict:
    """A small unsymmetric two-storey 3D frame with a bar brace (keyword arguments of line_mesh).

    Columns in compression, beams partly in tension, one diagonal bar; fixed bases only
    (supports that stay the same under any rigid rotation).  Orientation vectors are
    given explicitly and are not along global axes.
    """
    xs, ys, hs = [0.0, 4.0, 9.0], [0.0, 5.0], [0.0, 3.5, 6.5]
    pts, idx = [], {}
    for s, z in enumerate(hs):
        for j, y in enumerate(ys):
            for i, x in enumerate(xs):
                idx[i, j, s] = len(pts)
                pts.append([x, y + 0.3 * i, z])
    cells, axial, bar = [], [], []
    for (i, j, s), p in idx.items():
        if s > 0:
            cells.append([idx[i, j, s - 1], p])
            axial.append(-(3 - s) * (80e3 + 15e3 * i + 9e3 * j))
            bar.append(0)
            if i + 1 < len(xs):
                cells.append([p, idx[i + 1, j, s]])
                axial.append(4e3 * (i + 1) - 6e3 * j)
                bar.append(0)
            if j + 1 < len(ys):
                cells.append([p, idx[i, j + 1, s]])
                axial.append(-2e3 * (i + s))
                bar.append(0)
    cells.append([idx[0, 0, 0], idx[1, 0, 1]])          # a diagonal brace (bar) in compression
    axial.append(-12e3)
    bar.append(1)
    rng = np.random.default_rng(orientation_seed)
    cells = np.array(cells)
    d = np.asarray(pts)[cells[:, 1]] - np.asarray(pts)[cells[:, 0]]
    o = np.cross(d, rng.normal(size=(len(cells), 3)))    # some vector perpendicular to each member
    restraint = np.zeros((len(pts), 6))
    restraint[[idx[i, j, 0] for i in range(len(xs)) for j in range(len(ys))]] = 1
    return dict(points=np.array(pts), cells=cells, axial=np.array(axial), restraint=restraint,
                orientation=o, bar=np.array(bar), Iy=5e-6, Iz=1.4e-5, J=3e-7)
