r"""Plausibility checks on a valid model: warnings, never errors.

These look for the usual modelling slips in files written by other programs:

* **units** whose magnitudes disagree (a modulus in N/mm\ :sup:`2` with lengths
  in metres, an area in mm\ :sup:`2` with lengths in metres, ...);
* **coincident points that are not joined**: two points at the same place, each
  used by members, but not merged; the members meeting there are then not
  connected, which usually is an export or meshing error;
* **separate parts**: the members form more than one connected group.

Every function takes plain arrays (a :class:`~framebuckle.model.model.Frame` and
axial forces) and returns a list of messages; nothing here touches files.

Unit heuristic (common practice; orders of magnitude of structural materials,
from memory: steel E = 2.1e11 Pa, concrete 3e10 Pa, timber 1e10 Pa, aluminium
7e10 Pa):

* a modulus :math:`E \ge 10^6` is a stress per square metre (Pa, kPa), so
  member lengths are in metres: a median member length above 200 disagrees;
* a modulus :math:`E < 10^6` is a stress per square millimetre or centimetre
  (N/mm\ :sup:`2`, kN/cm\ :sup:`2`, kN/mm\ :sup:`2`, GPa), so lengths are in
  mm or cm: a median member length below 5 disagrees;
* area against length: :math:`A / L^2` (median over members) between 1e-9
  and 0.5 for real members; outside, A and the coordinates use different
  length units;
* second moment against area: :math:`I / A^2` between 1e-3 and 1e3 for real
  sections (solid circle 0.08, rolled I-sections about 1 to 30);
* shear against Young's modulus: :math:`G / E` between 0.05 and 1.0 for
  structural materials (isotropic: 1 / (2 (1 + nu)) = 0.38 for steel);
* axial strain :math:`|N| / (E A)` above 0.05 means forces in larger units
  than the stiffness (kN against N/m\ :sup:`2`, ...).
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp
import scipy.sparse.csgraph as csgraph
from scipy.spatial import cKDTree

from .model import Frame

#: points closer than this share of the model's size are "coincident"
COINCIDENT_TOL = 1e-9


def _med(a) -> float:
    a = np.asarray(a, float)
    return float(np.median(a)) if a.size else float("nan")


def unit_warnings(frame: Frame, axial_by_case: dict | None = None) -> list[str]:
    """Warnings when the magnitudes of E, G, A, I, lengths and forces disagree."""
    out = []
    L = frame.lengths()
    beam = ~frame.bar
    E, A, Lm = _med(frame.E), _med(frame.A), _med(L)
    if E >= 1e6 and Lm > 200:
        out.append(f"units: E (median {E:.3g}) looks like a stress per square metre (Pa or kPa) "
                   f"but member lengths (median {Lm:.3g}) look like millimetres: E and the point "
                   f"coordinates disagree; use one set of units (e.g. N and m, or N and mm)")
    elif E < 1e6 and Lm < 5:
        out.append(f"units: E (median {E:.3g}) looks like a stress per square millimetre "
                   f"(N/mm^2, MPa) but member lengths (median {Lm:.3g}) look like metres: E and the "
                   f"point coordinates disagree; use one set of units (e.g. N and mm, or N and m)")
    ratio = A / Lm ** 2
    if ratio > 0.5 or ratio < 1e-9:
        out.append(f"units: A (median {A:.3g}) against member length (median {Lm:.3g}) gives "
                   f"A / L^2 = {ratio:.3g}, outside 1e-9 .. 0.5 for real members: the area and the "
                   f"point coordinates seem to use different length units")
    if beam.any():
        Ab = _med(frame.A[beam])
        for name in ("Iy", "Iz"):
            r = _med(getattr(frame, name)[beam]) / Ab ** 2
            if r > 1e3 or r < 1e-3:
                out.append(f"units: {name} / A^2 = {r:.3g} (median), outside 1e-3 .. 1e3 for real "
                           f"sections: {name} and A seem to use different length units")
        g = _med(frame.G[beam] / frame.E[beam])
        if g > 1.0 or g < 0.05:
            out.append(f"units: G / E = {g:.3g} (median), outside 0.05 .. 1 for structural "
                       f"materials: G and E seem to use different units")
    for name, axial in (axial_by_case or {}).items():
        eps = np.abs(np.asarray(axial, float)) / (frame.E * frame.A)
        if eps.size and eps.max() > 0.05:
            i = int(np.argmax(eps))
            out.append(f"units: case '{name}': axial force of cell {int(frame.parent[i])} "
                       f"({axial[i]:.3g}) is {eps[i]:.3g} times E A ({frame.E[i] * frame.A[i]:.3g}); "
                       f"a strain this large suggests the forces and E or A use different units")
    return out


def unused_points(frame: Frame) -> np.ndarray:
    """Points that no member uses (geometry points, vertices of other cells)."""
    used = np.zeros(frame.n_nodes, bool)
    used[frame.elements.ravel()] = True
    return np.flatnonzero(~used)


def coincident_points(frame: Frame) -> list[tuple[int, int]]:
    """Pairs of distinct points used by members that lie at the same place."""
    used = np.unique(frame.elements.ravel())
    if used.size < 2:
        return []
    P = frame.nodes[used]
    scale = max(float(np.ptp(P, axis=0).max()), 1e-300)
    pairs = cKDTree(P).query_pairs(COINCIDENT_TOL * scale, output_type="ndarray")
    if len(pairs) == 0:
        return []
    pairs = np.sort(used[pairs], axis=1)
    return [(int(a), int(b)) for a, b in pairs[np.lexsort((pairs[:, 1], pairs[:, 0]))]]


def coincident_warnings(frame: Frame, limit: int = 8) -> list[str]:
    pairs = coincident_points(frame)
    if not pairs:
        return []
    shown = ", ".join(f"{a} and {b}" for a, b in pairs[:limit])
    more = f" and {len(pairs) - limit} more pair(s)" if len(pairs) > limit else ""
    x = frame.nodes[pairs[0][0]]
    return [f"coincident points not joined: points {shown}{more} lie at the same place "
            f"(first at {x[0]:.6g}, {x[1]:.6g}, {x[2]:.6g}) but are separate points, so the members "
            f"meeting there are not connected; usually a meshing or export error: merge them"]


def parts(frame: Frame) -> list[np.ndarray]:
    """Points of each connected group of members (largest first)."""
    e = frame.elements
    g = sp.coo_matrix((np.ones(len(e)), (e[:, 0], e[:, 1])), shape=(frame.n_nodes,) * 2)
    ncomp, label = csgraph.connected_components(g, directed=False)
    used = np.zeros(frame.n_nodes, bool)
    used[e.ravel()] = True
    groups = [np.flatnonzero((label == c) & used) for c in range(ncomp)]
    groups = [g for g in groups if g.size]
    return sorted(groups, key=lambda g: (-g.size, g[0]))


def part_warnings(frame: Frame) -> list[str]:
    groups = parts(frame)
    if len(groups) < 2:
        return []
    desc = "; ".join(f"points {g[:6].tolist()}{' ...' if g.size > 6 else ''} ({g.size})"
                     for g in groups[:4])
    return [f"the members form {len(groups)} separate parts that are not connected to each other "
            f"({desc}); each is analysed on its own supports. If they should be joined, merge the "
            f"points where they meet"]


def model_warnings(frame: Frame, axial_by_case: dict | None = None) -> list[str]:
    """All plausibility warnings of a coarse (input) model."""
    return coincident_warnings(frame) + part_warnings(frame) + unit_warnings(frame, axial_by_case)
