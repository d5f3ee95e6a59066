r"""Member forces recovered from a linear run's point displacements (and rotations).

For a case given by point fields ``displacement`` (n, 3) and optionally
``rotation`` (n, 3) in global axes (or ``displacement.<case>`` /
``rotation.<case>``) instead of an axial-force cell field:

* the axial force of every element is its axial stiffness times the change of
  length along the member (small displacements):

  .. math::  N = \frac{E A}{L}\, e_x \cdot (u_2 - u_1) ;

* with rotations, the end forces acting on each element in its local axes are
  :math:`f = \tilde k\, T u_e` (the element's elastic stiffness after end
  release condensation), and the end moments in the positive-face convention
  are ``moment_start = -f[3:6]``, ``moment_end = f[9:12]`` (local [T, My, Mz];
  see :mod:`framebuckle.mechanics.moments`).

Both are exact for the linear run's own beam elements when the input cells are
those elements and no load acts between nodes.  Member loads between nodes
(self-weight on a beam) are not in the displacements: the recovered moments
then miss the fixed-end moments, the axial force is the member's mean value.

When a case has both an axial-force field and displacements, the forces are
used and the largest disagreement is reported.
"""

from __future__ import annotations

import numpy as np

from ..mechanics.elements import local_axes
from ..errors import InputError
from ..model.model import Frame


def axial_from_elongation(frame: Frame, displacement: np.ndarray) -> np.ndarray:
    """``E A / L`` times the elongation along each element, tension positive, shape (e,)."""
    u = np.asarray(displacement, float)[:, :3]
    R, L = local_axes(frame)
    du = u[frame.elements[:, 1]] - u[frame.elements[:, 0]]
    return frame.E * frame.A / L * np.einsum("ei,ei->e", R[:, 0], du)


def element_end_forces(frame: Frame, displacements: np.ndarray) -> np.ndarray:
    """End forces acting on each element in local axes, (e, 12): ``k T u_e`` for (n, 6) displacements
    (:func:`framebuckle.solver.static.member_forces` without member loads)."""
    from ..solver.static import member_forces
    return np.array(member_forces(frame, displacements).local)


def end_moments(f_local: np.ndarray) -> np.ndarray:
    """Internal end moments (e, 6) = [T, My, Mz] at start, then at end (positive-face convention)."""
    return np.concatenate([-f_local[:, 3:6], f_local[:, 9:12]], axis=1)


def _field(pd, name, npts, src, what):
    a = np.asarray(pd[name], float)
    if a.ndim == 2 and a.shape[1] == 2:
        a = np.column_stack([a, np.zeros(len(a))])
    if a.shape != (npts, 3):
        raise InputError(f"point field '{name}' ({what}) must have shape ({npts}, 3), got {a.shape}",
                         source=src)
    if not np.isfinite(a).all():
        p = int(np.flatnonzero(~np.isfinite(a).all(axis=1))[0])
        raise InputError(f"point field '{name}' has NaN or infinite values at point {p}", source=src)
    return a


def displacement_fields(point_data: dict, study) -> dict:
    """``{suffix: (displacement name, rotation name or None)}``; suffix "" for the plain field."""
    dname, rname = study.field_name("displacement"), study.field_name("rotation")
    out = {}
    for k in point_data:
        if k == dname or k.startswith(dname + "."):
            suffix = k[len(dname):].lstrip(".")
            rot = rname + ("." + suffix if suffix else "")
            out[suffix] = (k, rot if rot in point_data else None)
    return out


def recover_case(frame: Frame, point_data: dict, dname: str, rname: str | None, src: str):
    """``(axial (e,), moments (e, 6) or None)`` from one case's point fields."""
    n = frame.n_nodes
    d = _field(point_data, dname, n, src, "displacements")
    r = np.zeros((n, 3)) if rname is None else _field(point_data, rname, n, src, "rotations")
    # the axial force does not depend on rotations; through the (condensed) element stiffness it
    # equals axial_from_elongation and respects axial end releases
    f = element_end_forces(frame, np.column_stack([d, r]))
    return f[:, 6].copy(), (None if rname is None else end_moments(f))


def disagreement(given: np.ndarray, recovered: np.ndarray) -> tuple[float, int]:
    """Largest ``|N_rec - N|`` relative to the largest ``|N|``, and the element where it occurs."""
    diff = np.abs(np.asarray(recovered) - np.asarray(given))
    scale = max(float(np.abs(given).max()), 1e-300)
    i = int(np.argmax(diff))
    return float(diff[i] / scale), i
