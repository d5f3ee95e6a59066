"""The worst combination over ranges of factors, and certified bounds from convexity.

With ``Kg(f) = sum_i f_i Kg_i`` (linear in the factors ``f``: the solve assembles every
combination's geometric stiffness exactly so) and ``K`` positive definite,

    mu(f) = max_phi  phi^T (-Kg(f)) phi / phi^T K phi

is the largest eigenvalue of the pencil ``(-Kg(f), K)``: a maximum of functions linear
in ``f``, hence convex.  ``alpha_cr(f) = 1 / mu(f)`` where ``mu(f) > 0``; where
``mu(f) <= 0`` nothing buckles (``alpha_cr = inf``).  ``g(f) = max(mu(f), 0)`` is a maximum
of convex functions, so convex too, and ``1 / g`` is alpha_cr in every case.  Hence

* over a box of factors the largest ``g`` (the lowest alpha_cr) is at a vertex;
  with groups of mutually exclusive actions the factor set is a union of boxes (one
  member of each group active at a time) and the vertex theorem holds per box;
* for any ``f = sum t_j f_j`` (``t >= 0``, ``sum t = 1``) of solved points ``f_j``:
  ``g(f) <= sum t_j g(f_j)``, so ``alpha_cr(f) >= 1 / min_t sum t_j g(f_j)`` -- a linear
  program over ``t`` (:func:`hull_bound`), no eigenvalue solve.

Pure functions on arrays; :func:`parse` reads the ``[envelope]`` table of a study.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass

import numpy as np

from ..errors import InputError

#: most variable actions (ranges with two different ends) in one box: 2^10 vertices
MAX_ACTIONS = 10
#: most vertices over all boxes of the exclusive groups
MAX_VERTICES = 1024
RESERVED = ("exclusive", "limit", "screen")
DEFAULT_LIMIT = 10.0


@dataclass(frozen=True)
class Envelope:
    ranges: dict             # case -> (lo, hi); cases not named keep factor 0
    exclusive: tuple         # tuple of tuples of case names: one of each group at a time
    limit: float             # alpha_cr a listed combination must be certified above
    screen: bool             # skip the solve of listed combinations certified above the limit
    source: str


def parse(data, basic_names, source: str, default_limit: float = DEFAULT_LIMIT) -> Envelope | None:
    """The ``[envelope]`` table: ``CASE = [lo, hi]``, ``exclusive = [[...], ...]``, ``limit``, ``screen``."""
    if not data:
        return None
    ranges = {}
    for k, v in data.items():
        if k in RESERVED:
            continue
        where = f"[envelope] {k}"
        if k not in basic_names:
            raise InputError(f"{where}: '{k}' is not a basic load case of the input; basic cases: "
                             f"{', '.join(basic_names)}", source=source)
        if (not isinstance(v, list) or len(v) != 2
                or any(isinstance(x, bool) or not isinstance(x, (int, float)) for x in v)):
            raise InputError(f"{where} must be a range of two numbers [lowest, highest] factor, "
                             f"got {v!r}", source=source)
        lo, hi = float(v[0]), float(v[1])
        if not (np.isfinite(lo) and np.isfinite(hi)) or lo > hi:
            raise InputError(f"{where} = {v!r}: the lowest factor must not exceed the highest", source=source)
        ranges[k] = (lo, hi)
    if not ranges:
        raise InputError("[envelope] names no basic case with a factor range, e.g. G = [1.0, 1.35]",
                         source=source)
    groups = data.get("exclusive", [])
    if not isinstance(groups, list) or any(not isinstance(g, list) for g in groups):
        raise InputError("[envelope] exclusive must be a list of groups, e.g. [[\"W_x\", \"W_y\"]]",
                         source=source)
    seen = set()
    for g in groups:
        for k in g:
            if k not in ranges:
                raise InputError(f"[envelope] exclusive names '{k}', which has no factor range in "
                                 f"[envelope]", source=source)
            if k in seen:
                raise InputError(f"[envelope] exclusive names '{k}' in two groups", source=source)
            seen.add(k)
    limit = data.get("limit", default_limit)
    if isinstance(limit, bool) or not isinstance(limit, (int, float)) or not limit > 0:
        raise InputError(f"[envelope] limit must be a positive number, got {limit!r}", source=source)
    screen = data.get("screen", True)
    if not isinstance(screen, bool):
        raise InputError(f"[envelope] screen must be true or false, got {screen!r}", source=source)
    env = Envelope(ranges, tuple(tuple(g) for g in groups), float(limit), screen, source)
    vertices(env, list(basic_names))          # refuses too many vertices early
    return env


def vertices(env: Envelope, names: list) -> np.ndarray:
    """Vertices of the union of boxes, (v, len(names)), without repeats, in a fixed order."""
    col = {n: j for j, n in enumerate(names)}
    choices = list(itertools.product(*env.exclusive)) if env.exclusive else [()]
    grouped = {k for g in env.exclusive for k in g}
    out, seen = [], set()
    for choice in choices:
        active = [k for k in env.ranges if k not in grouped or k in choice]
        var = [k for k in active if env.ranges[k][0] != env.ranges[k][1]]
        if len(var) > MAX_ACTIONS:
            raise InputError(f"[envelope] has {len(var)} variable actions in one box ({', '.join(var)}); "
                             f"at most {MAX_ACTIONS} (2^{MAX_ACTIONS} vertices) are enumerated: fix some "
                             f"factors (lowest = highest) or group exclusive actions", source=env.source)
        for ends in itertools.product((0, 1), repeat=len(var)):
            f = np.zeros(len(names))
            for k in active:
                f[col[k]] = env.ranges[k][0]
            for k, e in zip(var, ends):
                f[col[k]] = env.ranges[k][e]
            key = tuple(f)
            if key not in seen:
                seen.add(key)
                out.append(f)
    if len(out) > MAX_VERTICES:
        raise InputError(f"[envelope] gives {len(out)} vertices; at most {MAX_VERTICES} are solved: fix "
                         f"some factors (lowest = highest)", source=env.source)
    return np.array(out)


def inside(env: Envelope, names: list, f: np.ndarray, tol: float = 1e-12) -> bool:
    """Whether the factors ``f`` lie in one of the envelope's boxes."""
    grouped = {k for g in env.exclusive for k in g}
    col = {n: j for j, n in enumerate(names)}
    for k, j in col.items():
        if k not in env.ranges and abs(f[j]) > tol:
            return False
    for choice in (itertools.product(*env.exclusive) if env.exclusive else [()]):
        ok = True
        for k, (lo, hi) in env.ranges.items():
            if k in grouped and k not in choice:
                lo = hi = 0.0
            if not lo - tol <= f[col[k]] <= hi + tol:
                ok = False
                break
        if ok:
            return True
    return False


def g_of(alpha) -> float:
    """``g = max(mu, 0)`` from a solved alpha_cr (None or inf: does not buckle, g = 0)."""
    return 0.0 if alpha is None or not np.isfinite(alpha) else 1.0 / float(alpha)


def hull_bound(F: np.ndarray, g: np.ndarray, f: np.ndarray):
    """Best certified lower bound of alpha_cr at ``f`` from solved points ``F`` (m, n) with
    ``g = max(1/alpha, 0)`` (m,): ``1 / min { sum t_j g_j : t >= 0, sum t = 1, F^T t = f }``.

    Returns ``(alpha_bound, t)``, ``alpha_bound = inf`` when the weights reach only points
    that do not buckle; ``(None, None)`` when ``f`` is outside the convex hull of ``F``.
    """
    from scipy.optimize import linprog
    F = np.asarray(F, float)
    m = len(F)
    if m == 0:
        return None, None
    scale = np.maximum(np.abs(F).max(axis=0), 1.0)
    A = np.vstack([(F / scale).T, np.ones((1, m))])
    b = np.r_[np.asarray(f, float) / scale, 1.0]
    gs = np.asarray(g, float)
    gmax = gs.max() if gs.max() > 0 else 1.0
    r = linprog(gs / gmax, A_eq=A, b_eq=b, bounds=[(0, None)] * m, method="highs")
    if r.status != 0:
        return None, None
    t = np.clip(r.x, 0.0, None)
    t /= t.sum()
    if np.abs(A[:-1] @ t - b[:-1]).max() > 1e-9:
        return None, None
    mu = float(t @ gs)
    # a rounding-safe bound: the LP's value, never below the exact sum with these weights
    return (np.inf if mu <= 0 else 1.0 / mu), t


def summary(names, F_vert, alpha_vert, vert_cases, listed, limit) -> dict:
    """The envelope part of the summary.

    ``alpha_vert``: alpha_cr per vertex (None: does not buckle); ``listed``: dicts with name,
    factors, alpha_bound, solved alpha (or None when screened out).
    """
    order = sorted(range(len(alpha_vert)), key=lambda i: (np.inf if alpha_vert[i] is None
                                                          else alpha_vert[i]))

    def entry(i):
        return {"case": vert_cases[i], "factors": dict(zip(names, map(float, F_vert[i]))),
                "alpha_cr": alpha_vert[i]}
    out = {"vertices": len(alpha_vert),
           "governing": entry(order[0]) if order else None,
           "runner_up": entry(order[1]) if len(order) > 1 else None,
           "limit": float(limit),
           "listed": listed,
           "certified_without_solve": [e["name"] for e in listed if e.get("screened")]}
    return out
