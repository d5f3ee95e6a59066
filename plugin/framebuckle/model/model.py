"""The structural model as validated numpy arrays (no file I/O here).

A :class:`Frame` holds nodes, two-node elements and per-element section
properties; a :class:`LoadCase` holds one axial force per element.  All
arrays are read-only after construction.

Degrees of freedom are numbered node-major, six per node, in global axes:
``dof = 6 * node + c`` with ``c`` in ``[ux, uy, uz, rx, ry, rz]``.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError

DOF_NAMES = ("ux", "uy", "uz", "rx", "ry", "rz")
SECTION_FIELDS = ("E", "G", "A", "Iy", "Iz", "J")
#: Members closer than this (sine of the angle) to the global Z axis are
#: "vertical" and get global X as their default orientation vector (1 mm per
#: metre: export noise of a few micrometres never turns a column's section).
VERTICAL_TOL = 1e-3
#: Plausible magnitudes of every input number (model units): a nonzero section
#: property or member length outside this range, or an axial force or
#: coordinate beyond its upper end, is an error (products in the element
#: matrices would overflow or underflow).
MAGNITUDE = (1e-30, 1e30)


def _frozen(a, dtype=float):
    a = np.array(a, dtype=dtype, copy=True)
    a.setflags(write=False)
    return a


def default_orientation(nodes: np.ndarray, elements: np.ndarray) -> np.ndarray:
    """Global Z for every element, global X for (nearly) vertical ones."""
    d = nodes[elements[:, 1]] - nodes[elements[:, 0]]
    L = np.linalg.norm(d, axis=1)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        horiz = np.hypot(d[:, 0], d[:, 1]) / L
    out = np.zeros((len(elements), 3))
    vertical = horiz < VERTICAL_TOL
    out[~vertical, 2] = 1.0
    out[vertical, 0] = 1.0
    return out


@dataclass(frozen=True)
class Frame:
    """Nodes, elements and sections of a 3D frame or truss.

    Attributes
    ----------
    nodes : (n, 3) float
    elements : (e, 2) int, node indices of start and end
    E, G, A, Iy, Iz, J, Ip : (e,) float
        Young's and shear modulus, area, second moments about local y and z,
        torsion constant, polar second moment (``Iy + Iz`` unless given).
    orientation : (e, 3) float
        Vector that with the element axis spans the local x-z plane.
    bar : (e,) bool
        Pin-ended axial-only member.
    restraint : (n, 6) bool
        Fixed global DOFs.
    parent : (e,) int
        Index of the input cell each element comes from.
    release : (e, 12) bool or None
        End releases in local axes, start ``[N, Vy, Vz, T, My, Mz]`` then end
        (``True`` = released); condensed out of the element matrices.
    Asy, Asz : (e,) float or None
        Shear areas for shear along local y and z (Timoshenko beams); ``None``
        or ``inf`` = rigid in shear (Euler-Bernoulli).
    """

    nodes: np.ndarray
    elements: np.ndarray
    E: np.ndarray
    G: np.ndarray
    A: np.ndarray
    Iy: np.ndarray
    Iz: np.ndarray
    J: np.ndarray
    Ip: np.ndarray
    orientation: np.ndarray
    bar: np.ndarray
    restraint: np.ndarray
    parent: np.ndarray
    source: str = "<model>"
    release: np.ndarray | None = None
    Asy: np.ndarray | None = None
    Asz: np.ndarray | None = None

    @property
    def n_nodes(self) -> int:
        return len(self.nodes)

    @property
    def n_elements(self) -> int:
        return len(self.elements)

    @property
    def n_dofs(self) -> int:
        return 6 * len(self.nodes)

    def lengths(self) -> np.ndarray:
        d = self.nodes[self.elements[:, 1]] - self.nodes[self.elements[:, 0]]
        return np.linalg.norm(d, axis=1)

    def replace(self, **changes) -> "Frame":
        kw = {k: getattr(self, k) for k in self.__dataclass_fields__}
        kw.update(changes)
        return make_frame(**kw)


@dataclass(frozen=True)
class LoadCase:
    """One load case: an axial force per element (tension positive)."""

    name: str
    axial: np.ndarray
    extra: dict = field(default_factory=dict, compare=False)


def make_frame(nodes, elements, E, G, A, Iy, Iz, J, Ip=None, orientation=None,
               bar=None, restraint=None, parent=None, source="<model>", release=None,
               Asy=None, Asz=None) -> Frame:
    """Build a :class:`Frame`, broadcasting scalars and validating everything.

    Raises :class:`InputError` naming the element or node at fault.
    """
    nodes = np.asarray(nodes, dtype=float)
    if nodes.ndim != 2 or nodes.shape[1] not in (2, 3):
        raise InputError(f"points must have shape (n, 3), got {nodes.shape}", source=source)
    if nodes.shape[1] == 2:
        nodes = np.column_stack([nodes, np.zeros(len(nodes))])
    elements = np.asarray(elements)
    if elements.ndim != 2 or elements.shape[1] != 2 or len(elements) == 0:
        raise InputError("no two-node line elements in the model", source=source)
    elements = elements.astype(np.int64)
    ne, nn = len(elements), len(nodes)
    bad = np.flatnonzero((elements < 0).any(1) | (elements >= nn).any(1))
    if bad.size:
        raise InputError(f"cell {bad[0]} refers to a point that does not exist", source=source)
    _check_finite(nodes, "points", source, per="point")
    used = np.unique(elements)
    big = np.flatnonzero((np.abs(nodes[used]) > MAGNITUDE[1]).any(axis=1))
    if big.size:
        raise InputError(f"point {used[big[0]]} has a coordinate beyond {MAGNITUDE[1]:g} in size "
                         f"({nodes[used[big[0]]].tolist()}): not a plausible model size", source=source)

    parent = np.arange(ne) if parent is None else np.asarray(parent, dtype=np.int64)
    props = {}
    for name, val in (("E", E), ("G", G), ("A", A), ("Iy", Iy), ("Iz", Iz), ("J", J)):
        props[name] = _per_element(val, name, ne, source, parent)
    props["Ip"] = (props["Iy"] + props["Iz"]) if Ip is None else _per_element(Ip, "Ip", ne, source, parent)

    if bar is None:
        bar = np.zeros(ne, bool)
    else:
        b = np.asarray(bar)
        b = b.astype(float) if b.dtype == bool else b
        b = _per_element(b, "bar", ne, source, parent)
        i = first_bad_flag_row(b[:, None])
        if i is not None:
            raise InputError(f"field 'bar' must hold only 0 or 1; cell {parent[i]} has {b[i]:g}", source=source)
        bar = b.astype(bool)
    # bars need only E and A; beams need everything strictly positive
    for name in ("E", "A"):
        _check_positive(props[name], name, source, parent=parent)
    for name in ("G", "Iy", "Iz", "J", "Ip"):
        _check_positive(props[name], name, source, where=~bar, parent=parent)
    for name, a in props.items():
        _check_magnitude(a, name, source, parent, where=None if name in ("E", "A") else ~bar)

    L = np.linalg.norm(nodes[elements[:, 1]] - nodes[elements[:, 0]], axis=1)
    # the tolerance comes from the points members use (unused points are ignored everywhere)
    scale = max(float(np.ptp(nodes[used], axis=0).max()), float(L.max()), 1e-300)
    zero = np.flatnonzero(L <= 1e-9 * scale)
    if zero.size:
        raise InputError(
            f"cell {parent[zero[0]]} has zero length (points {elements[zero[0], 0]} and "
            f"{elements[zero[0], 1]} coincide); {zero.size} such cell(s)", source=source)
    tiny = np.flatnonzero(L < MAGNITUDE[0])
    if tiny.size:
        raise InputError(f"cell {parent[tiny[0]]} is {L[tiny[0]]:.3g} long: below {MAGNITUDE[0]:g}, not a "
                         f"plausible member length in any unit", source=source)

    if orientation is None:
        orientation = default_orientation(nodes, elements)
    else:
        orientation = np.asarray(orientation, dtype=float)
        if orientation.shape != (ne, 3):
            raise InputError(f"field 'orientation' must have shape ({ne}, 3), got {orientation.shape}",
                             source=source)
        _check_finite(orientation, "orientation", source, labels=parent)
        axis = (nodes[elements[:, 1]] - nodes[elements[:, 0]]) / L[:, None]
        unit = unit_vectors(orientation)       # judged after normalising: any length is fine
        perp = np.linalg.norm(np.cross(axis, unit), axis=1)
        across = perp > 1e-6                   # False for zero vectors (NaN)
        badv = np.flatnonzero(~bar & ~across)
        if badv.size:
            raise InputError(
                f"field 'orientation' of cell {parent[badv[0]]} is zero or parallel to the member axis; "
                f"{badv.size} such cell(s)", source=source)
        # bars do not need an orientation; give them a valid one
        if bar.any():
            orientation = orientation.copy()
            dflt = default_orientation(nodes, elements)
            orientation[bar & ~across] = dflt[bar & ~across]
        orientation = np.where(across[:, None], unit, orientation)

    if restraint is None:
        restraint = np.zeros((nn, 6), bool)
    else:
        r = np.asarray(restraint)
        if r.shape != (nn, 6):
            raise InputError(f"point field 'restraint' must have shape ({nn}, 6), got {r.shape}",
                             source=source)
        p = first_bad_flag_row(r)
        if p is not None:
            raise InputError(f"point field 'restraint' must hold only 0 or 1; point {p} has {r[p].tolist()}",
                             source=source)
        restraint = r.astype(bool)

    release = _release(release, ne, bar, source, parent)
    shear = {}
    for name, val in (("Asy", Asy), ("Asz", Asz)):
        if val is None:
            shear[name] = None
            continue
        a = np.asarray(val, dtype=float)
        a = np.full(ne, float(a)) if a.ndim == 0 else a.reshape(-1) if a.ndim == 2 and a.shape[1] == 1 else a
        if a.shape != (ne,):
            raise InputError(f"field '{name}' must have one value per cell ({ne}), got shape {a.shape}",
                             source=source)
        if np.isnan(a).any():
            raise InputError(f"field '{name}' has NaN values at cell {parent[np.flatnonzero(np.isnan(a))[0]]}",
                             source=source)
        _check_positive(a, name, source, where=~bar, parent=parent)
        shear[name] = _frozen(a)

    return Frame(nodes=_frozen(nodes), elements=_frozen(elements, np.int64),
                 **{k: _frozen(v) for k, v in props.items()},
                 orientation=_frozen(orientation), bar=_frozen(bar, bool),
                 restraint=_frozen(restraint, bool), parent=_frozen(parent, np.int64),
                 source=source, release=release, **shear)


def _release(release, ne, bar, source, parent):
    """Validate end releases (e, 12) of 0/1; ``None`` when nothing is released (bars ignored)."""
    if release is None:
        return None
    r = np.asarray(release)
    if r.shape != (ne, 12):
        raise InputError(f"end releases must have shape ({ne}, 12), got {r.shape}", source=source)
    i = first_bad_flag_row(r)
    if i is not None:
        raise InputError(f"fields 'release_start'/'release_end' must hold only 0 or 1; cell {parent[i]} has "
                         f"{r[i].tolist()}", source=source)
    r = r.astype(float).astype(bool) & ~bar[:, None]
    return _frozen(r, bool) if r.any() else None


def make_case(name: str, axial, frame: Frame, source: str | None = None) -> LoadCase:
    """Validate an axial-force array against ``frame``."""
    src = source or frame.source
    a = np.asarray(axial, dtype=float)
    if a.ndim == 0:
        a = np.full(frame.n_elements, float(a))
    a = a.reshape(-1) if a.ndim == 2 and 1 in a.shape else a
    if a.shape != (frame.n_elements,):
        raise InputError(f"axial force of case '{name}' must have one value per cell "
                         f"({frame.n_elements}), got shape {a.shape}", source=src)
    _check_finite(a, f"axial force of case '{name}'", src, labels=frame.parent)
    big = np.flatnonzero(np.abs(a) > MAGNITUDE[1])
    if big.size:
        raise InputError(f"axial force of case '{name}' at cell {frame.parent[big[0]]} is {a[big[0]]:.3g}: "
                         f"beyond {MAGNITUDE[1]:g} in size, not a plausible force in any unit", source=src)
    return LoadCase(name=name, axial=_frozen(a))


def first_bad_flag_row(r) -> int | None:
    """Index of the first row of a 0/1 flag array holding anything else (NaN included), or None."""
    rf = np.asarray(r).astype(float)
    ok = np.isfinite(rf).all(axis=1) & np.isin(rf, (0.0, 1.0)).all(axis=1)
    return None if ok.all() else int(np.flatnonzero(~ok)[0])


def _per_element(val, name, ne, source, parent=None):
    a = np.asarray(val, dtype=float)
    if a.ndim == 0:
        a = np.full(ne, float(a))
    if a.ndim == 2 and a.shape[1] == 1:
        a = a[:, 0]
    if a.shape != (ne,):
        raise InputError(f"field '{name}' must have one value per cell ({ne}), got shape {a.shape}",
                         source=source)
    _check_finite(a, name, source, labels=parent)
    return a


def _check_finite(a, name, source, per="cell", labels=None):
    ok = np.isfinite(a)
    if not ok.all():
        idx = np.flatnonzero(~ok.reshape(len(a), -1).all(axis=1))
        first = idx[0] if labels is None else labels[idx[0]]
        raise InputError(f"field '{name}' has NaN or infinite values at {per} {first}"
                         f" ({idx.size} {per}(s) in all)", source=source)


def unit_vectors(v) -> np.ndarray:
    """Rows of ``v`` scaled to length 1 without overflow (zero rows give NaN)."""
    v = np.asarray(v, float)
    with np.errstate(invalid="ignore", divide="ignore"):
        m = np.abs(v).max(axis=1, keepdims=True)
        w = v / m
        return w / np.linalg.norm(w, axis=1, keepdims=True)


def _check_magnitude(a, name, source, parent, where=None):
    """Nonzero values outside :data:`MAGNITUDE` are an error (a unit or export slip, never a section)."""
    x = np.abs(a)
    bad = (x > 0) & ((x < MAGNITUDE[0]) | (x > MAGNITUDE[1]))
    if where is not None:
        bad &= where
    idx = np.flatnonzero(bad)
    if idx.size:
        raise InputError(f"field '{name}' of cell {parent[idx[0]]} is {a[idx[0]]:.3g}: outside "
                         f"{MAGNITUDE[0]:g} .. {MAGNITUDE[1]:g} in size, not a plausible value in any unit "
                         f"({idx.size} cell(s) in all)", source=source)


def _check_positive(a, name, source, where=None, parent=None):
    bad = a <= 0
    if where is not None:
        bad &= where
    idx = np.flatnonzero(bad)
    if idx.size:
        cell = idx[0] if parent is None else parent[idx[0]]
        raise InputError(f"field '{name}' must be positive; cell {cell} has {a[idx[0]]:g}"
                         f" ({idx.size} cell(s) in all)", source=source)
