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
  local [N, Vy, Vz, T, My, Mz], 1 = released), see :mod:`framebuckle.releases`.
* instead of (or beside) an axial force: point fields ``displacement`` (n, 3)
  and optional ``rotation`` (n, 3), or ``displacement.<case>`` /
  ``rotation.<case>``; forces recovered by :mod:`framebuckle.recover`.
* optional cell fields ``Asy``, ``Asz``: shear areas (Timoshenko beams).
* optional cell fields ``moment_start``, ``moment_end`` (or ``.<case>``): internal
  end moments [T, My, Mz] in local axes, see :mod:`framebuckle.moments`.
* XDMF time series: each time step is a load case.

Units: see :mod:`framebuckle.units` (stresses converted to the declared force / length^2).
"""

from __future__ import annotations

import contextlib
import copy
import io
from dataclasses import dataclass, field
from pathlib import Path

import meshio
import numpy as np

from . import units
from .errors import InputError
from .model import Frame, LoadCase, first_bad_flag_row, make_case, make_frame
from .releases import read_releases
from .study import SUPPORT_KINDS, Study
from .twistlength import EQUIVALENT_NOTE, twist_lengths

LINE_TYPES = ("line", "line3")
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


# ---------------------------------------------------------------- files


def read_mesh(path: str | Path) -> tuple[meshio.Mesh, list]:
    """Read a mesh file; return the mesh and, for XDMF time series, the steps.

    Each step is ``(time, point_data, cell_data)``.
    """
    p = Path(path)
    src = str(p)
    if not p.exists():
        raise InputError("file not found", source=src)
    if not p.is_file():
        raise InputError("not a file", source=src)
    steps = []
    said = io.StringIO()
    try:
        # meshio prints its reader's complaint and calls sys.exit(1) on some corrupt files
        with contextlib.redirect_stdout(said), contextlib.redirect_stderr(said):
            if p.suffix.lower() in (".xdmf", ".xmf"):
                mesh, steps = _read_xdmf(p)
            elif p.suffix.lower() == ".msh":
                mesh = _read_msh(p)
            else:
                mesh = meshio.read(p)
    except InputError:
        raise
    except SystemExit:
        lines = [ln.strip() for ln in said.getvalue().splitlines() if ln.strip()]
        raise InputError(f"cannot read the mesh ({'; '.join(lines[:2]) or 'unreadable'}); the file "
                         f"may be truncated, corrupt or of an unsupported format", source=src) from None
    except Exception as exc:  # meshio raises many kinds for corrupt files
        kind = type(exc).__name__
        msg = str(exc).strip().splitlines()[0] if str(exc).strip() else kind
        raise InputError(f"cannot read the mesh ({kind}: {msg}); the file may be truncated, "
                         f"corrupt or of an unsupported format", source=src) from None
    return mesh, steps


def _read_msh(p: Path) -> meshio.Mesh:
    """Gmsh MSH through meshio, with point fields put in the order of the points.

    meshio (5.3) stores the points of an MSH 4.1 file in the order of the file's node
    blocks (one per geometric entity) but its ``$NodeData`` fields in node-tag order; when
    the two differ every point field would belong to another point.  The node tags are
    captured while meshio reads the file and the point fields are permuted to match.
    """
    import meshio.gmsh._gmsh41 as g41

    captured = []
    original = g41._read_nodes

    def _read_nodes(*args, **kwargs):
        points, tags, dim_tags = original(*args, **kwargs)
        captured.append(np.asarray(tags).copy())
        return points, tags, dim_tags

    g41._read_nodes = _read_nodes
    try:
        mesh = meshio.read(p)
    finally:
        g41._read_nodes = original
    if not captured:
        return mesh                       # MSH 2.2 stores node data by position
    tags = captured[-1]                   # 0-based node tag of each point, file order
    n = len(mesh.points)
    if np.array_equal(tags, np.arange(n)):
        return mesh
    if tags.min() < 0 or tags.max() >= n or len(np.unique(tags)) != n:
        fields = [k for k in mesh.point_data if not k.startswith("gmsh:")]
        if fields:
            raise InputError(f"node tags are not 1..{n}, so point fields {', '.join(fields)} cannot "
                             f"be matched to points", source=str(p))
        return mesh
    for k in list(mesh.point_data):
        if not k.startswith("gmsh:"):
            mesh.point_data[k] = np.asarray(mesh.point_data[k])[tags]
    return mesh


def _read_xdmf(p: Path):
    """XDMF: a plain mesh, or a time series whose steps become load cases."""
    try:
        with meshio.xdmf.TimeSeriesReader(p) as reader:
            points, cells = reader.read_points_cells()
            steps = []
            for k in range(reader.num_steps):
                t, pd, cd = reader.read_data(k)
                steps.append((t, pd, cd))
        if steps:
            pd0 = steps[0][1]
            mesh = meshio.Mesh(points, cells, point_data=dict(pd0),
                               cell_data={k: v for k, v in steps[0][2].items()})
            return mesh, steps
    except Exception:
        pass
    return meshio.read(p), []


# ---------------------------------------------------------------- fields


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


def _table_values(study: Study, table: str, cellkey, ncells, cell_ids, src):
    """Per-element property arrays from a study table keyed by an integer cell field."""
    out = {}
    values = study.get(table, "values", default={})
    if cellkey is None:
        return out
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
    return mesh_to_model(mesh, study, src, steps)


def mesh_to_model(mesh: meshio.Mesh, study: Study, src: str, steps=()) -> InputModel:
    notes: list[str] = []
    blocks, offsets = _line_blocks(mesh)
    if not blocks:
        types = sorted({b.type for b in mesh.cells})
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

    # warping: the equivalent torsion constant is formed after the frame (framebuckle.twistlength)
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
    extra = {"Iw": Iw, "fy": props.get("fy"), "member": cf("member"), "J_raw": props["J"],
             "twist_lengths": twist,
             "compression": "positive" if study.compression_positive else "negative"}
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


def _cases(mesh, study, blocks, expand, frame, src, steps) -> list[LoadCase]:
    base = study.field_name("axial_force")
    sign = -1.0 if study.compression_positive else 1.0      # to tension positive
    cases = []
    if steps:
        for t, pd, cd in steps:
            sub = meshio.Mesh(mesh.points, mesh.cells, cell_data=cd)
            for name in _case_fields(sub, base):
                a = sign * np.repeat(_cell_field(sub, name, blocks, src), expand)
                label = f"t={t:g}" if name == base else f"t={t:g}/{name[len(base) + 1:]}"
                cases.append(make_case(label, a, frame, src))
    else:
        for name in _case_fields(mesh, base):
            a = sign * np.repeat(_cell_field(mesh, name, blocks, src), expand)
            label = "default" if name == base else name[len(base) + 1:]
            cases.append(make_case(label, a, frame, src))
    cases = _recovered_cases(mesh, study, frame, src, steps, cases)
    if not steps:
        cases = _moment_cases(mesh, study, blocks, expand, frame, src, cases)
    if not cases:
        raise InputError(f"no axial force field: expected a cell field '{base}' or '{base}.<case>' "
                         f"(or point fields '{study.field_name('displacement')}'[.<case>]); "
                         f"cell fields in the file: {', '.join(sorted(mesh.cell_data)) or 'none'}",
                         source=src)
    # combinations of the basic cases, [envelope] vertices, then [analysis] cases selects
    from .combinations import with_combinations
    return with_combinations(cases, study, frame)


def _recovered_cases(mesh, study, frame, src, steps, cases) -> list[LoadCase]:
    """Cases from point displacements (and rotations), see :mod:`framebuckle.recover`."""
    from .recover import disagreement, displacement_fields, recover_case
    by_name = {c.name: i for i, c in enumerate(cases)}
    out = list(cases)
    sources = [(f"t={t:g}", pd) for t, pd, _ in steps] if steps else [(None, mesh.point_data)]
    for prefix, pd in sources:
        for suffix, (dname, rname) in displacement_fields(pd, study).items():
            if prefix is None:
                label = suffix or "default"
            else:
                label = prefix + (f"/{suffix}" if suffix else "")
            axial, moments = recover_case(frame, pd, dname, rname, src)
            extra = {"moments": moments, "moments_from": "displacements"} if moments is not None else {}
            if label in by_name:
                c = out[by_name[label]]
                rel, i = disagreement(c.axial, axial)
                extra["notes"] = [(f"axial forces recovered from '{dname}' agree with the given axial "
                                   f"forces (largest difference {100 * rel:.1g} % of the largest |N|)"
                                   if rel < 1e-6 else
                                   f"axial forces recovered from '{dname}' differ from the given axial force "
                                   f"by up to {100 * rel:.3g} % of the largest |N| (cell {frame.parent[i]}); "
                                   f"the given axial forces are used")
                                  + ("; check that the displacement fields belong to this mesh and its "
                                     "point order" if rel > 0.01 else "")]
                out[by_name[label]] = LoadCase(c.name, c.axial, {**c.extra, **extra})
            else:
                c = make_case(label, axial, frame, src)
                extra["notes"] = [f"axial forces recovered from the point field '{dname}'"
                                  + (f" and end moments from '{rname}'" if rname else "")]
                out.append(LoadCase(c.name, c.axial, extra))
                by_name[label] = len(out) - 1
    return out


def _moment_cases(mesh, study, blocks, expand, frame, src, cases) -> list[LoadCase]:
    """Attach cell fields ``moment_start``/``moment_end`` (see :mod:`framebuckle.moments`) to cases."""
    from .moments import read_moment_fields
    fields = read_moment_fields(list(mesh.cell_data),
                                lambda n: np.repeat(_cell_field(mesh, n, blocks, src, 3), expand, axis=0),
                                study, frame.parent, src)
    out = list(cases)
    names = [c.name for c in out]
    for suffix, M in fields.items():
        label = suffix or "default"
        extra = {"moments": M, "moments_from": "cell fields"}
        if label in names:
            i = names.index(label)
            out[i] = LoadCase(out[i].name, out[i].axial, {**out[i].extra, **extra})
        else:
            c = make_case(label, 0.0, frame, src)
            out.append(LoadCase(c.name, c.axial, {**extra, "notes": ["end moments only (no axial force)"]}))
            names.append(label)
    return out


def _case_fields(mesh, base):
    return [k for k in mesh.cell_data if k == base or k.startswith(base + ".")]


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
