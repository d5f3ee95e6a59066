r"""Mode shapes as smooth curves: cubic Hermite interpolation inside every element.

A mode gives, at each node, three translations and three (small) rotations in
global axes.  Inside a beam element the deflected axis is the same cubic that
the element stiffness assumes.  In local axes (``elements.local_axes``; x
along the element, length ``L``, ``xi = x / L``):

.. math::

    u(\xi) = (1-\xi) u_1 + \xi u_2, \qquad
    v(\xi) = N_1 v_1 + N_2 \theta_{z1} + N_3 v_2 + N_4 \theta_{z2}, \qquad
    w(\xi) = N_1 w_1 - N_2 \theta_{y1} + N_3 w_2 - N_4 \theta_{y2}

with ``N1 = 1 - 3 xi^2 + 2 xi^3``, ``N2 = L (xi - 2 xi^2 + xi^3)``,
``N3 = 3 xi^2 - 2 xi^3``, ``N4 = L (xi^3 - xi^2)`` (``dv/dx = theta_z``,
``dw/dx = -theta_y``).  Pin-ended bars are straight: all three components
are linear.  The curve does not depend on the orientation vector (the
transverse slope is ``theta x e_x`` in any local y-z pair), so a result file
without orientations draws the same curve.

The second half of the module reads what is needed for pictures, either from
a :class:`~framebuckle.pipeline.results.Result` or from a ``<stem>.modes_fine.vtu``
written by ``solve`` (:class:`ModeSet`), without solving again.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..mechanics.elements import local_axes, transformation
from ..errors import InputError
from ..model.model import make_frame

#: points per element along a drawn curve (ends included)
DEFAULT_SAMPLES = 6


def hermite_basis(xi: np.ndarray, L: np.ndarray) -> np.ndarray:
    """Cubic Hermite shape functions, shape (e, s, 4): ``N1, N2, N3, N4``."""
    xi = np.asarray(xi, float)[None, :]
    L = np.asarray(L, float)[:, None]
    x2, x3 = xi * xi, xi ** 3
    return np.stack([np.broadcast_to(1 - 3 * x2 + 2 * x3, (L.shape[0], xi.shape[1])),
                     L * (xi - 2 * x2 + x3),
                     np.broadcast_to(3 * x2 - 2 * x3, (L.shape[0], xi.shape[1])),
                     L * (x3 - x2)], axis=-1)


def element_curves(nodes, elements, orientation, mode, bar=None, samples: int = DEFAULT_SAMPLES):
    """Points along every element and the mode's displacement there.

    Parameters
    ----------
    nodes : (n, 3); elements : (e, 2); orientation : (e, 3) (any valid vector)
    mode : (n, 6) translations and rotations in global axes
    bar : (e,) bool, elements drawn straight (linear in all components)
    samples : points per element, ends included (>= 2)

    Returns
    -------
    points : (e, s, 3) undeformed positions; disp : (e, s, 3) displacements, global axes.
    """
    nodes = np.asarray(nodes, float)
    elements = np.asarray(elements, np.int64)
    mode = np.asarray(mode, float)
    s = max(int(samples), 2)
    frame = _geometry_frame(nodes, elements, orientation)
    R, L = local_axes(frame)
    T = transformation(R)
    ue = np.concatenate([mode[elements[:, 0]], mode[elements[:, 1]]], axis=1)   # (e, 12) global
    ul = np.einsum("eij,ej->ei", T, ue)                                          # (e, 12) local
    xi = np.linspace(0.0, 1.0, s)
    N = hermite_basis(xi, L)                                                     # (e, s, 4)
    lin = np.stack([1 - xi, xi], axis=-1)                                        # (s, 2)
    u = ul[:, [0, 6]] @ lin.T                                                    # (e, s)
    v = np.einsum("esk,ek->es", N, ul[:, [1, 5, 7, 11]])
    w = np.einsum("esk,ek->es", N, ul[:, [2, 4, 8, 10]] * np.array([1.0, -1.0, 1.0, -1.0]))
    if bar is not None and np.any(bar):
        b = np.asarray(bar, bool)
        v[b] = ul[b][:, [1, 7]] @ lin.T
        w[b] = ul[b][:, [2, 8]] @ lin.T
    local = np.stack([u, v, w], axis=-1)                                         # (e, s, 3)
    disp = np.einsum("eji,esj->esi", R, local)                                   # R^T @ local
    a = nodes[elements[:, 0]]
    d = nodes[elements[:, 1]] - a
    points = a[:, None, :] + xi[None, :, None] * d[:, None, :]
    return points, disp


def _geometry_frame(nodes, elements, orientation):
    """A Frame with unit sections: only its geometry is used (local axes)."""
    return make_frame(nodes, elements, 1.0, 1.0, 1.0, 1.0, 1.0, 1.0, orientation=orientation)


# ---------------------------------------------------------------- what pictures need


@dataclass(frozen=True)
class CaseModes:
    name: str
    load_factors: np.ndarray       # (k,)
    modes: np.ndarray              # (k, n, 6), global axes, max translation 1
    message: str = ""              # why there are no modes, if there are none


@dataclass(frozen=True)
class ModeSet:
    """Geometry and modes of a solved model, enough to draw it."""

    nodes: np.ndarray              # (n, 3)
    elements: np.ndarray           # (e, 2)
    bar: np.ndarray                # (e,) bool
    orientation: np.ndarray        # (e, 3)
    cases: tuple                   # CaseModes
    source: str = "<model>"
    cell_id: np.ndarray | None = None   # (e,) input cell of each element

    @property
    def size(self) -> float:
        """Model size: the largest extent of its bounding box."""
        return float(max(np.ptp(self.nodes, axis=0).max(), 1e-300))

    def case(self, name=None) -> CaseModes:
        if name is None:
            for c in self.cases:
                if len(c.load_factors):
                    return c
            return self.cases[0]
        for c in self.cases:
            if c.name == name:
                return c
        raise InputError(f"no load case '{name}'; cases: {', '.join(c.name for c in self.cases)}",
                         source=self.source)

    def mode(self, case=None, k: int = 1) -> tuple[CaseModes, np.ndarray]:
        """Case and mode ``k`` (1-based) as (n, 6)."""
        c = self.case(case)
        if len(c.load_factors) == 0:
            raise InputError(f"load case '{c.name}' has no buckling mode"
                             + (f": {c.message}" if c.message else ""), source=self.source)
        if not 1 <= k <= len(c.load_factors):
            raise InputError(f"load case '{c.name}' has modes 1 to {len(c.load_factors)}; "
                             f"mode {k} does not exist", source=self.source)
        return c, c.modes[k - 1]

    def curves(self, mode: np.ndarray, samples: int = DEFAULT_SAMPLES):
        return element_curves(self.nodes, self.elements, self.orientation, mode, self.bar, samples)


def from_result(result) -> ModeSet:
    """The fine model and modes of a :class:`~framebuckle.pipeline.results.Result`."""
    f = result.fine
    cases = tuple(CaseModes(c.name, np.asarray(c.load_factors, float), np.asarray(c.modes, float),
                            c.message()) for c in result.cases)
    cell_id = np.asarray(result.input.cell_ids)[result.refined.element_map]
    return ModeSet(np.asarray(f.nodes), np.asarray(f.elements), np.asarray(f.bar, bool),
                   np.asarray(f.orientation), cases, result.input.source, cell_id)


_MODE_RE = re.compile(r"^mode_(\d+)(?:\.(.+))?$")


def is_result_grid(grid) -> bool:
    """A grid written by ``solve``: load factors as field data and mode fields."""
    return any(k.startswith("load_factors.") for k in grid.field_data.keys()) and any(
        _MODE_RE.match(k) for k in grid.point_data.keys())


def from_grid(grid, source: str = "<grid>") -> ModeSet:
    """Read a ``<stem>.modes_fine.vtu`` (or ``.modes.vtu``) grid written by ``solve``.

    Uses its line cells (quadratic edges as two), point fields ``mode_<k>[.<case>]``
    and ``mode_<k>_rotation[.<case>]``, field data ``load_factors.<case>``, and the
    optional cell fields ``bar`` and ``cell_id``.
    """
    fd = grid.field_data
    names = [k[len("load_factors."):] for k in fd.keys() if k.startswith("load_factors.")]
    from ..io.write import case_names
    order = case_names(fd)
    if order is not None:
        names = [n for n in order if n in names] + [n for n in names if n not in order]
    if not names:
        raise InputError("not a framebuckle result: no field data 'load_factors.<case>'", source=source)
    elements, keep = _line_elements(grid)
    if len(elements) == 0:
        raise InputError("the result grid has no line cells", source=source)
    bar = np.zeros(len(elements), bool)
    if "bar" in grid.cell_data.keys():
        bar = np.asarray(grid.cell_data["bar"]).ravel()[keep].astype(bool)
    cell_id = np.asarray(grid.cell_data["cell_id"]).ravel()[keep] if "cell_id" in grid.cell_data.keys() else keep
    single = len(names) == 1
    cases = []
    for name in names:
        lam = np.asarray(fd[f"load_factors.{name}"], float).ravel()
        _finite(lam, f"field data 'load_factors.{name}'", source)
        modes = []
        for k in range(1, len(lam) + 1):
            tr = _point_field(grid, k, name, single, False, source)
            rot = _point_field(grid, k, name, single, True, source)
            modes.append(np.concatenate([tr, rot], axis=1))
        modes = np.asarray(modes).reshape(len(lam), grid.n_points, 6)
        msg = "" if len(lam) else "no compression or no positive load factor in this case"
        cases.append(CaseModes(name, lam, modes, msg))
    nodes = np.asarray(grid.points, float)
    from ..model.model import default_orientation
    return ModeSet(nodes, elements, bar, default_orientation(nodes, elements), tuple(cases),
                   source, np.asarray(cell_id, np.int64))


def _finite(a, what, source):
    """A result with NaN or infinite values is damaged: refuse it rather than draw it."""
    bad = ~np.isfinite(a)
    if bad.any():
        first = int(np.flatnonzero(bad.reshape(len(a), -1).any(axis=-1))[0])
        raise InputError(f"{what} has {int(bad.sum())} NaN or infinite value(s) (first at "
                         f"{'point' if a.ndim > 1 else 'entry'} {first}): not a valid result, "
                         f"solve the input again", source=source)


def _point_field(grid, k, case, single, rotation, source):
    base = f"mode_{k}" + ("_rotation" if rotation else "")
    for name in ([base] if single and case == "default" else []) + [f"{base}.{case}"]:
        if name in grid.point_data.keys():
            a = np.asarray(grid.point_data[name], float)
            if a.shape == (grid.n_points, 3):
                _finite(a, f"point field '{name}'", source)
                return a
            raise InputError(f"point field '{name}' must have 3 components, got shape {a.shape}",
                             source=source)
    raise InputError(f"missing point field '{base}.{case}' (or '{base}') for mode {k} of case '{case}'",
                     source=source)


def _line_elements(grid):
    """Two-node elements of a grid's line cells (a quadratic edge gives two) and their cells."""
    import pyvista as pv
    types = np.asarray(grid.celltypes)
    off = np.asarray(grid.cell_offsets if hasattr(type(grid), "cell_offsets") else grid.offset)[:-1]
    cc = np.asarray(grid.cell_connectivity)
    ln = np.flatnonzero(types == pv.CellType.LINE)
    qe = np.flatnonzero(types == pv.CellType.QUADRATIC_EDGE)
    el = [np.column_stack([cc[off[ln]], cc[off[ln] + 1]]),
          np.column_stack([cc[off[qe]], cc[off[qe] + 2]]),
          np.column_stack([cc[off[qe] + 2], cc[off[qe] + 1]])]
    keep = np.concatenate([ln, qe, qe])
    order = np.argsort(keep, kind="stable")
    return np.concatenate(el).astype(np.int64)[order], keep[order]


def load(path) -> ModeSet:
    """Read a result VTU written by ``solve``; raise InputError if it is not one."""
    import pyvista as pv
    p = Path(path)
    if not p.is_file():
        raise InputError("file not found", source=str(p))
    try:
        grid = pv.read(str(p))
    except Exception as exc:
        raise InputError(f"cannot read ({type(exc).__name__}: {exc})", source=str(p)) from None
    return from_grid(grid, str(p))
