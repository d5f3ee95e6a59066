"""Reading a linear run's mesh (through meshio) into a model and load cases.

Input contract (default field names; a study file may rename them):

* 2-node ``line`` cells are members, ``line3`` cells are two members;
  other cells only define named point sets.
* cell fields: ``axial_force`` or ``axial_force.<case>`` (tension positive;
  compression positive with ``[analysis] compression = "positive"``),
  ``E``, ``G``, ``A``, ``Iy``, ``Iz``, ``J``, optional ``Ip``, ``Iw``,
  ``orientation`` (3 components), ``bar`` (1 = pin-ended axial-only member).
* point field ``restraint`` (n, 6) of 0/1 for [ux, uy, uz, rx, ry, rz].
* optional cell fields ``release_start``, ``release_end`` (6 components of 0/1,
  local [N, Vy, Vz, T, My, Mz], 1 = released), see :mod:`framebuckle.model.releases`.
* instead of (or beside) an axial force: point fields ``displacement`` (n, 3)
  and optional ``rotation`` (n, 3), or ``displacement.<case>`` /
  ``rotation.<case>``; forces recovered by :mod:`framebuckle.io.recover`.
* optional cell fields ``Asy``, ``Asz``: shear areas (Timoshenko beams).
* optional cell fields ``moment_start``, ``moment_end`` (or ``.<case>``): internal
  end moments [T, My, Mz] in local axes, see :mod:`framebuckle.mechanics.moments`.
* XDMF time series: each time step is a load case.

Units: see :mod:`framebuckle.model.units` (stresses converted to the declared force / length^2).
"""

from __future__ import annotations

import copy
from dataclasses import dataclass, field

import meshio
import numpy as np

from ..model import units
from ..errors import InputError
from ..model.model import Frame, first_bad_flag_row, make_frame
from ..model.plausible import duplicate_cells, line3_order, section_errors, section_warnings
from ..model.releases import read_releases
from ..model.sections import DimensionError, table_rows
from .study import SUPPORT_KINDS, Study
from ..mechanics.twistlength import EQUIVALENT_NOTE, twist_lengths
from .cases import _cases, lookalike_case_names
from .fields import _cell_field, _line_blocks
from .meshfile import read_mesh

SECTION_KEYS = ("E", "G", "A", "Iy", "Iz", "J")


@dataclass(frozen=True)
class InputModel:
    """Everything read from one input: the coarse frame, its cases and the source mesh."""

    frame: Frame
    cases: list
    mesh: meshio.Mesh                 # a private copy of the input mesh
    cell_ids: np.ndarray              # (e,) global input cell index of each element
    n_cells: int                      # number of cells in the input mesh (all types)
    point_sets: dict
    units: dict
    notes: list
    source: str
    extra: dict = field(default_factory=dict)   # per-element arrays: Iw, fy, member, ...


# ---------------------------------------------------------------- fields


def point_sets(mesh) -> dict:
    """Named point sets: meshio cell sets and Gmsh physical groups of any cell type."""
    sets: dict[str, set] = {}
    for name, per_block in (mesh.cell_sets or {}).items():
        if name.startswith("gmsh:"):      # meshio's bookkeeping, not a user set
            continue
        s = sets.setdefault(name, set())
        for b, idx in enumerate(per_block):
            if idx is None or len(idx) == 0 or b >= len(mesh.cells):
                continue
            s.update(np.asarray(mesh.cells[b].data)[np.asarray(idx, int)].ravel().tolist())
    phys = mesh.cell_data.get("gmsh:physical")
    if phys is not None and mesh.field_data:
        for name, val in mesh.field_data.items():
            val = np.asarray(val).ravel()
            tag = int(val[0])
            dim = int(val[1]) if val.size > 1 else None   # Gmsh physical tags are per dimension
            s = set()
            for b, block in enumerate(mesh.cells):
                if dim is not None and block.dim != dim:
                    continue
                hit = np.asarray(phys[b]).ravel() == tag
                if hit.any():
                    s.update(np.asarray(block.data)[hit].ravel().tolist())
            if s:
                sets.setdefault(name, set()).update(s)
    return {k: np.array(sorted(v), dtype=np.int64) for k, v in sets.items()}


def section_rows(values: dict, source: str):
    """``sections.table_rows`` with its errors as InputError naming the row and field."""
    try:
        return table_rows(values)
    except DimensionError as err:
        raise InputError(f"[sections.values.{err.key}] {err}", source=source) from None


def _table_values(study: Study, table: str, cellkey, ncells, cell_ids, src):
    """Per-element property arrays from a study table keyed by an integer cell field."""
    out = {}
    values = study.get(table, "values", default={})
    if cellkey is None:
        return out
    whole = np.isfinite(cellkey) & (cellkey == np.rint(cellkey)) & (np.abs(cellkey) < 2 ** 53)
    if not whole.all():
        i = np.flatnonzero(~whole)[0]
        raise InputError(f"cell field '{study.get(table, 'key')}' must hold whole numbers (ids); cell "
                         f"{cell_ids[i]} has {cellkey[i]:g}", source=src)
    if table == "sections":  # rows given by shape and dimensions -> constants
        values, out["_sections"], out["_section_warnings"] = section_rows(values, study.source)
    ids = np.rint(cellkey).astype(np.int64)
    for prop in {p for v in values.values() for p in v}:
        arr = np.full(ncells, np.nan)
        for key, row in values.items():
            try:
                k = int(key)
            except ValueError:
                raise InputError(f"key '{table}.values.{key}' must be an integer id", source=study.source) from None
            if prop in row:
                arr[ids == k] = float(row[prop])
        out[prop] = arr
    known = {int(k) for k in values}
    missing = np.flatnonzero(~np.isin(ids, list(known)))
    if missing.size:
        raise InputError(f"cell {cell_ids[missing[0]]} has {study.get(table, 'key')} = {ids[missing[0]]}, "
                         f"which is not in [{table}.values] ({missing.size} cell(s))", source=study.source)
    return out


# ---------------------------------------------------------------- model


def read_input(inp, study: Study | None = None, source: str | None = None) -> InputModel:
    """Read a path or a ``meshio.Mesh`` into an :class:`InputModel`."""
    study = study or Study()
    if isinstance(inp, meshio.Mesh):
        mesh, steps, src = copy.deepcopy(inp), [], source or "<mesh>"
    else:
        mesh, steps = read_mesh(inp)
        src = str(inp)
    with np.errstate(all="ignore"):     # every value is judged explicitly; no numpy warning on stderr
        return mesh_to_model(mesh, study, src, steps)


def mesh_to_model(mesh: meshio.Mesh, study: Study, src: str, steps=()) -> InputModel:
    notes: list[str] = []
    blocks, offsets = _line_blocks(mesh)
    if not blocks:
        types = sorted({b.type for b in mesh.cells}) + list(getattr(mesh, "info_skipped", []))
        hint = ("; export each member as a 2-point line cell (poly-lines are not read)"
                if any("poly-line" in t for t in types) else "")
        if hint:
            raise InputError(f"no line cells (members) in the mesh; cell types found: {', '.join(types)}{hint}",
                             source=src)
        raise InputError(f"no line cells (members) in the mesh; cell types found: "
                         f"{', '.join(types) or 'none'}", source=src)
    n_cells = int(offsets[-1])
    conn, cell_ids, split = [], [], []
    for b in blocks:
        data = np.asarray(mesh.cells[b].data, dtype=np.int64)
        gid = offsets[b] + np.arange(len(data))
        if mesh.cells[b].type == "line":
            conn.append(data)
            cell_ids.append(gid)
            split.append(np.zeros(len(data), bool))
        else:  # line3: [start, end, middle] -> start-middle, middle-end
            if len(data) and data.max() < len(mesh.points) and data.min() >= 0:
                line3_order(mesh.points, data, gid, src)
            two = np.stack([data[:, [0, 2]], data[:, [2, 1]]], axis=1).reshape(-1, 2)
            conn.append(two)
            cell_ids.append(np.repeat(gid, 2))
            split.append(np.ones(2 * len(data), bool))
    per_cell = [len(mesh.cells[b].data) for b in blocks]
    expand = np.concatenate([np.full(n, 2 if mesh.cells[b].type == "line3" else 1)
                             for b, n in zip(blocks, per_cell)])
    elements = np.concatenate(conn)
    cell_ids = np.concatenate(cell_ids)
    outside = np.flatnonzero((elements < 0).any(1) | (elements >= len(mesh.points)).any(1))
    if outside.size:
        i = outside[0]
        raise InputError(f"cell {cell_ids[i]} refers to point(s) {elements[i].tolist()}, but the file "
                         f"has {len(mesh.points)} points (0 .. {len(mesh.points) - 1}); "
                         f"{outside.size} such cell(s)", source=src)
    ne_cells = int(sum(per_cell))
    duplicate_cells(elements, cell_ids, src)

    def cf(ours, ncomp=None):
        a = _cell_field(mesh, study.field_name(ours), blocks, src, ncomp)
        return None if a is None else np.repeat(a, expand, axis=0)

    # section and material tables from the study file
    tables = {}
    for table in ("materials", "sections"):
        key = study.get(table, "key")
        if key is not None:
            keyvals = _cell_field(mesh, key, blocks, src)
            if keyvals is None:
                raise InputError(f"[{table}] key = '{key}', but the mesh has no cell field '{key}'",
                                 source=study.source)
            tables.update(_table_values(study, table, np.repeat(keyvals, expand), len(elements),
                                        cell_ids, src))
    section_info = {k: tables.pop(k, None) for k in ("_sections", "_section_warnings")}

    bar = cf("bar")
    declared = study.units
    sfac = units.stress_factor(declared)

    def field(name):      # a section/material cell field; stresses to force / length^2
        a = cf(name)
        return a * sfac if a is not None and name in units.STRESS_KEYS and sfac != 1.0 else a

    props = {}
    for name in SECTION_KEYS + ("Ip", "Iw", "fy", "Asy", "Asz"):
        a = tables.get(name)
        if a is None or np.isnan(a).all():
            a = field(name) if name != "fy" else a
        elif np.isnan(a).any():
            f = field(name)
            if f is not None:
                a = np.where(np.isnan(a), f, a)
        props[name] = a
    if bar is not None and first_bad_flag_row(bar[:, None]) is not None:
        i = first_bad_flag_row(bar[:, None])
        raise InputError(f"field '{study.field_name('bar')}' must hold only 0 or 1; cell {cell_ids[i]} has "
                         f"{bar[i]:g}", source=src)
    is_bar = np.zeros(len(elements), bool) if bar is None else bar.astype(bool)
    needed = ["E", "A"] + ([] if is_bar.all() else ["G", "Iy", "Iz", "J"])
    missing = [n for n in needed if props[n] is None]
    if missing:
        have = sorted(mesh.cell_data)
        raise InputError(f"missing section or material field(s) {', '.join(study.field_name(m) for m in missing)}"
                         f"; cell fields in the file: {', '.join(have) or 'none'}", source=src)
    for name in ("G", "Iy", "Iz", "J"):
        if props[name] is None:
            props[name] = np.ones(len(elements))
        elif is_bar.any():
            props[name] = np.where(is_bar & ~np.isfinite(props[name]), 1.0, props[name])
    for name, a in props.items():
        if a is not None and np.isnan(a).any() and name not in ("Iw", "fy", "Asy", "Asz"):
            raise InputError(f"field '{study.field_name(name)}' has no value (NaN) for cell "
                             f"{cell_ids[np.flatnonzero(np.isnan(a))[0]]}", source=src)

    section_errors(props, is_bar, cell_ids, study.field_name, src)
    warnings = section_warnings(props, is_bar, cell_ids, study.field_name)

    # warping: the equivalent torsion constant is formed after the frame (framebuckle.mechanics.twistlength)
    J = props["J"]
    Iw = props["Iw"]
    if Iw is not None:
        if not np.isfinite(Iw).all() or (Iw < 0).any():
            bad = np.flatnonzero(~np.isfinite(Iw) | (Iw < 0))[0]
            raise InputError(f"field '{study.field_name('Iw')}' must be finite and >= 0; cell "
                             f"{cell_ids[bad]} has {Iw[bad]}", source=src)

    orientation = cf("orientation", ncomp=3)

    # restraints: point field OR study supports
    npts = len(mesh.points)
    rname = study.field_name("restraint")
    restraint = np.zeros((npts, 6), bool)
    if rname in mesh.point_data:
        r = np.asarray(mesh.point_data[rname])
        if r.ndim == 1 and r.size == npts * 6:
            r = r.reshape(npts, 6)
        if r.shape != (npts, 6):
            raise InputError(f"point field '{rname}' must have shape ({npts}, 6), got {r.shape}", source=src)
        p = first_bad_flag_row(r)
        if p is not None:
            raise InputError(f"point field '{rname}' must hold only 0 or 1; point {p} has {r[p].tolist()}",
                             source=src)
        restraint = r.astype(float).astype(bool)
    sets = point_sets(mesh)
    restraint = _apply_supports(restraint, study, sets, np.asarray(mesh.points, float), src)

    # end releases (cell fields and [[releases]] of the study file)
    release = read_releases(mesh, study, blocks, offsets, cell_ids, cf("release_start", ncomp=6),
                            cf("release_end", ncomp=6), cf("member"), src)

    frame = make_frame(mesh.points, elements, props["E"], props["G"], props["A"], props["Iy"],
                       props["Iz"], J, Ip=props["Ip"], orientation=orientation, bar=is_bar,
                       restraint=restraint, parent=cell_ids, source=src, release=release,
                       Asy=_shear_area(props["Asy"]), Asz=_shear_area(props["Asz"]))
    twist = None
    if Iw is not None:
        twist = twist_lengths(frame, Iw, cf("member"))
        frame = frame.replace(J=twist.J)
        notes.append(EQUIVALENT_NOTE)

    # load cases
    cases = _cases(mesh, study, blocks, expand, frame, src, steps)
    warnings += lookalike_case_names([c.name for c in cases])
    extra = {"Iw": Iw, "fy": props.get("fy"), "member": cf("member"), "J_raw": props["J"],
             "twist_lengths": twist, "sections": section_info["_sections"] or None,
             "section_warnings": section_info["_section_warnings"] or [],
             "compression": "positive" if study.compression_positive else "negative",
             "warnings": warnings}
    said = units.note(declared)
    if said:
        notes.append(said)
    if study.compression_positive:
        notes.append("[analysis] compression = \"positive\": the axial forces of the file were read "
                     "compression-positive; outputs (N_Ed, axial_force fields) are tension-positive")
    return InputModel(frame, cases, mesh, cell_ids, n_cells, sets, declared, notes, src, extra)


def _shear_area(a):
    """Shear area per element; cells without a value are rigid in shear (inf)."""
    return None if a is None else np.where(np.isnan(a), np.inf, a)


def _apply_supports(restraint, study: Study, sets: dict, points, src):
    for i, sup in enumerate(study.get("supports", default=[]) or []):
        where = f"[[supports]] entry {i + 1}"
        fix = sup.get("fix", "fixed")
        if isinstance(fix, str):
            if fix not in SUPPORT_KINDS:
                raise InputError(f"{where}: fix = '{fix}' is not one of {', '.join(SUPPORT_KINDS)} "
                                 f"or a list of six 0/1", source=study.source)
            fix = SUPPORT_KINDS[fix]
        if len(fix) != 6 or any(v not in (0, 1) for v in fix):
            raise InputError(f"{where}: fix must be six 0/1 values for [ux, uy, uz, rx, ry, rz]",
                             source=study.source)
        pts = []
        if "set" in sup:
            if sup["set"] not in sets:
                raise InputError(f"{where}: point set '{sup['set']}' is not in the mesh; sets found: "
                                 f"{', '.join(sorted(sets)) or 'none'}", source=study.source)
            pts.append(sets[sup["set"]])
        if "box" in sup:
            lo = np.asarray(sup["box"].get("min"), float)
            hi = np.asarray(sup["box"].get("max"), float)
            if lo.shape != (3,) or hi.shape != (3,):
                raise InputError(f"{where}: box needs min and max of three coordinates", source=study.source)
            P = np.zeros((len(points), 3))
            P[:, :points.shape[1]] = points[:, :3]
            inside = np.flatnonzero(((P >= lo) & (P <= hi)).all(axis=1))
            if inside.size == 0:
                raise InputError(f"{where}: the box {lo.tolist()} - {hi.tolist()} contains no point",
                                 source=study.source)
            pts.append(inside)
        if "points" in sup:
            ids = np.asarray(sup["points"], np.int64)
            if ((ids < 0) | (ids >= len(points))).any():
                raise InputError(f"{where}: points refers to a point that does not exist", source=study.source)
            pts.append(ids)
        if not pts:
            raise InputError(f"{where}: give 'set', 'box' or 'points'", source=study.source)
        idx = np.concatenate(pts)
        restraint = restraint.copy()
        restraint[idx] |= np.asarray(fix, bool)
    return restraint
