r"""Mesh adequacy: the load factor at twice the sub-division and its Richardson extrapolation.

With ``m`` and ``2m`` sub-elements per cell and an error that falls as
:math:`h^p`,

.. math::

    \alpha_R = \alpha_{2m} + \frac{\alpha_{2m} - \alpha_m}{2^p - 1} .

Order ``p``: the cubic Hermite beam with the consistent geometric stiffness is
a Rayleigh-Ritz method with C1 cubics for a fourth-order problem, whose
eigenvalue error falls as :math:`h^{2(k + 1 - m)} = h^{4}` (k = 3 polynomial
degree, m = 2 derivatives in the energy; Strang & Fix 1973, An Analysis of the
Finite Element Method, sec. 6.3).  This is the order of flexural buckling
(measured on a pinned column: 3.87 from 2, 4, 8 and 3.96 from 4, 8, 16 sub-elements,
tests/test_adequacy.py).  Twist is
interpolated linearly (k = 1, m = 1: :math:`h^2`), so cases whose geometric
stiffness has moment terms (lateral-torsional buckling) use ``p = 2``, and so do
models with shear areas (with warping DOFs the twist is cubic and moment cases keep
``p = 4``: measured errors 4.9e-3, 3.3e-4, 2.1e-5 at 2, 4, 8 sub-elements of a
fork-supported I-beam under uniform moment).  For shear areas the shear parameter grows as the elements shrink and
the measured order of the Timoshenko element is 2 (errors 0.95 %, 0.23 %,
0.058 %, 0.015 % at 4, 8, 16, 32 sub-elements of a shear-flexible column).  The
extrapolation is an estimate: the relative difference between the two solves
is reported, and a warning is given when it exceeds :data:`TOLERANCE`.

Settings: ``[analysis] mesh_check = "auto" | true | false`` (Python keyword
``mesh_check=``); ``"auto"`` checks when the doubled model has at most
:data:`AUTO_LIMIT` DOFs.
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError

#: relative difference between the m and 2m load factors above which a warning is given
TOLERANCE = 0.01
#: "auto" solves the doubled model only when it has at most this many DOFs
AUTO_LIMIT = 30000
ORDER_FLEXURE = 4
ORDER_TWIST = 2


def parse(value, study, source) -> bool | str:
    v = value if value is not None else study.get("analysis", "mesh_check", default="auto")
    if v not in (True, False, "auto"):
        raise InputError(f"[analysis] mesh_check must be true, false or \"auto\", got {v!r}",
                         source=study.source if value is None else source)
    return v


def doubled_dofs(frame, m: int) -> int:
    """DOFs of ``frame`` sub-divided ``2m`` times (without building it)."""
    nb = int((~frame.bar).sum())
    return 6 * (frame.n_nodes + nb * (2 * m - 1))


def wanted(setting, frame, m: int) -> bool:
    if setting is True:
        return True
    if setting is False:
        return False
    return doubled_dofs(frame, m) <= AUTO_LIMIT


def richardson(a_m: float, a_2m: float, p: int) -> float:
    return a_2m + (a_2m - a_m) / (2.0 ** p - 1.0)


def compare(cases, cases2, m: int, orders: dict) -> None:
    """Attach ``mesh_check`` (a dict) and a warning note to each case of ``cases`` in place."""
    by_name = {c.name: c for c in cases2}
    for c in cases:
        c2 = by_name.get(c.name)
        if c.status != "ok" or c2 is None or c2.status != "ok":
            continue
        a1, a2 = float(c.load_factors[0]), float(c2.load_factors[0])
        p = orders.get(c.name, ORDER_FLEXURE)
        diff = abs(a1 - a2) / abs(a2)
        c.mesh_check = {"subdivide": m, "alpha_cr": a1, "subdivide_2": 2 * m, "alpha_cr_2": a2,
                        "order": p, "richardson": richardson(a1, a2, p), "difference": diff,
                        "adequate": bool(diff <= TOLERANCE)}
        if diff > TOLERANCE:
            c.notes.append(f"mesh check: alpha_cr = {a1:.5g} at {m} sub-elements per cell but {a2:.5g} at "
                           f"{2 * m} ({100 * diff:.2g} % apart, more than {100 * TOLERANCE:g} %); "
                           f"extrapolated {richardson(a1, a2, p):.5g}: use a finer sub-division")
