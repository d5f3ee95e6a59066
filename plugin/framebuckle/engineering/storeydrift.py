r"""Storey-drift estimate of alpha_cr, EN 1993-1-1:2005 clause 5.2.1(4)B, Eq. (5.2).

.. math::  \alpha_{cr} = \frac{H_{Ed}}{V_{Ed}} \, \frac{h}{\delta_{H,Ed}}

per storey, with :math:`H_{Ed}` the storey shear (the total horizontal load above the storey's
bottom), :math:`V_{Ed}` the total vertical load at its bottom, ``h`` its height and
:math:`\delta_{H,Ed}` the drift of its top relative to its bottom, from a first-order analysis
with the model's own stiffness ``K`` (the factorization the eigensolution used).

* **Vertical axis**: global Z, up.
* **Floor levels**: the ``level`` values of ``[[storeys]]`` in the study file when given;
  otherwise the elevations above the base (the lowest restrained point) of the points where a
  vertical cell ends from below and a horizontal cell (both ends at the same Z within 1e-6 of
  the model's height) is joined: beam-to-column joints.  Storey ``i`` lies between
  level ``i - 1`` (the base for the first) and level ``i``.
* **Vertical load** at the bottom of storey ``i``: the sum of the vertical components of the
  compressive axial forces of the case over the cells crossing the storey's mid-height plane.
* **Horizontal loads**: at every point of a floor level the fraction :data:`FRACTION` (1/200;
  any fixed fraction, the method is linear) of the vertical load that point passes down into the
  members below it (the jump of the members' vertical force at the point), in global X and,
  for 3D models, in global Y (two analyses); the storey's result is the smaller.
* **Drift**: the horizontal displacement of a level is the load-weighted mean over its points.

The method is for beam-and-column plane frames of buildings with small axial compression in
the beams (EN 1993-1-1:2005 5.2.1(4)B and its Note 2); it neglects the P-delta effect inside the
columns, so it over-estimates alpha_cr (for a rigid-beam, fixed-base storey by 12 / pi^2 = 1.22,
see the tests).  It is shown beside the eigenvalue result as an independent second estimate.
"""

from __future__ import annotations

import numpy as np

CLAUSE = "EN 1993-1-1:2005 clause 5.2.1(4)B, Eq. (5.2)"
#: horizontal load as a fraction of the vertical load entering each floor point
FRACTION = 1.0 / 200.0
#: relative tolerance (of the model height) for "the same level" and "horizontal"
LEVEL_TOL = 1e-6
_Z = 2


def floor_levels(frame, given=None) -> tuple[np.ndarray, float, str]:
    """``(levels above the base ascending, base elevation, where they came from)``."""
    z = frame.nodes[:, _Z]
    height = float(np.ptp(z)) if len(z) else 0.0
    if height <= 0:
        return np.empty(0), 0.0, "no vertical extent"
    tol = LEVEL_TOL * height
    fixed = frame.restraint[:, :3].any(axis=1)
    base = float(z[fixed].min()) if fixed.any() else float(z.min())
    if given:
        lv = _cluster(np.asarray(given, float), tol)
        return lv[lv > base + tol], base, "[[storeys]] level"
    e = frame.elements
    d = frame.nodes[e[:, 1]] - frame.nodes[e[:, 0]]
    dz = np.abs(d[:, _Z])
    flat = dz <= tol
    vertical = np.linalg.norm(d[:, :2], axis=1) <= tol
    upper = np.where(d[:, _Z] > 0, e[:, 1], e[:, 0])[vertical]     # top ends of vertical cells
    # a floor point: the top of a vertical cell where a horizontal member is joined
    joint = np.intersect1d(upper, e[flat].ravel())
    lv = _cluster(z[joint], tol)
    return lv[lv > base + tol], base, "horizontal members at column tops (floor levels)"


def _cluster(values, tol) -> np.ndarray:
    """Sorted values with those within ``tol`` of their neighbour merged (their mean)."""
    v = np.sort(np.asarray(values, float))
    if v.size == 0:
        return v
    groups = np.split(v, np.flatnonzero(np.diff(v) > tol) + 1)
    return np.array([g.mean() for g in groups])


def _vertical_forces(frame, axial):
    """Per input cell: lower and upper end, its Z range and the vertical part of its compression."""
    e = frame.elements
    z = frame.nodes[:, _Z]
    z0, z1 = z[e[:, 0]], z[e[:, 1]]
    L = np.linalg.norm(frame.nodes[e[:, 1]] - frame.nodes[e[:, 0]], axis=1)
    vert = -np.asarray(axial, float) * np.abs(z1 - z0) / np.where(L > 0, L, 1.0)   # + compression
    low = np.where(z0 <= z1, e[:, 0], e[:, 1])
    up = np.where(z0 <= z1, e[:, 1], e[:, 0])
    return low, up, np.minimum(z0, z1), np.maximum(z0, z1), vert


def storey_drift(frame, axial, levels, base, solve_free, free, n_dofs, planar_axis=None,
                 fraction: float = FRACTION) -> list:
    """Eq. (5.2) for every storey and horizontal direction; ``solve_free(F_free) -> u_free``
    solves with the model's ``K`` on the free DOFs ``free`` (of ``n_dofs`` DOFs)."""
    if len(levels) == 0:
        return []
    z = frame.nodes[:, _Z]
    tol = LEVEL_TOL * float(np.ptp(z))
    low, up, zlo, zhi, vert = _vertical_forces(frame, axial)
    bounds = np.concatenate([[base], levels])
    mids = 0.5 * (bounds[:-1] + bounds[1:])
    V = np.array([vert[(zlo < m) & (zhi > m)].sum() for m in mids])
    # vertical load each point passes down: force of the members below it minus above it
    q = np.bincount(up, weights=vert, minlength=frame.n_nodes) - np.bincount(low, weights=vert,
                                                                              minlength=frame.n_nodes)
    q = np.maximum(q, 0.0)
    at = [np.flatnonzero(np.abs(z - lv) <= tol) for lv in bounds]
    dirs = [d for d in (0, 1) if planar_axis is None or planar_axis != d] if planar_axis != _Z else []
    out = []
    for d in dirs:
        P = np.zeros(n_dofs)
        w = []
        for i, pts in enumerate(at):
            wi = q[pts] if i > 0 and q[pts].sum() > 0 else np.ones(len(pts))
            w.append(wi)
            if i > 0:
                P[6 * pts + d] = fraction * q[pts]
        if not (P[free] != 0).any():
            continue
        u = np.zeros(n_dofs)
        u[free] = solve_free(P[free])
        disp = [float(np.average(u[6 * pts + d], weights=wi)) if len(pts) else 0.0
                for pts, wi in zip(at, w)]
        H = P[:6 * frame.n_nodes].reshape(-1, 6)[:, d]
        for i in range(len(levels)):
            shear = float(H[np.flatnonzero(z > mids[i])].sum())
            drift = disp[i + 1] - disp[i]
            h = float(bounds[i + 1] - bounds[i])
            ok = V[i] > 0 and shear > 0 and drift > 0
            out.append({"storey": i + 1, "bottom": float(bounds[i]), "top": float(bounds[i + 1]),
                        "height": h, "direction": "XY"[d], "V_Ed": float(V[i]), "H_Ed": shear,
                        "drift": drift, "alpha_cr": float(shear / V[i] * h / drift) if ok else None})
    return out


def summary(rows: list, source: str, alpha_eig: float | None) -> dict | None:
    """Per storey the smaller of the directions, the case's smallest, and its ratio to the eigenvalue."""
    if not rows:
        return None
    per = {}
    for r in rows:
        s = r["storey"]
        if r["alpha_cr"] is not None and (s not in per or r["alpha_cr"] < per[s]["alpha_cr"]):
            per[s] = r
    storeys = [per[s] for s in sorted(per)]
    low = min((r["alpha_cr"] for r in storeys), default=None)
    return {"clause": CLAUSE, "levels_from": source, "fraction": FRACTION, "storeys": storeys,
            "all_directions": rows, "alpha_cr_drift": low,
            "ratio_to_eigenvalue": None if low is None or not alpha_eig else low / alpha_eig}
