"""Solving many combinations fast: factored-sum geometric stiffness, subspace warm starts,
screening by the convex-hull bound, and the envelope summary.

* :class:`FactoredGeometric`: the scaled free-DOF geometric stiffness of a combination is
  ``sum f_i Gff_i`` of its basic cases' matrices, each assembled once (no re-assembly from
  elements); a basic case or a case without factors goes through the ordinary builder.
* :class:`WarmStarts`: the start block of a combination is the Rayleigh-Ritz projection of
  the new pencil on the modes of the :data:`NEAREST` nearest solved combinations (distance
  in factor space), not only the last one's.
* :func:`screened` / :func:`envelope_summary`: see :mod:`framebuckle.model.envelope`.
"""

from __future__ import annotations

import time

import numpy as np
import scipy.linalg as sla

from ..model import envelope as _env
from ..solver.solve import scale_matrix

#: solved combinations whose modes span a new combination's start block
NEAREST = 3
#: Rayleigh-Ritz start block from the NEAREST combinations' modes (False: the nearest one's modes)
RITZ = True


def factors_of(case, names) -> np.ndarray | None:
    comb = case.extra.get("combination")
    if comb is None:
        return None
    return np.array([comb["factors"].get(n, 0.0) for n in names])


class FactoredGeometric:
    """``Gff(case)`` on the free DOFs, scaled, as the eigensolver sees it."""

    def __init__(self, geo, free, scale):
        self.geo, self.free, self.scale = geo, free, scale
        self._basic = {}
        self.basic_seconds = 0.0            # time spent assembling the basic cases' matrices

    def has_moments(self, case) -> bool:
        return self.geo.has_moments(case)

    def _one(self, case):
        return scale_matrix(self.geo(case)[self.free][:, self.free], self.scale)

    def __call__(self, case):
        comb = case.extra.get("combination")
        if comb is None:
            return self._one(case)
        G = None
        for name, f in comb["factors"].items():
            if f == 0.0:
                continue
            if name not in self._basic:
                t = time.perf_counter()
                self._basic[name] = self._one(comb["basic"][name]).tocsr()
                self.basic_seconds += time.perf_counter() - t
            G = f * self._basic[name] if G is None else G + f * self._basic[name]
        return G if G is not None else self._one(case)


class WarmStarts:
    """Modes of solved cases by their factors; the start block of the next one."""

    def __init__(self, names):
        self.names = list(names)
        self.F, self.modes = [], []
        self.last = None

    def add(self, case, vecs):
        f = factors_of(case, self.names)
        self.last = vecs
        if f is not None and vecs is not None and vecs.shape[1]:
            self.F.append(f)
            self.modes.append(vecs)

    def start(self, case, Kff, Gff, kk):
        """(n, kk) Ritz vectors of the pencil from the nearest solved modes, or the last
        case's modes (a plain case), or None."""
        f = factors_of(case, self.names)
        if f is None or not self.F:
            return self.last
        F = np.array(self.F)
        span = np.abs(F).max(axis=0)
        span[span == 0] = 1.0
        d = np.linalg.norm((F - f) / span, axis=1)
        near = np.argsort(d, kind="stable")[:NEAREST]
        if NEAREST == 1 or RITZ is False:
            return self.modes[near[0]]
        V = np.hstack([self.modes[i] for i in near])
        V, _ = np.linalg.qr(V)
        KV = Kff @ V
        A = V.T @ KV
        B = -(V.T @ (Gff @ V))
        try:
            mu, Y = sla.eigh(0.5 * (B + B.T), 0.5 * (A + A.T))
        except (np.linalg.LinAlgError, ValueError):
            return V[:, :kk]
        order = np.argsort(-mu)[:kk]
        return np.asfortranarray(V @ Y[:, order])


def screened(case, solved_F, solved_g, names, env) -> tuple:
    """``(skip, alpha_bound)`` of a listed combination from the solved points so far."""
    f = factors_of(case, names)
    if env is None or f is None or not solved_F:
        return False, None
    bound, _ = _env.hull_bound(np.array(solved_F), np.array(solved_g), f)
    return bool(env.screen and bound is not None and bound >= env.limit), bound


def envelope_summary(in_cases, results, skipped: dict, bounds: dict, env, names) -> dict:
    """The summary's ``envelope`` entry: governing vertex and runner-up, listed combinations
    with their certified bound and, where solved, their alpha_cr."""
    res = {c.name: c for c in results}
    vert = [c for c in in_cases if (c.extra.get("combination") or {}).get("kind") == "envelope"]
    Fv = np.array([factors_of(c, names) for c in vert]) if vert else np.zeros((0, len(names)))
    av = [res[c.name].alpha_cr if c.name in res else None for c in vert]
    listed = []
    for c in in_cases:
        comb = c.extra.get("combination")
        if not comb or comb["kind"] != "listed":
            continue
        f = factors_of(c, names)
        b = bounds.get(c.name)
        listed.append({"name": c.name, "factors": {k: float(v) for k, v in comb["factors"].items()},
                       "inside_envelope": _env.inside(env, names, f),
                       "alpha_bound": None if b is None else (None if not np.isfinite(b) else float(b)),
                       "bound_note": "outside the hull of the solved points: no bound" if b is None else
                       ("does not buckle (bound infinite)" if not np.isfinite(b) else ""),
                       "screened": c.name in skipped,
                       "alpha_cr": res[c.name].alpha_cr if c.name in res else None})
    out = _env.summary(names, Fv, av, [c.name for c in vert], listed, env.limit)
    out["ranges"] = {k: list(v) for k, v in env.ranges.items()}
    out["exclusive"] = [list(g) for g in env.exclusive]
    out["note"] = ("the lowest alpha_cr over the factor ranges is at a vertex (1/alpha_cr is convex in "
                   "the factors because Kg is their linear sum); bounds of listed combinations follow "
                   "from the same convexity (see the README)")
    return out


def envelope_of(im, preload) -> tuple:
    """``(Envelope or None, basic case names)`` of an input model's cases.

    The vertex theorem needs ``Kg`` linear in the factors with ``K`` fixed: refused with a
    constant preload (its case would have to stay outside every range; not supported)."""
    from ..errors import InputError
    for c in im.cases:
        env = c.extra.get("envelope")
        if env is not None:
            if preload:
                raise InputError("[envelope] cannot be combined with [preload]: the envelope's vertex "
                                 "theorem is stated for the pencil (K, sum f_i Kg_i) with K alone; drop "
                                 "the preload or give it as a fixed factor range", source=env.source)
            return env, list(c.extra["basic_names"])
    return None, []


def point_of(case, names):
    """Factors of a case in the envelope's coordinates: a combination's, or a basic case's unit vector."""
    if not names:
        return None
    f = factors_of(case, names)
    if f is None and case.name in names:
        f = np.zeros(len(names))
        f[names.index(case.name)] = 1.0
    return f


def record(F: list, g: list, f, alpha):
    """Add a solved point (alpha None: does not buckle, g = 0)."""
    if f is not None:
        F.append(f)
        g.append(_env.g_of(alpha))


def envelope_lines(env: dict | None) -> list:
    """Terminal lines of the summary's ``envelope`` entry (solve, check)."""
    if not env:
        return []

    def fac(e):
        return ", ".join(f"{k}={v:g}" for k, v in e["factors"].items() if v != 0) or "all factors 0"

    def alpha(a):
        return "does not buckle" if a is None else f"alpha_cr {a:.4g}"
    out = [f"envelope: {env['vertices']} vertices of the factor ranges solved"]
    if env.get("governing"):
        out.append(f"envelope: governing {env['governing']['case']} ({fac(env['governing'])}): "
                   f"{alpha(env['governing']['alpha_cr'])}")
    if env.get("runner_up"):
        out.append(f"envelope: runner-up {env['runner_up']['case']} ({fac(env['runner_up'])}): "
                   f"{alpha(env['runner_up']['alpha_cr'])}")
    for e in env.get("listed", []):
        b = e["alpha_bound"]
        bt = (e["bound_note"] or f"certified alpha_cr >= {b:.4g}") if b is None or e["bound_note"] else \
            f"certified alpha_cr >= {b:.4g}"
        st = "not solved (certified above the limit " f"{env['limit']:g})" if e["screened"] else alpha(e["alpha_cr"])
        out.append(f"envelope: {e['name']}: {bt}; {st}")
    return out
