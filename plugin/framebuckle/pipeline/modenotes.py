"""Notes on a solved case's modes: the input cell of every fine node, and modes that are a twist
of single members without warping stiffness (spurious for open sections without ``Iw``)."""

from __future__ import annotations

import numpy as np

#: share of a mode's geometric work done by the twist term above which it is a torsional mode
TORSION_SHARE = 0.8


def _interior_cell(ref, im):
    """Input cell id of every fine node (input points map to -1)."""
    fine = ref.frame
    cell = np.full(fine.n_nodes, -1, np.int64)
    e = fine.elements
    cell[e[:, 0]] = fine.parent
    cell[e[:, 1]] = fine.parent
    cell[: im.frame.n_nodes] = -1
    return cell


def _torsion_notes(asm, fine, axial, full, lam, im) -> list:
    """Flag modes that are twist of single members (spurious for open sections without Iw)."""
    if im.extra.get("Iw") is not None:
        return []
    from ..mechanics.elements import element_dofs
    dofs = element_dofs(fine)
    notes = []
    Tt = asm.T
    for i in range(full.shape[1]):
        u = full[:, i][dofs]
        ul = np.einsum("eij,ej->ei", Tt, u)
        total = axial * np.einsum("ei,eij,ej->e", u, asm.Ge, u)
        L = fine.lengths()
        tw = np.where(fine.bar, 0.0, axial * fine.Ip / fine.A / L * (ul[:, 9] - ul[:, 3]) ** 2)
        tot = total.sum()
        if tot == 0 or tw.sum() / tot < TORSION_SHARE:
            continue
        per_cell = np.bincount(fine.parent, weights=tw, minlength=fine.parent.max() + 1)
        cells = np.flatnonzero(np.abs(per_cell) > 0.1 * abs(tw.sum()))
        notes.append(f"mode {i + 1} (load factor {lam[i]:.4g}) is a twist of single member(s) "
                     f"(cell(s) {', '.join(str(c) for c in cells[:10])}) without warping stiffness; "
                     f"for open sections (I, channel) give Iw, otherwise this mode is spurious")
    return notes
