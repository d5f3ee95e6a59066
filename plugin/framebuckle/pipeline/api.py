"""The pipeline without files: read -> model -> refine -> assemble -> solve -> results."""

from __future__ import annotations

import functools
import time
from dataclasses import replace
from pathlib import Path

import numpy as np

from ..solver import adequacy as _adequacy
from ..model import sanity
from ..solver import verify
from ..solver import preload as _preload
from ..solver import warping as _warping
from ..mechanics.assemble import Assembler
from ..errors import InputError, ModelError, SolverError
from ..io.read import InputModel, read_input
from ..model.refine import subdivide as _subdivide
from ..solver import pardiso as _pardiso
from .results import CaseResult, Result, normalise_modes
from ..solver.solve import check_supported, factorize, find_constraints, scale_matrix
from ..io.study import Study, load_study, study_from_dict
from . import combosolve as _combos
from .combosolve import FactoredGeometric, WarmStarts
from .pencils import CasePencils
from ..mechanics.twistlength import EQUIVALENT_NOTE
from .modenotes import _interior_cell, _torsion_notes

DEFAULT_MODES = 4
DEFAULT_SUBDIVIDE = 8
#: largest sub-division per beam cell, and largest number of points after sub-division
#: (about 3 GB of matrices at 48 DOFs per point); beyond, the run is refused before it starts
MAX_SUBDIVIDE = 1000
MAX_FINE_POINTS = 5_000_000


def _as_study(study) -> Study:
    if study is None:
        return Study()
    if isinstance(study, Study):
        return study
    if isinstance(study, dict):
        return study_from_dict(study)
    return load_study(study)


def solve(inp, study=None, *, modes: int | None = None, subdivide: int | None = None,
          planar: bool | str | None = None, method: str | None = None, progress=None,
          preload=None, mesh_check=None, moment_terms=None, warping=None,
          sturm_worker: bool = False) -> Result:
    """Linear buckling analysis of a line-element mesh.

    Reads the mesh and the axial forces of every load case, builds K and Kg, solves
    ``(K + lambda Kg) phi = 0`` for the lowest positive load factors of each case and checks
    every eigensolution.  Nothing is written: :meth:`Result.summary` gives the JSON summary.

    Parameters
    ----------
    inp : str, pathlib.Path or meshio.Mesh
        The input mesh (VTU, XDMF, Gmsh MSH or any format meshio reads), or a mesh in memory
        (an input model already read is accepted too).
    study : str, pathlib.Path or dict, optional
        A TOML study file, or a dict of the same content.
    modes : int, optional
        Number of load factors per case (default 4; study ``[analysis] modes``).
    subdivide : int, optional
        Sub-elements per beam cell (default 8; study ``[analysis] subdivide``).
    planar : bool or {"auto"}, optional
        ``"auto"`` (default), ``True`` or ``False``.
    method : {"auto", "dense", "arpack", "block"}, optional
        The eigensolver (default ``"auto"``).
    progress : callable, optional
        Called with each case's name after the case is solved; if it has a ``stage``
        attribute, ``progress.stage(text)`` is called before each stage.
    preload : str or dict, optional
        Name of a load case held constant while the others are scaled, or
        ``{"case": name, "factor": f}`` (study: ``[preload]``).
    mesh_check : bool or {"auto"}, optional
        ``"auto"`` (default), ``True`` or ``False``: also solve at twice the
        sub-division and extrapolate (study: ``[analysis] mesh_check``).
    moment_terms : bool or {"auto"}, optional
        ``"auto"`` (default: end-moment terms of the geometric stiffness for moments
        given as cell fields, not for moments recovered from rotations), ``True`` (both) or
        ``False`` (study: ``[analysis] moment_terms``).
    warping : {"auto", "equivalent", "dof"}, optional
        ``"auto"`` (default: the equivalent torsion constant over the length between
        torsional restraints, the warping DOF where that is not well defined or warping is
        restrained), ``"equivalent"`` or ``"dof"``: a warping DOF for cells with ``Iw``
        (study: ``[analysis] warping``, ``[warping]``).
    sturm_worker : bool, default False
        Run the Sturm counts of large models in a second process beside the next
        case (the command line does).  Off by default:
        the process is started with multiprocessing's "spawn", which imports the calling
        script again, so a script that sets it must guard its entry point with
        ``if __name__ == "__main__":``.

    Returns
    -------
    Result
        Load factors and modes of every case, the model, notes, warnings and settings.

    Raises
    ------
    InputError
        The input or the study file is unusable (the message names the file, field, cell or point).
    ModelError
        The model is not a usable structure (a mechanism, an unsupported part).
    SolverError
        An eigensolution failed its checks.

    Examples
    --------
    >>> import framebuckle
    >>> res = framebuckle.solve("sample_meshes/workshop_portal.vtu", modes=2)  # doctest: +SKIP
    >>> round(res.case("gravity").alpha_cr, 2)                                  # doctest: +SKIP
    10.71
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
    if meth not in ("auto", "dense", "arpack", "sparse", "block"):
        raise InputError(f"unknown eigensolver '{meth}' (auto, dense, arpack, block)", source=st.source)

    t0 = time.perf_counter()
    if isinstance(inp, (str, Path)):
        from ..io.write import refuse_result_file
        refuse_result_file(inp)
    im = inp if isinstance(inp, InputModel) else read_input(inp, st)
    t_read = time.perf_counter() - t0
    options = {"preload": _preload.parse(preload, st, im.cases, im.source),
               "mesh_check": _adequacy.parse(mesh_check, st, im.source),
               "moment_terms": _moment_setting(moment_terms, st, im.source),
               "parallel_sturm": bool(sturm_worker)}
    wmode = _warping.parse(warping, st, im.source)
    if im.extra.get("Iw") is not None:
        options.update(_warping.choose(wmode, im, st))
    n_fine = im.frame.n_nodes + (m - 1) * int((~im.frame.bar).sum())
    if m > MAX_SUBDIVIDE or n_fine > MAX_FINE_POINTS:
        raise InputError(f"the sub-division {m} per beam cell would give {n_fine} points (limits: "
                         f"{MAX_SUBDIVIDE} per cell, {MAX_FINE_POINTS} points in all); choose a smaller "
                         f"sub-division", source=st.source)
    # sparse direct backend (framebuckle.solver.pardiso): [analysis] solver, else FRAMEBUCKLE_SOLVER / auto
    solver = st.get("analysis", "solver", default=None)
    with _pardiso.use(None if solver is None else _pardiso.check_choice(solver, st.source)):
        res = run(im, k, m, pl, meth, progress=progress, options=options)
    res.timings["read"] = t_read
    return res


def run(im: InputModel, k: int, m: int, planar, method, progress=None, options=None) -> Result:
    """``progress(name)`` is called after each case; if it has a ``stage`` attribute,
    ``progress.stage(text)`` is called before each stage."""
    options = options or {}
    stage = getattr(progress, "stage", None) or (lambda text: None)
    timings = {}
    t = time.perf_counter()
    stage("assembling")
    ref = _subdivide(im.frame, m)
    fine = ref.frame
    n_in = im.frame.n_nodes
    wrest = options.get("warping")
    warnings = list(im.extra.get("warnings", ())) + sanity.model_warnings(
        im.frame, {c.name: c.axial for c in im.cases}, im.units,
        im.extra.get("compression") == "positive", Iw=im.extra.get("Iw"))
    warnings += list(options.get("warping_warnings", []))
    warnings += list(im.extra.get("section_warnings", []))
    coarse_cell = _interior_cell(ref, im)
    try:
        if wrest is None:
            asm = Assembler.build(fine)
            K = asm.stiffness()
            cons = _ignore_unused(find_constraints(_used_only(fine), K, planar), fine)
            check_supported(fine, cons, n_in, im.source)
        else:                                   # warping DOFs (framebuckle.solver.warping)
            asm = _warping.WarpingAssembler(fine, ref.fine_axial(im.extra["Iw"]),
                                            ref.fine_axial(im.extra["J_raw"]),
                                            np.concatenate([wrest, np.zeros(fine.n_nodes - n_in, bool)]))
            K = asm.stiffness()
            cons = _ignore_unused(asm.constraints(_used_only(fine), K, planar, n_in, im.source), fine)
        _refuse_rigid(im, cons.free)
        timings["assembly"] = time.perf_counter() - t
        t = time.perf_counter()
        stage(f"factorizing ({len(cons.free)} free DOFs)")
        # the pencil is solved scaled, D K D and D Kg D with D = diag(K)^-1/2 (framebuckle.solve.
        # symmetric_scaling): the same numbers in every set of units; modes map back as D phi
        factor, Kff = factorize(K, cons, fine, n_in, im.source, coarse_cell, scale=True)
        dscale = factor.scale
        timings["factorization"] = time.perf_counter() - t
        timings["backend"] = factor.backend
    except ModelError as exc:
        raise _explained(exc, warnings) from None
    timings["cases"] = []
    timings["case_stages"] = []
    free = cons.free
    warnings += verify.stiffness_warnings(factor, Kff, free, n_in, coarse_cell, asm, scale=dscale)[0]
    geo = _CaseGeometric(asm, ref, options.get("moment_terms", True))
    pre = None
    if options.get("preload"):
        pname, pfac = options["preload"]
        pcase = next(c for c in im.cases if c.name == pname)
        pre = _preload.prepare(pname, pfac, Kff, scale_matrix(geo(pcase)[free][:, free], dscale),
                               im.source)
    gff = FactoredGeometric(geo, free, dscale)   # combinations: sum f_i Gff_i (framebuckle.pipeline.combosolve)
    env, names = _combos.envelope_of(im, options.get("preload"))
    warm = WarmStarts(names)
    solved_F, solved_g, skipped, bounds = [], [], {}, {}
    cases = []
    # the Sturm counts of large models run in a second process beside the next case
    worker = verify.SturmWorker.maybe(len(free)) if options.get("parallel_sturm") else None
    try:
        for icase, case in enumerate(im.cases):
            t = time.perf_counter()
            stage(f"case {icase + 1}/{len(im.cases)} '{case.name}': eigensolution")
            Kc, fac_c = (pre.Kff, pre.lu) if pre is not None and case.name != pre.name else (Kff, factor)
            skip, bounds[case.name] = _combos.screened(case, solved_F, solved_g, names, env)
            if skip:                            # certified above the limit by the hull bound
                skipped[case.name] = bounds[case.name]
                continue
            fvec = _combos.point_of(case, names)
            axial = ref.fine_axial(case.axial)
            scale = np.abs(axial).max() if axial.size else 0.0
            if not (axial < -1e-12 * max(scale, 1e-300)).any() and not geo.has_moments(case):
                cases.append(CaseResult(case.name, "no_compression", np.empty(0), np.empty((0, fine.n_nodes, 6)),
                                        notes=list(case.extra.get("notes", []))))
                _combos.record(solved_F, solved_g, fvec, None)
                continue
            t1, b0 = time.perf_counter(), gff.basic_seconds
            Gff = gff(case)
            t2 = time.perf_counter()
            v0 = warm.start(case, Kc, Gff, k + 1)
            t3 = time.perf_counter()
            try:
                # the eigensolution and its checks; a Sturm count that finds a missed copy of a
                # repeated load factor has the case solved again (block method, or dense)
                solve = functools.partial(verify.solve_checked, fac_c, Kc, Gff, k, method=method,
                                          source=im.source, case=case.name, sturm=worker is None)
                try:
                    er, checks = solve(v0=v0)
                except verify.MissedLoadFactor:
                    raise
                except SolverError:
                    if v0 is None or v0 is warm.last:
                        raise
                    # the Ritz start of the nearest combinations stalled the block solver: start
                    # again from the last case's modes, as for plain cases
                    er, checks = solve(v0=warm.last)
                t4 = time.perf_counter()
                # where the time of a case goes (benchmarks/combinations.py): basic Kg assembly,
                # factored sum, warm start, eigensolution with its checks (and any second solution)
                timings["case_stages"].append({"basic_kg": gff.basic_seconds - b0,
                                               "kg": t2 - t1 - (gff.basic_seconds - b0),
                                               "warm_start": t3 - t2, "eigensolution": t4 - t3})
                if worker is not None and len(er.load_factors) and "sturm_count" not in checks:
                    worker.submit(checks, Kc, Gff, er.load_factors, k, im.source, case.name)
            except SolverError as exc:
                raise _explained(exc, warnings) from None
            _combos.record(solved_F, solved_g, fvec, er.load_factors[0] if len(er.load_factors) else None)
            if len(er.load_factors) == 0:
                cases.append(CaseResult(case.name, "no_positive", np.empty(0), np.empty((0, fine.n_nodes, 6)),
                                        method=er.method, notes=list(case.extra.get("notes", []))))
                continue
            warm.add(case, er.modes)            # warm start of the next cases: nearest combinations
            full = np.zeros((asm.n, er.modes.shape[1]))
            full[free] = dscale[:, None] * er.modes       # the physical (unscaled) modes
            wmodes = full[fine.n_dofs:].T.copy() if asm.n > fine.n_dofs else None
            full = full[:fine.n_dofs]
            notes = list(case.extra.get("notes", [])) + list(er.notes)   # e.g. an eigensolver fallback
            if case.extra.get("moments") is not None and not geo.has_moments(case) and geo.on == "auto":
                notes.append("end moments recovered from the rotations are not used in the geometric "
                             "stiffness (moment_terms = \"auto\"); set [analysis] moment_terms = true to "
                             "include them (see the limits under Forces from displacements in "
                             "docs/user/mechanics.md)")
            if pre is not None:
                notes.append(pre.note() if case.name != pre.name else
                             "this case is the constant preload; its load factor is for the case alone")
            if len(er.load_factors) < k:
                notes.append(f"only {len(er.load_factors)} positive load factor(s) exist for this case")
            if er.cluster_continues:
                notes.append(f"load factor {er.load_factors[-1]:.6g} repeats beyond mode {k}: the cluster "
                             f"continues past the requested modes (ask for more with --modes)")
            if checks.get("retried"):
                notes.append(f"the iterative eigensolver returned too few copies of a repeated load factor "
                             f"(found by the Sturm count); this case was solved again with the "
                             f"{checks['retried']} solver")
            notes += _torsion_notes(asm, fine, axial, full, er.load_factors, im)
            modes = normalise_modes(full, fine.n_nodes, float(np.ptp(fine.nodes, axis=0).max()))
            if wmodes is not None:              # the same scale as the nodal part of each mode
                j = np.abs(full).argmax(axis=0)
                wmodes *= (modes.reshape(len(j), -1)[np.arange(len(j)), j] / full[j, np.arange(len(j))])[:, None]
            cases.append(CaseResult(case.name, "ok", er.load_factors, modes,
                                    er.residuals, er.cluster_continues, er.method, notes, checks,
                                    moment_terms=geo.has_moments(case), warping_modes=wmodes))
            timings["cases"].append(time.perf_counter() - t)
            if progress:
                progress(case.name)
        if worker is not None:           # the last counts may still be running
            t = time.perf_counter()
            stage("waiting for the Sturm counts")
            try:
                worker.collect()
            except SolverError as exc:
                raise _explained(exc, warnings) from None
            timings["sturm_wait"] = time.perf_counter() - t
    finally:
        if worker is not None:
            worker.close()
    warnings += sanity.load_factor_warnings(im.frame, {c.name: c.axial for c in im.cases},
                                            {c.name: c.alpha_cr for c in cases}, im.units)
    check = options.get("mesh_check", "auto")
    if _adequacy.wanted(check, im.frame, m) and any(c.status == "ok" for c in cases):
        fine2 = run(im, k, 2 * m, planar, method, options=dict(options, mesh_check=False))
        _adequacy.compare(cases, fine2.cases, m, _mesh_check_orders(im, wrest is not None, geo))
    notes = list(im.notes) + list(options.get("warping_notes", [])) + list(cons.notes)
    if wrest is not None:
        notes = [n for n in notes if n != EQUIVALENT_NOTE]
    settings = {"modes": k, "subdivide": m, "planar": planar, "eigensolver": method,
                "mesh_check": check, "warping": "equivalent" if wrest is None else "dof"}
    if options.get("preload"):
        settings["preload"] = {"case": options["preload"][0], "factor": options["preload"][1]}
    res = Result(im, ref, cons, cases, notes, settings, warnings,
                 pencil=CasePencils(asm, geo, cons, Kff, factor, pre, im.cases, method, dscale, gff))
    if env is not None:
        res.envelope = _combos.envelope_summary(im.cases, cases, skipped, bounds, env, names)
    res.timings.update(timings)
    return res


def _refuse_rigid(im, free):
    """A model in which nothing can move cannot buckle; with compressed members that is an input slip."""
    if free.size:
        return
    for c in im.cases:
        if (c.axial < 0).any() or c.extra.get("moments") is not None:
            i = int(np.argmin(c.axial))
            raise ModelError(f"every degree of freedom is restrained: nothing can move, yet case '{c.name}' "
                             f"compresses cell {int(im.frame.parent[i])} ({c.axial[i]:.4g}); a rigid model "
                             f"cannot be judged for buckling. Probable cause: a restraint field of all ones",
                             source=im.source)


def _explained(exc, warnings):
    """The same error with the plausibility warnings that may explain it appended."""
    if not warnings:
        return exc
    return type(exc)(str(exc) + "".join(f"\n  possible reason: {w}" for w in warnings))


def _used_only(fine):
    """The frame with points no member uses moved onto a used point and unrestrained, so that they
    change no geometric test (planar detection) and no restraint-based decision."""
    unused = sanity.unused_points(fine)
    if unused.size == 0:
        return fine
    nodes = fine.nodes.copy()
    nodes[unused] = nodes[fine.elements[0, 0]]
    restraint = fine.restraint.copy()
    restraint[unused] = False
    return replace(fine, nodes=nodes, restraint=restraint)


def _ignore_unused(cons, fine):
    """Fix every DOF of points no member uses (they carry no stiffness and no load)."""
    unused = sanity.unused_points(fine)
    if unused.size == 0:
        return cons
    fixed = cons.fixed.copy()
    fixed[: fine.n_dofs].reshape(-1, 6)[unused] = True
    note = (f"{unused.size} point(s) used by no member were ignored (first: point {int(unused[0])})",)
    return replace(cons, fixed=fixed, free=np.flatnonzero(~fixed), notes=tuple(cons.notes) + note)


def _mesh_check_orders(im, warping_dofs=False, geo=None) -> dict:
    """Convergence order of alpha_cr per case (see framebuckle.solver.adequacy).

    Moment terms lower the order only where they are used in the geometric stiffness.
    """
    f = im.frame
    shear = any(a is not None and np.isfinite(a[~f.bar]).any() for a in (f.Asy, f.Asz))
    used = (lambda c: c.extra.get("moments") is not None) if geo is None else geo.has_moments
    return {c.name: _adequacy.ORDER_TWIST for c in im.cases
            if shear or (used(c) and not warping_dofs)}


def _moment_setting(value, st, source):
    v = st.get("analysis", "moment_terms", default="auto") if value is None else value
    if v not in (True, False, "auto"):
        raise InputError(f"[analysis] moment_terms must be true, false or \"auto\", got {v!r}",
                         source=st.source if value is None else source)
    return v


class _CaseGeometric:
    """Global geometric stiffness of a load case on the fine model: axial terms, plus the
    end-moment terms (framebuckle.mechanics.moments) when the case has end moments and they are on."""

    def __init__(self, asm, ref, moment_terms=True):
        self.asm, self.ref, self.on, self._local = asm, ref, moment_terms, None

    def has_moments(self, case) -> bool:
        M = case.extra.get("moments")
        on = self.on is True or (self.on == "auto" and case.extra.get("moments_from") == "cell fields")
        return bool(on and M is not None and np.abs(M[:, [1, 2, 4, 5]]).max() > 0)

    def __call__(self, case):
        Kg = self.asm.geometric(self.ref.fine_axial(case.axial))
        if self.has_moments(case):
            from ..mechanics.elements import local_matrices
            from ..mechanics.moments import fine_moments, moment_geometric_global
            fine = self.ref.frame
            if self._local is None and not hasattr(self.asm, "moment_matrix"):
                self._local = local_matrices(fine)
            Mf = fine_moments(self.ref, case.extra["moments"])
            if hasattr(self.asm, "moment_matrix"):        # warping DOFs
                return Kg + self.asm.moment_matrix(Mf)
            Kg = Kg + self.asm.matrix(moment_geometric_global(fine, Mf, self._local))
        return Kg
