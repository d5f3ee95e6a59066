"""The same model in other units: every field of the input contract converted consistently.

Not a test module.  ``convert(mesh, force, length)`` multiplies each quantity by the factor its
dimension gives (force unit ``force`` newtons, length unit ``length`` metres):

coordinates, displacements: L; E, G, fy: F/L^2; A, Asy, Asz: L^2; Iy, Iz, J, Ip: L^4;
Iw: L^6; axial forces: F; end moments: F L; rotations, flags, orientation: none.
"""

from __future__ import annotations

import copy

import meshio
import numpy as np

#: unit systems as (name, newtons per force unit, metres per length unit)
SYSTEMS = {"N/m": (1.0, 1.0), "kN/m": (1e3, 1.0), "N/mm": (1.0, 1e-3), "kN/mm": (1e3, 1e-3)}

#: (force power, length power) of every dimensioned field of the input contract
DIMENSIONS = {"E": (1, -2), "G": (1, -2), "fy": (1, -2), "A": (0, 2), "Asy": (0, 2), "Asz": (0, 2),
              "Iy": (0, 4), "Iz": (0, 4), "J": (0, 4), "Ip": (0, 4), "Iw": (0, 6),
              "axial_force": (1, 0), "moment_start": (1, 1), "moment_end": (1, 1),
              "displacement": (0, 1)}


def _factor(name: str, f: float, l: float) -> float | None:
    base = name.split(".", 1)[0]
    if base not in DIMENSIONS:
        return None
    pf, pl = DIMENSIONS[base]
    return f ** pf * l ** pl


def convert(mesh: meshio.Mesh, system: str) -> meshio.Mesh:
    """A copy of ``mesh`` (given in N and m) with every field in the units of ``system``."""
    nf, nl = SYSTEMS[system]
    f, l = 1.0 / nf, 1.0 / nl               # N -> force unit, m -> length unit
    out = copy.deepcopy(mesh)
    out.points = np.asarray(mesh.points, float) * l
    for name, blocks in out.cell_data.items():
        s = _factor(name, f, l)
        if s is not None:
            out.cell_data[name] = [np.asarray(b, float) * s for b in blocks]
    for name, v in out.point_data.items():
        s = _factor(name, f, l)
        if s is not None:
            out.point_data[name] = np.asarray(v, float) * s
    return out
