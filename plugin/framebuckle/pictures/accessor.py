"""PyVista accessor ``grid.buckle``: buckling analysis of a grid in memory, no files.

Registered through the ``pyvista.accessors`` entry point (``pyproject.toml``),
so after ``pip install framebuckle`` any PyVista dataset has it, imported
lazily on first use; ``import framebuckle.pictures.accessor`` registers it explicitly.

The grid must follow the input contract of :mod:`framebuckle.io.read`: line
cells with the cell fields ``axial_force[.<case>]``, ``E``, ``G``, ``A``,
``Iy``, ``Iz``, ``J`` (optional ``orientation``, ``bar`` ...) and the point
field ``restraint``.

>>> res = grid.buckle.solve(modes=4)              # doctest: +SKIP
>>> grid.buckle.load_factors                      # {"default": array([...])}
>>> warped = grid.buckle.warp(mode=1)             # a copy of the grid, points moved
>>> curve = grid.buckle.curve(mode=1)             # PolyData of the smooth (Hermite) shape

The result of the last :meth:`Buckle.solve` is kept on the accessor; after
changing the grid's fields, call ``solve`` again.
"""

from __future__ import annotations

import numpy as np
import pyvista as pv

from ..errors import InputError

NAME = "buckle"


class Buckle:
    """Linear buckling analysis of a PyVista grid of line cells (``grid.buckle``).

    PyVista creates it on first use of ``grid.buckle``; not built by hand.

    Parameters
    ----------
    dataset : pyvista.DataSet
        The grid: line cells with the fields of the input contract (``axial_force[.<case>]``,
        ``E``, ``G``, ``A``, ``Iy``, ``Iz``, ``J``, point field ``restraint``, ...).

    Attributes
    ----------
    result : Result or None
        The result of the last :meth:`solve`, ``None`` before it.
    """

    def __init__(self, dataset):
        self._grid = dataset
        self.result = None

    def solve(self, study=None, *, modes: int | None = None, subdivide: int | None = None, **kw):
        """Solve the grid's buckling problem, as :func:`framebuckle.solve` solves a file.

        Parameters
        ----------
        study : str, pathlib.Path or dict, optional
            A study file (TOML) or a dict of the same content.
        modes : int, optional
            Load factors per case (default 4).
        subdivide : int, optional
            Sub-elements per beam cell (default 8).
        **kw
            Further keyword arguments of :func:`framebuckle.solve` (``planar``, ``preload``,
            ``mesh_check``, ``moment_terms``, ``warping``, ...).

        Returns
        -------
        Result
            The same result as :func:`framebuckle.solve`; also kept as :attr:`result`.
        """
        from ..pipeline.api import solve
        mesh = to_meshio(self._grid)
        self.result = solve(mesh, study, modes=modes, subdivide=subdivide, **kw)
        return self.result

    def _solved(self):
        return self.result if self.result is not None else self.solve()

    @property
    def load_factors(self) -> dict:
        """Load factors of every case, ``{name: array}`` (solving with the defaults if not solved yet)."""
        return self._solved().load_factors

    @property
    def alpha_cr(self) -> dict:
        """Lowest load factor of every case (None where no buckling)."""
        return {c.name: c.alpha_cr for c in self._solved().cases}

    def _mode(self, case, mode):
        res = self._solved()
        c = res.cases[0] if case is None else res.case(case)
        if not 1 <= mode <= len(c.load_factors):
            raise InputError(f"load case '{c.name}' has {len(c.load_factors)} mode(s); mode {mode} does not "
                             f"exist" + (f" ({c.message()})" if c.message() else ""), source=res.input.source)
        return c, c.modes[mode - 1]

    def warp(self, mode: int = 1, case=None, scale: float | None = None):
        """A copy of the grid with its points moved by ``scale`` x mode ``mode`` (1-based).

        The mode is normalised to a largest translation of 1; the default scale
        draws it at 10 % of the model size.

        Parameters
        ----------
        mode : int, default 1
            The mode, 1-based (1 = alpha_cr).
        case : str, optional
            The load case (default: the first).
        scale : float, optional
            Largest displacement drawn, in model length units (default 10 % of the model size).

        Returns
        -------
        pyvista.DataSet
            The moved copy with the point fields ``mode`` (translations) and ``mode_rotation``
            and the field data ``load_factor`` and ``case``.
        """
        c, m = self._mode(case, mode)
        n = self._grid.n_points
        out = self._grid.copy(deep=True)
        size = float(max(np.ptp(np.asarray(out.points), axis=0).max(), 1e-300))
        s = 0.1 * size if scale is None else float(scale)
        out.point_data["mode"] = m[:n, :3]
        out.point_data["mode_rotation"] = m[:n, 3:]
        out.points = np.asarray(out.points, float) + s * m[:n, :3]
        out.field_data["load_factor"] = [float(c.load_factors[mode - 1])]
        out.field_data["case"] = [c.name]
        return out

    def curve(self, mode: int = 1, case=None, scale: float | None = None):
        """The buckled shape along the cubic Hermite curve of every element.

        Parameters
        ----------
        mode : int, default 1
            The mode, 1-based (1 = alpha_cr).
        case : str, optional
            The load case (default: the first).
        scale : float, optional
            Largest displacement drawn, in model length units (default 10 % of the model size).

        Returns
        -------
        pyvista.PolyData
            Smooth curves of the deformed members with the point field ``|u|``.
        """
        from .render import shape_meshes
        from .shapes import from_result
        c, _ = self._mode(case, mode)
        ms = from_result(self.result)
        _, curve, _ = shape_meshes(ms, ms.mode(c.name, mode)[1], scale)
        return curve


def to_meshio(grid):
    """A ``meshio.Mesh`` of a PyVista dataset (cells by type, point and cell fields)."""
    if not isinstance(grid, pv.DataSet):
        raise InputError(f"expected a PyVista dataset, got {type(grid).__name__}", source="<grid>")
    ug = grid if isinstance(grid, pv.UnstructuredGrid) else grid.cast_to_unstructured_grid()
    try:
        return pv.to_meshio(ug)
    except Exception as exc:
        raise InputError(f"cannot convert the grid to a mesh ({type(exc).__name__}: {exc})",
                         source="<grid>") from None


pv.register_dataset_accessor(NAME, pv.DataSet)(Buckle)
