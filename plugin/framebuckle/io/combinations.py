"""Load combinations: named factored sums of the basic load cases of a linear run.

A linear run gives, per basic case ``i``, axial forces ``N_i``, end moments ``M_i`` (and
the displacements they were recovered from).  A combination with factors ``f_i`` has the
fields ``N = sum f_i N_i``, ``M = sum f_i M_i``: the same factored sum the linear run
would give for the combined loads.  Its geometric stiffness is then ``Kg = sum f_i Kg_i``
(``Kg`` is linear in the forces), which :mod:`framebuckle.pipeline.api` uses to assemble it.

Sources of combinations (both may be given; a name may appear once):

* the study file's ``[combinations]`` table, ``NAME = { CASE = factor, ... }``;
* a CSV table (``[analysis] combinations_file`` or ``--combinations FILE.csv``): a first
  column with the names and one column per basic case; an empty cell is factor 0.

Pure functions on arrays, except :func:`read_csv` (an edge: it reads the table).
"""

from __future__ import annotations

import csv
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import InputError
from ..model.model import LoadCase, make_case


@dataclass(frozen=True)
class Combination:
    name: str
    factors: dict            # basic case name -> float
    source: str              # file that defined it
    where: str               # "[combinations] NAME" or "row 3"


def _number(v, where, source) -> float:
    if isinstance(v, bool) or not isinstance(v, (int, float)):
        try:
            x = float(str(v).strip())
        except ValueError:
            raise InputError(f"{where}: factor {v!r} is not a number", source=source) from None
    else:
        x = float(v)
    if not math.isfinite(x):
        raise InputError(f"{where}: factor {v!r} is not a finite number", source=source)
    return x


def from_study(data, source: str) -> list[Combination]:
    """``[combinations]`` of a study file: ``NAME = { CASE = factor }``."""
    out = []
    for name, table in (data or {}).items():
        where = f"[combinations] {name}"
        if not isinstance(table, dict) or not table:
            raise InputError(f"{where} must be a table of factors, e.g. {name} = {{ G = 1.35, Q = 1.5 }}",
                             source=source)
        out.append(Combination(str(name), {str(k): _number(v, f"{where}.{k}", source)
                                           for k, v in table.items()}, source, where))
    return out


def read_csv(path: str | Path) -> list[Combination]:
    """A CSV table of combinations: header ``name, CASE1, CASE2, ...``; one row per combination."""
    p = Path(path)
    src = str(p)
    try:
        text = p.read_bytes().decode("utf-8-sig")
    except FileNotFoundError:
        raise InputError("combination table not found", source=src) from None
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"cannot read the combination table: {exc}", source=src) from None
    rows = [r for r in csv.reader(text.splitlines()) if any(c.strip() for c in r)]
    if len(rows) < 2:
        raise InputError("the combination table needs a header (name, then one column per basic case) "
                         "and at least one row", source=src)
    head = [h.strip() for h in rows[0]]
    if len(head) < 2 or any(not h for h in head[1:]):
        raise InputError("the combination table's header must be a name column, then one column per "
                         "basic case (no empty column names)", source=src)
    if len(set(head[1:])) != len(head) - 1:
        raise InputError("the combination table's header names a case twice", source=src)
    out = []
    for i, row in enumerate(rows[1:], start=2):
        where = f"row {i}"
        if len(row) > len(head):
            raise InputError(f"{where} has {len(row)} columns, the header {len(head)}", source=src)
        name = row[0].strip()
        if not name:
            raise InputError(f"{where}: the combination has no name (first column)", source=src)
        factors = {}
        for h, v in zip(head[1:], row[1:]):
            if v.strip():
                factors[h] = _number(v, f"{where} (combination '{name}'), column '{h}'", src)
        out.append(Combination(name, factors, src, f"{where} (combination '{name}')"))
    return out


def collect(study) -> list[Combination]:
    """Every combination of a study (its table and its CSV file), names checked unique."""
    combos = from_study(study.get("combinations"), study.source)
    f = study.get("analysis", "combinations_file")
    if f:
        p = Path(f)
        if not p.is_absolute() and study.path:
            p = Path(study.path).parent / p
        combos += read_csv(p)
    seen = {}
    for c in combos:
        if c.name in seen:
            raise InputError(f"{c.where}: the combination name '{c.name}' is used twice "
                             f"(also {seen[c.name].where} of {seen[c.name].source})", source=c.source)
        seen[c.name] = c
    return combos


def build(combo: Combination, basics: dict, frame, *, allow_tension: bool = False,
          kind: str = "listed") -> LoadCase:
    """The combined :class:`LoadCase`: factored sums of the basic cases' fields.

    ``basics``: name -> basic LoadCase.  The combined case keeps its factors and the basic
    cases in ``extra["combination"]`` (the solve assembles ``Kg = sum f_i Kg_i`` from them).
    """
    for k in combo.factors:
        if k not in basics:
            raise InputError(f"{combo.where}: '{k}' is not a basic load case of the input; basic cases: "
                             f"{', '.join(basics)}", source=combo.source)
    if combo.name in basics:
        raise InputError(f"{combo.where}: the name '{combo.name}' is already a basic load case",
                         source=combo.source)
    used = {k: f for k, f in combo.factors.items() if f != 0.0}
    axial = np.zeros(frame.n_elements)
    moments, sources = None, set()
    for k, f in used.items():
        c = basics[k]
        axial = axial + f * c.axial
        M = c.extra.get("moments")
        if M is not None:
            moments = (0.0 if moments is None else moments) + f * M
            sources.add(c.extra.get("moments_from"))
    if len(sources) > 1:
        raise InputError(f"{combo.where}: the combination mixes end moments given as cell fields and "
                         f"end moments recovered from displacements; give every basic case's moments "
                         f"the same way", source=combo.source)
    case = make_case(combo.name, axial, frame, combo.source)
    scale = max((np.abs(basics[k].axial).max() * abs(f) for k, f in used.items()
                 if basics[k].axial.size), default=0.0)
    compressed = bool((axial < -1e-9 * max(scale, 1e-300)).any()) or (
        moments is not None and np.abs(moments).max() > 0)
    text = factors_text(combo.factors)
    if kind == "listed" and not compressed and not allow_tension:
        raise InputError(f"{combo.where}: the combination {text} puts no member in compression, so it "
                         f"cannot buckle; check the signs of the factors and of the axial forces "
                         f"([analysis] compression); to keep such combinations set [checks] "
                         f"allow_all_tension = true", source=combo.source)
    extra = {"combination": {"factors": dict(combo.factors), "kind": kind,
                             "basic": {k: basics[k] for k in used}},
             "notes": [f"combination {text}"]}
    if moments is not None:
        extra.update(moments=moments, moments_from=sources.pop())
    return LoadCase(case.name, case.axial, extra)


def factors_text(factors: dict) -> str:
    return " + ".join(f"{f:g} {k}" for k, f in factors.items() if f != 0.0) or "(all factors 0)"


def add_combinations(cases: list, study, frame, extra_combos=()) -> list:
    """Basic cases followed by every combination of ``study`` (and ``extra_combos``)."""
    combos = collect(study) + list(extra_combos)
    if not combos:
        return cases
    basics = {c.name: c for c in cases}
    allow = bool(study.get("checks", "allow_all_tension", default=False))
    return list(cases) + [build(c, basics, frame, allow_tension=allow) for c in combos]


def factor_matrix(cases, names) -> np.ndarray:
    """(len(cases), len(names)) factors; a basic case is its own unit vector."""
    F = np.zeros((len(cases), len(names)))
    col = {n: j for j, n in enumerate(names)}
    for i, c in enumerate(cases):
        comb = c.extra.get("combination")
        if comb is None:
            if c.name in col:
                F[i, col[c.name]] = 1.0
            continue
        for k, f in comb["factors"].items():
            F[i, col[k]] = f
    return F


def with_combinations(cases: list, study, frame) -> list:
    """Basic cases, then the vertices of ``[envelope]`` (named ``envelope-001``, ...), then
    the listed combinations; ``[analysis] cases`` selects among basic and listed ones (the
    envelope's vertices are always solved: they are what its answer rests on)."""
    from ..model import envelope as _env
    basics = {c.name: c for c in cases}
    allow = bool(study.get("checks", "allow_all_tension", default=False))
    listed = [build(c, basics, frame, allow_tension=allow) for c in collect(study)]
    names = list(basics)
    env = _env.parse(study.get("envelope"), names, study.source,
                     float(study.get("checks", "min_alpha", default=_env.DEFAULT_LIMIT)))
    verts = []
    if env is not None:
        for i, f in enumerate(_env.vertices(env, names)):
            c = Combination(f"envelope-{i + 1:03d}", {k: float(f[names.index(k)]) for k in env.ranges},
                            study.source, f"[envelope] vertex {i + 1}")
            verts.append(build(c, basics, frame, kind="envelope"))
    wanted = study.get("analysis", "cases")
    pool = list(cases) + listed
    if wanted:
        have = [c.name for c in pool]
        for w in wanted:
            if w not in have:
                raise InputError(f"[analysis] cases lists '{w}', which is not a load case or combination "
                                 f"of the input; cases: {', '.join(have)}", source=study.source)
        cases = [c for c in cases if c.name in wanted]
        listed = [c for c in listed if c.name in wanted]
    out = list(cases) + verts + listed
    if env is not None:
        out = [LoadCase(c.name, c.axial, {**c.extra, "envelope": env, "basic_names": names})
               if c.extra.get("combination") else c for c in out]
    return out


def study_with_table(study, table):
    """The study (path, Study or None) with ``[analysis] combinations_file`` set to ``table``
    (the command line's ``--combinations``), as a :class:`~framebuckle.io.study.Study`."""
    from .study import Study, load_study
    st = study if isinstance(study, Study) else (load_study(study) if study else Study())
    p = Path(table)
    if not p.is_file():
        raise InputError("combination table not found" if not p.exists() else "not a file",
                         source=str(p))
    data = dict(st.data)
    data["analysis"] = {**data.get("analysis", {}), "combinations_file": str(p.resolve())}
    return Study(data, st.path)


def factors_of_cases(cases) -> dict:
    """name -> ``"G=1.35;Q=1.5"`` for every combination among ``cases`` (CSV columns)."""
    return {c.name: ";".join(f"{k}={f:g}" for k, f in c.extra["combination"]["factors"].items())
            for c in cases if c.extra.get("combination")}
