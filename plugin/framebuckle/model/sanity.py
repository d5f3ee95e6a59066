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
  than the stiffness (N against N/mm\ :sup:`2` with lengths in m, ...);
* the median strain of the compressed members (the largest over the cases)
  below 1e-7, or every case's alpha_cr above 1e3 with that strain below 1e-5,
  means forces in smaller units than the stiffness (kN against Pa, ...).
  Loaded structures carry some 1e-6 .. 1e-3 (steel at 0.2 .. 200 MPa) and
  design load cases have alpha_cr of some 1 .. 100 (common practice).

Both strain warnings name the likely slip: the stress unit that E's
magnitude suggests, the length unit of A, hence the unit of E A, and the
force unit a power of 1000 away that brings the strain to 1e-4.
"""

from __future__ import annotations

import itertools
import math

import numpy as np
import scipy.sparse as sp
import scipy.sparse.csgraph as csgraph

from .model import Frame

#: points closer than this share of the model's size are "coincident"
COINCIDENT_TOL = 1e-9


def _med(a) -> float:
    a = np.asarray(a, float)
    return float(np.median(a)) if a.size else float("nan")


def unit_warnings(frame: Frame, axial_by_case: dict | None = None, units: dict | None = None) -> list[str]:
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
                       f"a strain this large suggests the forces and E or A use different units"
                       + _slip(frame, _median_strain(frame, {name: axial})[0], units))
    strain, case = _median_strain(frame, axial_by_case)
    if strain < SMALL_STRAIN:
        out.append(f"units: the median axial strain |N| / (E A) of the compressed members is "
                   f"{strain:.3g} (case '{case}', the largest of the cases), far below the "
                   f"1e-6 .. 1e-3 of loaded structures: the forces look too small for E and A"
                   + _slip(frame, strain, units))
    return out


#: median strain |N| / (E A) of the compressed members below which the forces are too small
SMALL_STRAIN = 1e-7
#: alpha_cr above which (with a median strain below ALPHA_STRAIN) the loads look too small
LARGE_ALPHA = 1e3
ALPHA_STRAIN = 1e-5
#: a typical axial strain of compressed members under design loads (steel at about 20 MPa);
#: from memory, common practice: used only to guess the size of a unit slip
TYPICAL_STRAIN = 1e-4

_PREFIX = {0: "", 3: "k", 6: "M", 9: "G", -3: "m", -6: "micro"}


def _median_strain(frame: Frame, axial_by_case: dict | None) -> tuple[float, str | None]:
    """The largest over the cases of the median |N| / (E A) of the compressed members."""
    best, which = float("nan"), None
    for name, axial in (axial_by_case or {}).items():
        axial = np.asarray(axial, float)
        eps = np.abs(axial) / (frame.E * frame.A)
        comp = axial < 0
        if comp.any() and not best >= _med(eps[comp]):
            best, which = _med(eps[comp]), name
    return best, which


def _guess(frame: Frame) -> tuple[int, str, int, str]:
    """Stress unit (exponent, name) that E's magnitude suggests, and length unit of A.

    Young's moduli of structural materials span about 5e9 .. 3e11 Pa (timber to steel,
    from memory), so E >= 1e9 is in Pa, 1e6 .. 1e9 in kPa, 1e3 .. 1e6 in MPa (N/mm^2), below
    in GPa (kN/mm^2); section areas of members are below 1 m^2 and above 1 mm^2 ... 10 mm^2.
    """
    E, A = _med(frame.E), _med(frame.A)
    s = 0 if E >= 1e9 else 3 if E >= 1e6 else 6 if E >= 1e3 else 9
    length = (0, "m") if A < 1.0 else (-3, "mm")
    return s, {0: "Pa", 3: "kPa", 6: "MPa", 9: "GPa"}[s], length[0], length[1]


def _slip(frame: Frame, strain: float, units: dict | None = None) -> str:
    """' ... Likely slip: ...' naming the units that would explain the strain, or ''."""
    if not strain > 0:
        return ""
    return _slip_by(frame, 3 * int(round(math.log10(strain / TYPICAL_STRAIN) / 3)), units)


def _slip_by(frame: Frame, k: int, units: dict | None = None) -> str:
    """The text for forces 10^k times too large (k < 0: too small) for the stiffness."""
    if k == 0:
        return ""
    if units and units.get("force") and units.get("length"):
        from .units import FORCE
        real = FORCE[units["force"]] - k
        name = {v: n for n, v in FORCE.items()}.get(real, f"1e{real} N")
        return (f" (about {10.0 ** abs(k):g} times too {'small' if k < 0 else 'large'}); [units] declares "
                f"force = \"{units['force']}\", but they look like {name}: check the declared units")
    s, sname, ln, lname = _guess(frame)
    ea = s + 2 * ln                          # E A is in 10^ea N
    force = ea - k
    fname = f"{_PREFIX[force]}N" if force in _PREFIX else f"1e{force} N"
    pa = {"Pa": "N/m^2", "kPa": "kN/m^2", "MPa": "N/mm^2", "GPa": "kN/mm^2"}[sname]
    return (f" (about {10.0 ** abs(k):g} times too {'small' if k < 0 else 'large'}). Likely slip: forces "
            f"in {fname} with E in {sname} ({pa}) and lengths in {lname}: E (median {_med(frame.E):.3g}) "
            f"looks like {sname} and A (median {_med(frame.A):.3g}) like {lname}^2, so E A is in "
            f"{_PREFIX.get(ea, '?')}N; give every field in one set of units, or declare them in "
            f"[units] (force, length, stress) so that they are converted")


def load_factor_warnings(frame: Frame, axial_by_case: dict, alpha_by_case: dict,
                         units: dict | None = None) -> list[str]:
    """After the solve: every alpha_cr above :data:`LARGE_ALPHA` with small strains."""
    alphas = {k: a for k, a in alpha_by_case.items() if a is not None}
    if not alphas or min(alphas.values()) <= LARGE_ALPHA:
        return []
    strain, _ = _median_strain(frame, axial_by_case)
    if not strain < ALPHA_STRAIN or strain < SMALL_STRAIN:     # the latter is said already
        return []
    return [f"units: alpha_cr of every case is above {LARGE_ALPHA:g} (lowest {min(alphas.values()):.4g}): "
            f"the loads are less than a thousandth of the buckling loads, which design load cases "
            f"rarely are, and the median axial strain of the compressed members is {strain:.3g}: "
            f"the forces look too small for E and A"
            # design load cases have alpha_cr of about 1 .. 100 (common practice)
            + _slip_by(frame, -3 * max(1, round(math.log10(min(alphas.values()) / 10) / 3)), units)]


def unused_points(frame: Frame) -> np.ndarray:
    """Points that no member uses (geometry points, vertices of other cells)."""
    used = np.zeros(frame.n_nodes, bool)
    used[frame.elements.ravel()] = True
    return np.flatnonzero(~used)


def close_pairs(P: np.ndarray, r: float) -> np.ndarray:
    """Pairs ``(i, j)``, ``i < j``, of rows of ``P`` (n, 3) at most ``r`` apart (Euclidean).

    Candidates are the points sharing a cell of side ``2 r`` in one of the 8 grids shifted by
    0 or ``r`` along each axis: two coordinates at most ``r`` apart share a cell of one of the
    two grids of that axis, so every close pair is a candidate; candidates are then kept by
    their distance.  Sorting only (no tree): the same pairs as ``scipy.spatial.cKDTree.
    query_pairs`` (tests/test_plausible.py), without importing scipy.spatial in every run.
    """
    P = np.asarray(P, float)
    n = len(P)
    if n < 2:
        return np.zeros((0, 2), np.int64)
    r = float(r) if r > 0 else np.finfo(float).tiny
    lo = P.min(axis=0)
    found = []
    for shift in itertools.product((0.0, r), repeat=P.shape[1]):
        key = np.floor((P - lo + np.asarray(shift)) / (2.0 * r)).astype(np.int64)
        order = np.lexsort(key.T[::-1])
        k = key[order]
        brk = np.flatnonzero((k[1:] != k[:-1]).any(axis=1)) + 1
        starts = np.r_[0, brk]
        ends = np.r_[brk, n]
        for a, b in zip(starts[ends - starts > 1], ends[ends - starts > 1]):   # cells shared (rare)
            idx = order[a:b]
            i, j = np.triu_indices(len(idx), 1)
            found.append(np.column_stack([idx[i], idx[j]]))
    if not found:
        return np.zeros((0, 2), np.int64)
    c = np.sort(np.concatenate(found), axis=1)
    c = np.unique(c, axis=0)
    keep = np.linalg.norm(P[c[:, 0]] - P[c[:, 1]], axis=1) <= r
    return c[keep]


def coincident_points(frame: Frame) -> list[tuple[int, int]]:
    """Pairs of distinct points used by members that lie at the same place."""
    used = np.unique(frame.elements.ravel())
    if used.size < 2:
        return []
    P = frame.nodes[used]
    scale = max(float(np.ptp(P, axis=0).max()), 1e-300)
    pairs = close_pairs(P, COINCIDENT_TOL * scale)
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


def sign_warnings(axial_by_case: dict | None, compression_positive: bool = False) -> list[str]:
    """No member of any case in compression, but members in tension: a sign convention slip?"""
    axial = [np.asarray(a, float) for a in (axial_by_case or {}).values()]
    if not axial or any((a < 0).any() for a in axial) or not any((a > 0).any() for a in axial):
        return []
    if compression_positive:
        return ["signs: no member of any load case is in compression although the axial forces were "
                "read compression positive ([analysis] compression = \"positive\"): check the sign "
                "convention of the file"]
    return ["signs: no member of any load case is in compression (axial forces are read tension "
            "positive): if the file gives compression as positive, set [analysis] compression = "
            "\"positive\" in the study file"]


def model_warnings(frame: Frame, axial_by_case: dict | None = None, units: dict | None = None,
                   compression_positive: bool = False, Iw=None) -> list[str]:
    """All plausibility warnings of a coarse (input) model (rules of :mod:`framebuckle.model.plausible`
    included: cell outliers, orientation near the axis, overlapping cells)."""
    from .plausible import axis_warnings, outlier_warnings, overlap_warnings
    with np.errstate(all="ignore"):
        return (coincident_warnings(frame) + part_warnings(frame) + overlap_warnings(frame)
                + outlier_warnings(frame, Iw) + axis_warnings(frame)
                + unit_warnings(frame, axial_by_case, units)
                + sign_warnings(axial_by_case, compression_positive))
