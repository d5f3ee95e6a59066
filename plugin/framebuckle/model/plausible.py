r"""Plausibility rules on input fields: each has a name, a threshold, and is an error or a warning.

Errors (impossible values) raise :class:`~framebuckle.errors.InputError` naming the
field and the input cell; warnings (suspicious values) are returned as messages and
end up in ``Result.warnings`` (and as ``possible reason:`` lines of a later
mechanism error).  The *Plausibility rules* table of docs/user/input.md lists every
rule, the error table of docs/user/troubleshooting.md every message.

Section constants (``Iy``, ``Iz`` about the centroidal axes, ``J`` St Venant
torsion constant, ``Ip`` polar moment about the shear centre, ``Iw`` warping
constant):

* ``torsion-polar``: :math:`J \le I_y + I_z` (Saint-Venant's inequality: of all
  sections of given polar moment the circle is stiffest in torsion, where
  :math:`J = I_p`; Timoshenko & Goodier, *Theory of Elasticity*, 3rd ed. 1970,
  sec. 109, from memory).  Warning above ``(1 + SECTION_TOL) (Iy + Iz)`` (a
  torsion-stiff idealisation is allowed), error above ``J_ERROR (Iy + Iz)``
  unless that cell's Iy or Iz is a ``cell-outlier`` (then they are the slip).
* ``torsion-thin``: :math:`J <` ``J_THIN`` :math:`(I_y + I_z)` is a warning (J in
  a smaller unit than Iy and Iz, e.g. m^4 values of mm^4 data scaled twice).
* ``polar-sum``: :math:`I_p = I_y + I_z + A (y_0^2 + z_0^2) \ge I_y + I_z`
  (parallel-axis theorem about the shear centre).  Error below
  ``(1 - SECTION_TOL) (Iy + Iz)``.
* ``warping-depth``: for a doubly symmetric I section :math:`I_w = I_{min} h^2 / 4`
  with :math:`h` the distance between the flange centroids, and
  :math:`I_{max} \le A h^2 / 4` (all area at the flanges), so
  :math:`\rho = I_w A / (I_{min} I_{max})` is about 1 .. 3 for rolled I sections
  (IPE 300: 1.34; Trahair, *Flexural-Torsional Buckling of Structures*, 1993,
  sec. 1.5 and App. A, from memory); mono-symmetric I sections and channels
  give less.  :math:`\rho > ` ``IW_WARN`` is a warning, :math:`\rho >`
  ``IW_ERROR`` (a depth 100 times the section's own) an error: ``Iw`` in
  mm\ :sup:`6` or cm\ :sup:`6` beside lengths in metres.
* ``cell-outlier``: per cell, ``E``, ``A``, ``Iy``, ``Iz``, ``J`` (beams) and
  ``Iw`` a factor ``OUTLIER`` or more from the model's median (boundary
  included: a kPa/Pa or kN/N slip is exactly 1000): a warning naming the cells
  (a few cells exported in other units).

Geometry:

* ``orientation-near-axis``: a beam with ``Iy`` != ``Iz`` whose orientation
  vector (given or default) is within ``NEAR_AXIS`` (sine of the angle) of its
  axis: its section turns with tiny changes of the geometry; a warning.
* ``duplicate-cell``: two line cells on the same two points: error.
* ``overlapping-cells``: two cells sharing a point and running the same way
  (one lies on the other): warning.
* ``line3-order``: a ``line3`` cell is [start, end, middle]; its third point
  must lie between the first two (projection strictly inside): error.
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError

SECTION_TOL = 0.01
#: J above Iy + Iz by more than this factor is a unit slip (cm^4 beside m gives 1e5 .. 1e8); below it
#: a warning (a deliberately torsion-stiff idealisation is allowed), and also above it when the cell's
#: Iy or Iz is itself a cell outlier (then the bending constants are the likely slip, not J)
J_ERROR = 1e3
#: J below this share of Iy + Iz is a warning (rule torsion-thin): thin-walled open sections give
#: some 1e-4 .. 1e-2 (IPE 300: 2.2e-3; a cold-formed Z 300 x 1.5: about 5e-5; values from memory)
J_THIN = 1e-5
IW_WARN = 10.0
IW_ERROR = 1e4
OUTLIER = 1e3
NEAR_AXIS = 0.05
#: sine of the angle below which two cells sharing a point are collinear
OVERLAP_TOL = 1e-6


def section_errors(props: dict, bar: np.ndarray, cell_ids, name, src) -> None:
    """``torsion-polar``, ``polar-sum`` and ``warping-depth`` (error part) on the raw input fields."""
    Iy, Iz, J = props["Iy"], props["Iz"], props["J"]
    beam = ~np.asarray(bar, bool) & (Iy > 0) & (Iz > 0)      # non-positive values are refused later
    s = Iy + Iz
    bad = np.flatnonzero(beam & (J > J_ERROR * s) & ~_outlying(Iy, beam) & ~_outlying(Iz, beam))
    if bad.size:
        i = bad[0]
        raise InputError(f"field '{name('J')}' of cell {cell_ids[i]} is {J[i]:.4g}, {J[i] / s[i]:.3g} times "
                         f"{name('Iy')} + {name('Iz')} = {s[i]:.4g}: impossible (rule torsion-polar, "
                         f"J <= Iy + Iz, refused above {J_ERROR:g} times); J is probably in another unit "
                         f"(cm^4, mm^4) ({bad.size} cell(s))", source=src)
    Ip = props.get("Ip")
    if Ip is not None:
        bad = np.flatnonzero(beam & np.isfinite(Ip) & (Ip < (1 - SECTION_TOL) * s))
        if bad.size:
            i = bad[0]
            raise InputError(f"field '{name('Ip')}' of cell {cell_ids[i]} is {Ip[i]:.4g}, less than "
                             f"{name('Iy')} + {name('Iz')} = {s[i]:.4g}: impossible (rule polar-sum, "
                             f"Ip >= Iy + Iz) ({bad.size} cell(s))", source=src)
    rho = warping_ratio(props, beam)
    if rho is not None:
        bad = np.flatnonzero(rho > IW_ERROR)
        if bad.size:
            i = bad[0]
            raise InputError(f"field '{name('Iw')}' of cell {cell_ids[i]} is {props['Iw'][i]:.4g}: it implies "
                             f"a section {np.sqrt(rho[i]):.3g} times deeper than its own A, Iy and Iz "
                             f"(rule warping-depth, Iw A / (Imin Imax) = {rho[i]:.3g} > {IW_ERROR:g}); "
                             f"Iw is probably in mm^6 or cm^6 ({bad.size} cell(s))", source=src)


def _outlying(a, where) -> np.ndarray:
    """Cells whose value is more than OUTLIER times off the median over ``where`` (>= 3 cells)."""
    if where.sum() < 3:
        return np.zeros(len(a), bool)
    with np.errstate(all="ignore"):
        r = a / np.median(a[where])
    return where & _far(r)


def _far(r) -> np.ndarray:
    """Ratios at least OUTLIER away from 1, boundary included (a unit slip is exactly a power of
    1000, and one cell's value over a median of equal values is exactly that power)."""
    return (r >= OUTLIER * (1 - 1e-9)) | (r <= (1 + 1e-9) / OUTLIER)


def warping_ratio(props: dict, beam) -> np.ndarray | None:
    """rho = Iw A / (Imin Imax) per element (0 where Iw is absent or for bars)."""
    Iw = props.get("Iw")
    if Iw is None:
        return None
    lo, hi = np.minimum(props["Iy"], props["Iz"]), np.maximum(props["Iy"], props["Iz"])
    with np.errstate(all="ignore"):
        rho = np.where(beam & np.isfinite(Iw), Iw * props["A"] / (lo * hi), 0.0)
    return np.nan_to_num(rho)


def section_warnings(props: dict, bar, cell_ids, name) -> list[str]:
    """``torsion-polar`` (warning part) and ``warping-depth`` (warning part)."""
    out = []
    beam = ~np.asarray(bar, bool)
    s = props["Iy"] + props["Iz"]
    bad = np.flatnonzero(beam & (props["J"] > (1 + SECTION_TOL) * s))
    if bad.size:
        i = bad[0]
        out.append(f"section: {name('J')} of cell(s) {', '.join(str(c) for c in np.unique(cell_ids[bad])[:8])} "
                   f"({props['J'][i]:.4g}) exceeds {name('Iy')} + {name('Iz')} ({s[i]:.4g}), which no real "
                   f"section does (rule torsion-polar, J <= Iy + Iz); fine for a deliberately torsion-stiff "
                   f"member, otherwise check the unit of J")
    thin = np.flatnonzero(beam & (props["J"] < J_THIN * s))
    if thin.size:
        i = thin[0]
        out.append(f"section: {name('J')} of cell(s) {', '.join(str(c) for c in np.unique(cell_ids[thin])[:8])} "
                   f"({props['J'][i]:.4g}) is {props['J'][i] / s[i]:.3g} times {name('Iy')} + {name('Iz')} "
                   f"(rule torsion-thin, below {J_THIN:g}; thin-walled open sections give some 1e-4 .. 1e-2): "
                   f"check the unit of J")
    rho = warping_ratio(props, beam)
    if rho is None:
        return out
    bad = np.flatnonzero(rho > IW_WARN)
    if not bad.size:
        return out
    i = bad[0]
    return out + [f"section: {name('Iw')} of cell {cell_ids[i]} ({props['Iw'][i]:.4g}) implies a section "
            f"{np.sqrt(rho[i]):.3g} times deeper than an I section of its A, Iy and Iz (rule warping-depth, "
            f"Iw A / (Imin Imax) = {rho[i]:.3g} > {IW_WARN:g}); check its unit ({bad.size} cell(s))"]


def outlier_warnings(frame, Iw=None) -> list[str]:
    """``cell-outlier``: cells whose property is more than OUTLIER times off the model's median."""
    out = []
    beam = ~frame.bar
    fields = [("E", frame.E, np.ones(frame.n_elements, bool)), ("A", frame.A, np.ones(frame.n_elements, bool))]
    fields += [(n, getattr(frame, n), beam) for n in ("Iy", "Iz", "J")]
    if Iw is not None:
        Iw = np.asarray(Iw, float)
        fields.append(("Iw", Iw, beam & np.isfinite(Iw) & (Iw > 0)))
    for n, a, where in fields:
        if where.sum() < 3:
            continue
        med = float(np.median(a[where]))
        with np.errstate(all="ignore"):
            r = a / med
        bad = np.flatnonzero(where & _far(r))
        if bad.size:
            cells = np.unique(frame.parent[bad])
            i = bad[0]
            out.append(f"cell outlier: {n} of cell(s) {', '.join(str(c) for c in cells[:8])}"
                       f"{' ...' if cells.size > 8 else ''} ({a[i]:.4g}) is {r[i]:.3g} times the model's "
                       f"median {med:.4g} (rule cell-outlier, factor {OUTLIER:g}): probably another unit")
    return out


def axis_warnings(frame, limit: int = 8) -> list[str]:
    """``orientation-near-axis`` for beams whose section is not symmetric about the axis."""
    from .model import unit_vectors
    beam = ~frame.bar & (np.abs(frame.Iy - frame.Iz) > 1e-3 * np.maximum(frame.Iy, frame.Iz))
    if not beam.any():
        return []
    d = unit_vectors(frame.nodes[frame.elements[:, 1]] - frame.nodes[frame.elements[:, 0]])
    sine = np.linalg.norm(np.cross(d, unit_vectors(frame.orientation)), axis=1)
    bad = np.flatnonzero(beam & (sine < NEAR_AXIS))
    if not bad.size:
        return []
    cells = np.unique(frame.parent[bad])
    return [f"orientation: the orientation vector of cell(s) {', '.join(str(c) for c in cells[:limit])}"
            f"{' ...' if cells.size > limit else ''} is within {np.degrees(np.arcsin(sine[bad[0]])):.2g} "
            f"degrees of the member axis (rule orientation-near-axis, sine < {NEAR_AXIS:g}): the section's "
            f"turn depends on tiny changes of the geometry; give an 'orientation' field across the member"]


def duplicate_cells(elements, cell_ids, src) -> None:
    """``duplicate-cell``: two cells on the same two points (either order)."""
    key = np.sort(np.asarray(elements), axis=1)
    _, first, inv, counts = np.unique(key, axis=0, return_index=True, return_inverse=True, return_counts=True)
    inv = np.asarray(inv).reshape(-1)
    dup = np.flatnonzero(counts[inv] > 1)
    dup = dup[cell_ids[dup] != cell_ids[first[inv[dup]]]]       # the two halves of a line3 are one cell
    if dup.size:
        j = dup[-1]
        i = first[inv[j]]
        raise InputError(f"cell {cell_ids[j]} duplicates cell {cell_ids[i]} (both join points "
                         f"{key[j, 0]} and {key[j, 1]}; rule duplicate-cell): each would add its stiffness; "
                         f"delete one, or give one cell the combined section", source=src)


def overlap_warnings(frame, limit: int = 8) -> list[str]:
    """``overlapping-cells``: cells that share a point and leave it in the same direction."""
    from .model import unit_vectors
    e = frame.elements
    d = unit_vectors(frame.nodes[e[:, 1]] - frame.nodes[e[:, 0]])
    # each element twice: (point, direction away from the point)
    pt = np.concatenate([e[:, 0], e[:, 1]])
    dirs = np.concatenate([d, -d])
    el = np.concatenate([np.arange(len(e))] * 2)
    r = np.round(dirs, 4)
    order = np.lexsort((r[:, 2], r[:, 1], r[:, 0], pt))       # same point, similar direction: adjacent
    pt, dirs, el = pt[order], dirs[order], el[order]
    same = (pt[1:] == pt[:-1]) & (np.einsum("ij,ij->i", dirs[1:], dirs[:-1]) > 1 - OVERLAP_TOL)
    i = np.flatnonzero(same)
    ca, cb = frame.parent[el[i]], frame.parent[el[i + 1]]
    keep = ca != cb
    pairs = [(int(min(x, y)), int(max(x, y))) for x, y in zip(ca[keep][:limit], cb[keep][:limit])]
    if not pairs:
        return []
    pairs = sorted(set(pairs))
    return [f"overlapping cells: cells {', '.join(f'{a} and {b}' for a, b in pairs[:limit])} share a point and "
            f"run the same way, so one lies on the other (rule overlapping-cells): their stiffness adds "
            f"where they overlap; usually an export error"]


def line3_order(points, data, gid, src) -> None:
    """``line3-order``: the third point of each [start, end, middle] cell lies between the other two."""
    P = np.asarray(points, float)
    if P.shape[1] == 2:
        P = np.column_stack([P, np.zeros(len(P))])
    a, b, m = P[data[:, 0]], P[data[:, 1]], P[data[:, 2]]
    ab = b - a
    with np.errstate(all="ignore"):
        t = np.einsum("ij,ij->i", m - a, ab) / np.einsum("ij,ij->i", ab, ab)
    bad = np.flatnonzero(~((t > 0) & (t < 1)))
    if bad.size:
        i = bad[0]
        raise InputError(f"line3 cell {gid[i]} (points {data[i].tolist()}): its third point must be the middle "
                         f"one (order start, end, middle; rule line3-order), but it does not lie between "
                         f"the first two; the cell's points are stored in another order ({bad.size} cell(s))",
                         source=src)


# ---------------------------------------------------------------- study inputs of `check`

#: AISC 360-16 Eq. (A-8-8): R_M = 1 - 0.15 P_mf / P_story lies in [0.85, 1]
RM_RANGE = (0.85, 1.0)
#: drift / height above this is not a first-order storey drift (another length unit)
MAX_DRIFT_RATIO = 0.1
#: fy / E of structural materials (steel 1.1e-3 .. 3.3e-3, aluminium 4e-3; common practice)
FY_E_RANGE = (1e-4, 2e-2)
#: an imperfection amplitude or e0 above this share of the model's size / longest member
MAX_IMPERFECTION = 0.05
#: elastic section modulus W / A^1.5 (solid square 0.17, rolled I 0.9 .. 1.5; common practice)
W_RANGE = (0.01, 100.0)


def model_extent(frame) -> float:
    """Largest span of the points members use (unused points ignored)."""
    used = np.unique(frame.elements)
    return float(np.ptp(frame.nodes[used], axis=0).max())


def storey_errors(s: dict, where: str, case_names, extent: float, src) -> None:
    """Range checks of one ``[[storeys]]`` entry against AISC 360-16 App. 8 and the model's units."""
    if "case" in s and s["case"] not in case_names:
        raise InputError(f"{where}: case = '{s['case']}' is not a load case (rule storey-case); cases: "
                         f"{', '.join(case_names)}", source=src)
    if "R_M" in s and not RM_RANGE[0] <= float(s["R_M"]) <= RM_RANGE[1]:
        raise InputError(f"{where}: R_M = {s['R_M']} is outside {RM_RANGE[0]} .. {RM_RANGE[1]} (rule storey-RM; "
                         f"AISC 360-16 Eq. A-8-8: R_M = 1 - 0.15 P_mf / P_story)", source=src)
    if "P_mf" in s and not 0 <= float(s["P_mf"]) <= float(s["P_story"]):
        raise InputError(f"{where}: P_mf = {s['P_mf']} must lie in 0 .. P_story = {s['P_story']} (rule storey-Pmf: "
                         f"the moment-frame columns carry part of the storey's load)", source=src)
    if "height" in s and float(s["height"]) > 1.01 * extent:
        raise InputError(f"{where}: height = {s['height']} exceeds the whole model's size {extent:.4g} "
                         f"(rule storey-height): probably another length unit than the coordinates",
                         source=src)
    if "drift" in s and "height" in s and float(s["drift"]) > MAX_DRIFT_RATIO * float(s["height"]):
        raise InputError(f"{where}: drift = {s['drift']} is more than {MAX_DRIFT_RATIO:g} x height = {s['height']} "
                         f"(rule storey-drift): not a first-order storey drift; probably another length unit",
                         source=src)


def fy_errors(fy, E, where: str, src) -> None:
    """``yield-modulus``: fy / E within FY_E_RANGE (fy in MPa beside E in Pa gives 1e-9)."""
    fy = np.atleast_1d(np.asarray(fy, float))
    E = np.broadcast_to(np.asarray(E, float), fy.shape)
    ok = ~np.isfinite(fy)
    with np.errstate(all="ignore"):
        r = fy / E
    bad = np.flatnonzero(~ok & ~((r >= FY_E_RANGE[0]) & (r <= FY_E_RANGE[1])))
    if bad.size:
        i = bad[0]
        raise InputError(f"{where}: fy = {fy[i]:.4g} against E = {E[i]:.4g} gives fy / E = {r[i]:.3g}, outside "
                         f"{FY_E_RANGE[0]:g} .. {FY_E_RANGE[1]:g} for structural materials (rule yield-modulus): "
                         f"fy and E seem to use different units", source=src)


def imperfection_errors(imp: dict, frame, src) -> None:
    """Range checks of ``[imperfection]`` against the model's own units."""
    size = model_extent(frame)
    longest = float(frame.lengths().max())
    if "amplitude" in imp and float(imp["amplitude"]) > MAX_IMPERFECTION * size:
        raise InputError(f"[imperfection] amplitude = {imp['amplitude']} is more than {MAX_IMPERFECTION:g} x the "
                         f"model's size {size:.4g} (rule imperfection-size): probably another length unit",
                         source=src)
    if "e0" in imp and float(imp["e0"]) > MAX_IMPERFECTION * longest:
        raise InputError(f"[imperfection] e0 = {imp['e0']} is more than {MAX_IMPERFECTION:g} x the longest member "
                         f"{longest:.4g} (rule imperfection-size): probably another length unit", source=src)
    if "W" in imp:
        A = float(np.median(frame.A[~frame.bar])) if (~frame.bar).any() else float(np.median(frame.A))
        r = float(imp["W"]) / A ** 1.5
        if not W_RANGE[0] <= r <= W_RANGE[1]:
            raise InputError(f"[imperfection] W = {imp['W']} against the median area {A:.4g} gives W / A^1.5 = "
                             f"{r:.3g}, outside {W_RANGE[0]:g} .. {W_RANGE[1]:g} (rule section-modulus): W and "
                             f"A seem to use different length units", source=src)
    if "fy" in imp:
        fy_errors(float(imp["fy"]), float(np.median(frame.E)), "[imperfection]", src)
