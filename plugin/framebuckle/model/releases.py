r"""End releases (hinges) by static condensation of the element matrices.

An element end release frees one local end force component: start
``[N, Vy, Vz, T, My, Mz]`` are local DOFs 0-5, the end's are 6-11.  With the
element's local DOFs split into retained ``r`` and released ``c``, the released
DOFs follow the retained ones through the elastic stiffness (zero end force on
the released components):

.. math::

    u_c = -K_{cc}^{-1} K_{cr} u_r, \qquad u = C u, \qquad
    \tilde K = C^T K C = K_{rr} - K_{rc} K_{cc}^{-1} K_{cr},
    \qquad \tilde K_g = C^T K_g C .

``C`` (12 x 12) is the identity on retained rows and ``-K_cc^-1 K_cr`` on the
released rows (zero columns for released DOFs), so the condensed matrices keep
the 12 x 12 layout with zero rows and columns on released DOFs.  The same
``C`` condenses the geometric stiffness (the usual linearisation: the released
DOFs follow the elastic, not the buckled, shape; exact for the pinned end of a
uniform member as the sub-division is refined).  A member released for ``My``
and ``Mz`` at both ends and not sub-divided carries only ``EA/L`` and ``GJ/L``
plus the string geometric stiffness ``P/L`` on its transverse translations,
i.e. it behaves like a bar (McGuire, Gallagher & Ziemian 2000, Matrix Structural
Analysis, 2nd ed., sec. 13.4 on condensation; Przemieniecki 1968, Theory of
Matrix Structural Analysis, ch. 6).

Only the end elements of a sub-divided input cell are released (see
:func:`framebuckle.model.refine.subdivide`): the start release on the first
sub-element's start, the end release on the last sub-element's end.
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError, ModelError

COMPONENTS = ("N", "Vy", "Vz", "T", "My", "Mz")
#: named release patterns accepted in the study file (per end)
RELEASE_KINDS = {
    "none": [0, 0, 0, 0, 0, 0],
    "pinned": [0, 0, 0, 0, 1, 1],       # moment-free about both bending axes
    "pinned_y": [0, 0, 0, 0, 1, 0],     # moment-free about local y only
    "pinned_z": [0, 0, 0, 0, 0, 1],     # moment-free about local z only
    "torsion": [0, 0, 0, 1, 0, 0],
}
#: smallest eigenvalue of the diagonally scaled released block still taken as non-singular
SINGULAR_TOL = 1e-9


def condensation(Kl: np.ndarray, release: np.ndarray, parent=None, source: str = "<model>") -> np.ndarray:
    """Condensation matrices ``C`` (e, k, k) for local stiffnesses ``Kl`` and masks ``release`` (e, k)
    (k = 12, or 14 for elements with warping DOFs).

    Raises :class:`ModelError` naming the cell when the released block is singular
    (e.g. the axial force or the torque released at both ends: a mechanism).
    """
    D = np.asarray(release, float)
    P = 1.0 - D
    d = np.sqrt(np.abs(np.einsum("eii->ei", Kl)))
    d = np.where(d > 0, d, 1.0)
    Kn = Kl / d[:, :, None] / d[:, None, :]
    eye = np.eye(Kl.shape[1])[None]
    An = D[:, :, None] * Kn * D[:, None, :] + eye * P[:, None, :]
    low = np.linalg.eigvalsh(An)[:, 0]
    bad = np.flatnonzero(low < SINGULAR_TOL)
    if bad.size:
        i = bad[0]
        cell = i if parent is None else int(parent[i])
        rel = [("start " if j < 6 else "end ") + COMPONENTS[j % 6] for j in np.flatnonzero(release[i])]
        raise ModelError(f"the releases of cell {cell} ({', '.join(rel)}) leave the member free to move "
                         f"without deforming (a mechanism within the member; e.g. the same force "
                         f"released at both ends); {bad.size} such element(s)", source=source)
    rhs = -(D[:, :, None] * Kn * P[:, None, :])
    X = np.linalg.solve(An, rhs)                       # scaled: rows c = -Kn_cc^-1 Kn_cr
    X = X * d[:, None, :] / d[:, :, None]              # unscale: u_c = -K_cc^-1 K_cr u_r
    return X * D[:, :, None] + eye * P[:, None, :]


def condense(M: np.ndarray, C: np.ndarray) -> np.ndarray:
    """``C^T M C`` for every element."""
    return np.einsum("eji,ejk,ekl->eil", C, M, C, optimize=True)


def refine_release(release: np.ndarray | None, beams: np.ndarray, bars: np.ndarray, m: int):
    """Releases of the fine elements of :func:`refine.subdivide` (beams' sub-elements, then bars)."""
    if release is None:
        return None
    nb = len(beams)
    fine = np.zeros((nb, m, 12), bool)
    fine[:, 0, :6] = release[beams, :6]
    fine[:, -1, 6:] = release[beams, 6:]
    return np.concatenate([fine.reshape(-1, 12), release[bars]])


def parse_pattern(value, where: str, source: str) -> list:
    """A release pattern from the study file: a name of :data:`RELEASE_KINDS` or six 0/1."""
    if isinstance(value, str):
        if value not in RELEASE_KINDS:
            raise InputError(f"{where} = '{value}' is not one of {', '.join(RELEASE_KINDS)} "
                             f"or a list of six 0/1 for [{', '.join(COMPONENTS)}]", source=source)
        return RELEASE_KINDS[value]
    if not isinstance(value, list) or len(value) != 6 or any(v not in (0, 1) or isinstance(v, float)
                                                             for v in value):
        raise InputError(f"{where} must be six 0/1 values for [{', '.join(COMPONENTS)}] or a name "
                         f"({', '.join(RELEASE_KINDS)})", source=source)
    return [int(v) for v in value]


def cell_sets(mesh, blocks, offsets) -> dict:
    """Named sets of line cells (global input cell ids): meshio cell sets and Gmsh physical groups."""
    sets: dict[str, set] = {}
    for name, per_block in (mesh.cell_sets or {}).items():
        for b, idx in enumerate(per_block):
            if b in blocks and idx is not None and len(idx):
                sets.setdefault(name, set()).update((offsets[b] + np.asarray(idx, np.int64)).tolist())
    phys = mesh.cell_data.get("gmsh:physical")
    if phys is not None and mesh.field_data:
        for name, val in mesh.field_data.items():
            tag = int(np.asarray(val).ravel()[0])
            for b in blocks:
                hit = np.flatnonzero(np.asarray(phys[b]).ravel() == tag)
                if hit.size:
                    sets.setdefault(name, set()).update((offsets[b] + hit).tolist())
    return {k: np.array(sorted(v), np.int64) for k, v in sets.items()}


def read_releases(mesh, study, blocks, offsets, cell_ids, start_field, end_field, member, src):
    """End releases (e, 12) of the elements read from ``mesh`` or None.

    ``start_field``/``end_field`` are the (e, 6) cell fields already expanded to
    elements (None when absent), ``member`` the expanded ``member`` cell field.
    The study file's ``[[releases]]`` entries are OR-ed on top.  For cells split
    into two elements (``line3``) the start release goes to the first element's
    start and the end release to the second element's end.
    """
    ne = len(cell_ids)
    first = np.ones(ne, bool)
    first[1:] = cell_ids[1:] != cell_ids[:-1]
    last = np.ones(ne, bool)
    last[:-1] = cell_ids[:-1] != cell_ids[1:]
    start = np.zeros((ne, 6), bool)
    end = np.zeros((ne, 6), bool)
    for f, out, name in ((start_field, start, "release_start"), (end_field, end, "release_end")):
        if f is None:
            continue
        ok = np.isfinite(f).all(axis=1) & np.isin(f, (0.0, 1.0)).all(axis=1)
        if not ok.all():
            i = int(np.flatnonzero(~ok)[0])
            raise InputError(f"cell field '{study.field_name(name)}' must hold only 0 or 1 for "
                             f"[{', '.join(COMPONENTS)}]; cell {cell_ids[i]} has {f[i].tolist()}", source=src)
        out |= f.astype(bool)
    entries = study.get("releases", default=[]) or []
    if entries:
        sets = cell_sets(mesh, blocks, offsets)
    for k, ent in enumerate(entries):
        where = f"[[releases]] entry {k + 1}"
        hit = np.zeros(ne, bool)
        if "set" in ent:
            if ent["set"] not in sets:
                raise InputError(f"{where}: cell set '{ent['set']}' of line cells is not in the mesh; sets "
                                 f"found: {', '.join(sorted(sets)) or 'none'}", source=study.source)
            hit |= np.isin(cell_ids, sets[ent["set"]])
        if "member" in ent:
            if member is None:
                raise InputError(f"{where}: member = {ent['member']} but the mesh has no cell field "
                                 f"'{study.field_name('member')}'", source=study.source)
            hit |= np.isin(np.rint(member).astype(np.int64), np.asarray(ent["member"], np.int64))
        if "cells" in ent:
            ids = np.asarray(ent["cells"], np.int64)
            missing = ids[~np.isin(ids, cell_ids)]
            if missing.size:
                raise InputError(f"{where}: cell {missing[0]} is not a line cell of the mesh",
                                 source=study.source)
            hit |= np.isin(cell_ids, ids)
        if not ("set" in ent or "member" in ent or "cells" in ent):
            raise InputError(f"{where}: give 'set', 'member' or 'cells'", source=study.source)
        if not hit.any():
            raise InputError(f"{where}: selects no cell", source=study.source)
        for key, out in (("start", start), ("end", end)):
            if key in ent:
                out[hit] |= np.asarray(parse_pattern(ent[key], f"{where}: {key}", study.source), bool)
    if not (start.any() or end.any()):
        return None
    rel = np.zeros((ne, 12), bool)
    rel[first, :6] = start[first]
    rel[last, 6:] = end[last]
    return rel
