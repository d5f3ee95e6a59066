"""Cell fields of a mesh's line cells: the line blocks and one field's values, checked."""

from __future__ import annotations

import numpy as np

from ..errors import InputError

LINE_TYPES = ("line", "line3")


def _line_blocks(mesh):
    """Indices of line blocks and the global cell offset of every block."""
    offsets = np.cumsum([0] + [len(b.data) for b in mesh.cells])
    blocks = [i for i, b in enumerate(mesh.cells) if b.type in LINE_TYPES]
    return blocks, offsets


def _cell_field(mesh, name, blocks, src, ncomp=None):
    """Values of a cell field on the line cells (concatenated), or None if absent."""
    if name not in mesh.cell_data:
        return None
    arrs = []
    for b in blocks:
        try:
            a = np.asarray(mesh.cell_data[name][b])
        except IndexError:
            raise InputError(f"cell field '{name}' has no values for cell block {b}", source=src) from None
        if a.shape[0] != len(mesh.cells[b].data):
            raise InputError(f"cell field '{name}' has {a.shape[0]} values for {len(mesh.cells[b].data)} "
                             f"cells of block {b}", source=src)
        arrs.append(a)
    a = np.concatenate(arrs)
    if ncomp is None and a.ndim == 2 and a.shape[1] == 1:
        a = a[:, 0]
    if ncomp is None and a.ndim != 1:
        raise InputError(f"cell field '{name}' must have one component, got shape {a.shape}", source=src)
    if ncomp is not None and (a.ndim != 2 or a.shape[1] != ncomp):
        raise InputError(f"cell field '{name}' must have {ncomp} components, got shape {a.shape}", source=src)
    if not np.issubdtype(a.dtype, np.number):
        raise InputError(f"cell field '{name}' is not numeric", source=src)
    return a.astype(float)
