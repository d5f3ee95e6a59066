"""Load cases of an input: axial force fields (per case, per XDMF step), forces recovered from
displacements, end-moment fields, the study file's case selection."""

from __future__ import annotations

import meshio
import numpy as np

from ..errors import InputError
from ..model.model import LoadCase, make_case
from .fields import _cell_field

def _cases(mesh, study, blocks, expand, frame, src, steps) -> list[LoadCase]:
    base = study.field_name("axial_force")
    sign = -1.0 if study.compression_positive else 1.0      # to tension positive
    cases = []
    seen: dict[str, str] = {}

    def add(label, field_name, a):
        if label in seen:
            raise InputError(f"load case name '{label}' comes from two fields, '{seen[label]}' and "
                             f"'{field_name}' (case names must be unique); rename one", source=src)
        seen[label] = field_name
        cases.append(make_case(label, a, frame, src))

    if steps:
        tl = time_labels([t for t, _, _ in steps])
        for (t, pd, cd), tlabel in zip(steps, tl):
            sub = meshio.Mesh(mesh.points, mesh.cells, cell_data=cd)
            for name in _case_fields(sub, base):
                a = sign * np.repeat(_cell_field(sub, name, blocks, src), expand)
                label = tlabel if name == base else f"{tlabel}/{name[len(base) + 1:]}"
                add(label, f"{name} at time {t!r}", a)
    else:
        for name in _case_fields(mesh, base):
            a = sign * np.repeat(_cell_field(mesh, name, blocks, src), expand)
            label = "default" if name == base else name[len(base) + 1:]
            add(label, name, a)
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


def lookalike_case_names(names) -> list[str]:
    """Rule ``case-lookalike``: case names equal but for letter case or surrounding spaces (a
    warning): usually a case field renamed onto another's name, and outputs named after cases
    would collide on case-insensitive file systems."""
    groups: dict[str, list[str]] = {}
    for n in names:
        groups.setdefault(n.strip().casefold(), []).append(n)
    return [f"case names: {' and '.join(repr(n) for n in g)} differ only in letter case or spaces "
            f"(rule case-lookalike): one is probably a renamed copy of the other; check the load case "
            f"fields' names" for g in groups.values() if len(g) > 1]


def time_labels(times) -> list[str]:
    """``t=<time>`` labels with as many digits as it takes to tell every step apart."""
    for p in range(6, 18):
        labels = [f"t={float(t):.{p}g}" for t in times]
        if len(set(labels)) == len(labels):
            return labels
    return [f"t={float(t)!r}#{i + 1}" for i, t in enumerate(times)]



def _recovered_cases(mesh, study, frame, src, steps, cases) -> list[LoadCase]:
    """Cases from point displacements (and rotations), see :mod:`framebuckle.io.recover`."""
    from .recover import disagreement, displacement_fields, recover_case
    by_name = {c.name: i for i, c in enumerate(cases)}
    out = list(cases)
    sources = (list(zip(time_labels([t for t, _, _ in steps]), [pd for _, pd, _ in steps])) if steps
               else [(None, mesh.point_data)])
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
    """Attach cell fields ``moment_start``/``moment_end`` (see :mod:`framebuckle.mechanics.moments`) to cases."""
    from ..mechanics.moments import read_moment_fields
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
