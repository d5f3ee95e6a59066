"""The pipeline without files: read -> model -> refine -> assemble -> solve -> results."""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import numpy as np

from . import sanity, verify
from .assemble import Assembler
from .errors import InputError, ModelError, SolverError
from .read import InputModel, read_input
from .refine import subdivide as _subdivide
from .results import CaseResult, Result, normalise_modes
from .solve import buckling_modes, check_supported, factorize, find_constraints
from .study import Study, load_study, study_from_dict

DEFAULT_MODES = 4
DEFAULT_SUBDIVIDE = 4
#: share of a mode's geometric work done by the twist term above which it is a torsional mode
TORSION_SHARE = 0.8


def _as_study(study) -> Study:
    if study is None:
        return Study()
    if isinstance(study, Study):
        return study
    if isinstance(study, dict):
        return study_from_dict(study)
    return load_study(study)


def solve(inp, study=None, *, modes: int | None = None, subdivide: int | None = None,
          planar: bool | str | None = None, method: str | None = None, progress=None) -> Result:
    """Linear buckling analysis of a line-element mesh.

    Parameters
    ----------
    inp : path, ``meshio.Mesh`` or :class:`~framebuckle.read.InputModel`
    study : path of a TOML study file, a dict of the same content, or a Study
    modes : number of load factors per case (default 4)
    subdivide : sub-elements per beam cell (default 4)
    planar : ``"auto"`` (default), ``True`` or ``False``
    method : eigensolver: ``"auto"``, ``"dense"`` or ``"arpack"``
    """
    st = _as_study(study)
    k = int(modes or st.get("analysis", "modes", default=DEFAULT_MODES))
    m = int(subdivide or st.get("analysis", "subdivide", default=DEFAULT_SUBDIVIDE))
    if k < 1:
        raise InputError(f"the number of modes must be at least 1, got {k}", source=st.source)
    if m < 1:
        raise InputError(f"the sub-division must be at least 1, got {m}", source=st.source)
    pl = planar if planar is not None else st.get("analysis", "planar", default="auto")
    if pl not in (True, False, "auto"):
        raise InputError(f"[analysis] planar must be true, false or \"auto\", got {pl!r}", source=st.source)
    meth = method or st.get("analysis", "eigensolver", default="auto")
    if meth not in ("auto", "dense", "arpack", "sparse"):
        raise InputError(f"unknown eigensolver '{meth}' (auto, dense, arpack)", source=st.source)

    im = inp if isinstance(inp, InputModel) else read_input(inp, st)
    return run(im, k, m, pl, meth, progress=progress)


def run(im: InputModel, k: int, m: int, planar, method, progress=None) -> Result:
    ref = _subdivide(im.frame, m)
    fine = ref.frame
    asm = Assembler.build(fine)
    K = asm.stiffness()
    cons = find_constraints(fine, K, planar)
    cons = _ignore_unused(cons, fine)
    n_in = im.frame.n_nodes
    coarse_cell = _interior_cell(ref, im)
    warnings = sanity.model_warnings(im.frame, {c.name: c.axial for c in im.cases})
    try:
        check_supported(fine, cons, n_in, im.source)
        factor, Kff = factorize(K, cons, fine, n_in, im.source, coarse_cell)
    except ModelError as exc:
        raise _explained(exc, warnings) from None
    free = cons.free
    weak = verify.stiffness_warnings(factor, Kff, free, n_in, coarse_cell, asm)[0]
    warnings += weak
    cases = []
    v0 = None
    for case in im.cases:
        axial = ref.fine_axial(case.axial)
        scale = np.abs(axial).max() if axial.size else 0.0
        if not (axial < -1e-12 * max(scale, 1e-300)).any():
            cases.append(CaseResult(case.name, "no_compression", np.empty(0), np.empty((0, fine.n_nodes, 6))))
            continue
        Gff = asm.geometric(axial)[free][:, free]
        try:
            er = buckling_modes(factor, Kff, Gff, k, method=method, v0=v0, source=im.source, case=case.name)
            try:
                checks = verify.check_case(Kff, Gff, er, k, im.source, case.name)
            except verify.MissedLoadFactor:
                if er.method == "dense" or len(free) > verify.DENSE_RETRY:
                    raise
                # iterative solvers can skip copies of a repeated load factor: solve densely
                er = buckling_modes(factor, Kff, Gff, k, method="dense", source=im.source, case=case.name)
                checks = verify.check_case(Kff, Gff, er, k, im.source, case.name)
                checks["retried_dense"] = True
        except SolverError as exc:
            raise _explained(exc, warnings) from None
        if len(er.load_factors) == 0:
            cases.append(CaseResult(case.name, "no_positive", np.empty(0), np.empty((0, fine.n_nodes, 6)),
                                    method=er.method))
            continue
        v0 = er.modes[:, 0]
        full = np.zeros((fine.n_dofs, er.modes.shape[1]))
        full[free] = er.modes
        notes = []
        if len(er.load_factors) < k:
            notes.append(f"only {len(er.load_factors)} positive load factor(s) exist for this case")
        if er.cluster_continues:
            notes.append(f"load factor {er.load_factors[-1]:.6g} repeats beyond mode {k}: the cluster "
                         f"continues past the requested modes (ask for more with --modes)")
        if checks.get("retried_dense"):
            notes.append("the iterative eigensolver returned too few copies of a repeated load factor "
                         "(found by the Sturm count); this case was solved again with the dense solver")
        notes += _torsion_notes(asm, fine, axial, full, er.load_factors, im)
        cases.append(CaseResult(case.name, "ok", er.load_factors, normalise_modes(full, fine.n_nodes, float(np.ptp(fine.nodes, axis=0).max())),
                                er.residuals, er.cluster_continues, er.method, notes, checks))
        if progress:
            progress(case.name)
    notes = list(im.notes) + list(cons.notes)
    settings = {"modes": k, "subdivide": m, "planar": planar, "eigensolver": method}
    return Result(im, ref, cons, cases, notes, settings, warnings)


def _explained(exc, warnings):
    """The same error with the plausibility warnings that may explain it appended."""
    if not warnings:
        return exc
    return type(exc)(str(exc) + "".join(f"\n  possible reason: {w}" for w in warnings))


def _ignore_unused(cons, fine):
    """Fix every DOF of points no member uses (they carry no stiffness and no load)."""
    unused = sanity.unused_points(fine)
    if unused.size == 0:
        return cons
    fixed = cons.fixed.copy()
    fixed.reshape(-1, 6)[unused] = True
    note = (f"{unused.size} point(s) used by no member were ignored (first: point {int(unused[0])})",)
    return replace(cons, fixed=fixed, free=np.flatnonzero(~fixed), notes=tuple(cons.notes) + note)


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
    from .elements import element_dofs
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
