r"""The length between torsional restraints for the equivalent torsion constant.

Without warping DOFs, a cell with a warping constant ``Iw`` gets the torsion
constant

.. math::  J_{eq} = J + \frac{\pi^2 E I_w}{G L_t^2}

which gives the exact torsional and lateral-torsional critical loads of a
uniform member with fork ends whose twist is one half-sine over ``L_t``
(Timoshenko & Gere 1961, Theory of Elastic Stability, secs. 5.3 and 6.3): for
:math:`\theta = \sin(\pi x / L_t)`, :math:`\int_0^{L_t} E I_w \theta''^2 dx =
(\pi / L_t)^2 \int_0^{L_t} E I_w \theta'^2 dx`.  The identity holds over the
whole half-wave only, so ``L_t`` must be the length of the *physical* member
between torsional restraints, never the length of a cell: an analyst may cut
a member into any number of cells.

Torsion segments
----------------
Beam cells (not bars) are chained through a point when

* exactly two beam cells meet there (bars at the point are ignored: a pin-ended
  bar on the member axis gives no twisting stiffness),
* the two cells are collinear (:data:`COLLINEAR_TOL`, as in
  :mod:`framebuckle.mechanics.members`),
* the twist about their axis is not restrained at the point (the restrained
  rotation components of the point's ``restraint`` span the axis), and
* with a ``member`` cell field, both cells have the same ``member`` value
  (a member boundary is taken as a torsional restraint).

The two cells of one ``line3`` cell are always chained.  ``L_t`` of a segment is
the sum of its cells' lengths.  Joints of three or more beam cells, kinks,
supports that fix the twist and member boundaries end a segment (fork).

A segment is *not well defined* for the equivalent constant (the half-sine
identity fails) when ``E Iw`` is not the same in all its cells (a step, a taper,
a cell without ``Iw``) or when the twist is released at one of its interior
points.  Such segments are listed in :attr:`TwistLengths.undefined`; with
``[analysis] warping = "auto"`` (the default) the model then runs with the
warping DOF (:mod:`framebuckle.solver.warping`), which needs no length.  For an explicit
``"equivalent"`` they are cut into uniform, unreleased pieces (with a warning).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
import scipy.sparse.csgraph as csgraph

from .members import COLLINEAR_TOL, SAME_TOL
from ..model.model import Frame

#: note of every model with Iw run without warping DOFs (api drops it when they run)
EQUIVALENT_NOTE = ("warping constant Iw given: torsion uses J + pi^2 E Iw / (G L^2) with L the length "
                   "between torsional restraints of each member (exact for warping-free member ends)")
#: a global rotation component with |axis component| below this does not affect the twist
AXIS_TOL = 1e-9


@dataclass(frozen=True)
class TwistLengths:
    """Equivalent torsion constants and the torsion segments behind them.

    J : (e,) equivalent torsion constant per element
    segment : (e,) segment of each element (-1 for bars)
    length : (s,) segment lengths ``L_t``
    undefined : tuple of (input cells, reason) for segments not well defined
    """

    J: np.ndarray
    segment: np.ndarray
    length: np.ndarray
    undefined: tuple


def _links(frame: Frame, member) -> tuple[np.ndarray, np.ndarray]:
    """Pairs (a, b) of beam elements chained through a point and whether the twist is released
    there (in either cell)."""
    e = frame.elements
    beam = np.flatnonzero(~frame.bar)
    node = e[beam].reshape(-1)
    el = np.repeat(beam, 2)
    end = np.tile([0, 1], len(beam))
    order = np.argsort(node, kind="stable")
    node, el, end = node[order], el[order], end[order]
    deg = np.bincount(node, minlength=frame.n_nodes)
    start = np.concatenate([[0], np.cumsum(deg)[:-1]])
    p = np.flatnonzero(deg == 2)
    a, b = el[start[p]], el[start[p] + 1]
    ea, eb = end[start[p]], end[start[p] + 1]
    ok = a != b
    p, a, b, ea, eb = p[ok], a[ok], b[ok], ea[ok], eb[ok]
    X = frame.nodes
    da = X[e[a, 1 - ea]] - X[p]
    db = X[e[b, 1 - eb]] - X[p]
    na, nb = np.linalg.norm(da, axis=1), np.linalg.norm(db, axis=1)
    cos = np.einsum("ij,ij->i", da, db) / (na * nb)
    ok = 1.0 + cos <= COLLINEAR_TOL
    axis = np.abs(db) / nb[:, None]
    ok &= ~(frame.restraint[p, 3:] | (axis < AXIS_TOL)).all(axis=1)
    if member is not None:
        v = np.asarray(member, float)
        ok &= (v[a] == v[b]) | (np.isnan(v[a]) & np.isnan(v[b]))
    rel = np.zeros(len(p), bool)
    if frame.release is not None:
        rel = frame.release[a, 3 + 6 * ea] | frame.release[b, 3 + 6 * eb]
    pairs = np.column_stack([a[ok], b[ok]])
    # the two cells of one line3 cell are always one segment
    srt = beam[np.argsort(frame.parent[beam], kind="stable")]
    same = frame.parent[srt[1:]] == frame.parent[srt[:-1]]
    pairs = np.concatenate([pairs, np.column_stack([srt[:-1][same], srt[1:][same]])])
    rel_pairs = np.concatenate([rel[ok], np.zeros(int(same.sum()), bool)])
    return pairs, rel_pairs


def _components(ne: int, pairs: np.ndarray) -> np.ndarray:
    g = sp.coo_matrix((np.ones(len(pairs)), (pairs[:, 0], pairs[:, 1])), shape=(ne, ne))
    return csgraph.connected_components(g, directed=False)[1]


def twist_lengths(frame: Frame, Iw, member=None) -> TwistLengths:
    """Equivalent torsion constants of ``frame`` (whose ``J`` is the section's own) with ``Iw``."""
    ne = frame.n_elements
    ew = frame.E * np.nan_to_num(np.asarray(Iw, float))
    pairs, released = _links(frame, member)
    seg = _components(ne, pairs)
    nseg = int(seg.max()) + 1 if ne else 0
    L = frame.lengths()
    length = np.bincount(seg, weights=L, minlength=nseg)
    hi = np.full(nseg, -np.inf)
    lo = np.full(nseg, np.inf)
    np.maximum.at(hi, seg, ew)
    np.minimum.at(lo, seg, ew)
    warped = hi > 0
    stepped = warped & (hi - lo > SAME_TOL * hi)
    cut = np.zeros(nseg, bool)
    cut[seg[pairs[released, 0]]] = True
    cut &= warped
    bad = stepped | cut
    # pieces: segments further cut where E Iw changes or the twist is released
    uniform = np.abs(ew[pairs[:, 0]] - ew[pairs[:, 1]]) <= SAME_TOL * np.maximum(ew[pairs[:, 0]],
                                                                                 ew[pairs[:, 1]])
    piece = _components(ne, pairs[uniform & ~released])
    Lp = np.bincount(piece, weights=L)[piece]
    with np.errstate(divide="ignore", invalid="ignore"):
        J = frame.J + np.where(ew > 0, math.pi ** 2 * ew / (frame.G * Lp ** 2), 0.0)
    J = np.where(frame.bar, frame.J, J)
    undefined = []
    for s in np.flatnonzero(bad):
        cells = tuple(int(c) for c in np.unique(frame.parent[seg == s]))
        why = ("E Iw is not the same in all its cells" if stepped[s] else
               "the twist is released at an interior point")
        undefined.append((cells, why))
    seg = np.where(frame.bar, -1, seg)
    return TwistLengths(J, seg, length, tuple(undefined))


def describe(undefined, limit: int = 3) -> str:
    """Short text naming the first segments that are not well defined."""
    parts = [f"cells {', '.join(str(c) for c in cells[:8])}{' ...' if len(cells) > 8 else ''} ({why})"
             for cells, why in undefined[:limit]]
    more = f" and {len(undefined) - limit} more" if len(undefined) > limit else ""
    return "; ".join(parts) + more
