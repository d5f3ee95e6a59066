r"""Grouping input cells into physical members.

A finite element mesh often splits one physical member (a column between two
floors, a rafter between two purlins ...) into several cells.  Effective
lengths, energy shares and stiffening advice are only meaningful per
*member*, so cells are grouped:

* with an integer cell field ``member`` (study ``[fields] member`` renames
  it), every cell with the same value is one member, labelled by that value;
* otherwise members are the chains of cells joined at points that

  - join exactly two line cells and nothing else,
  - carry no restraint (no 1 in the point's ``restraint``),
  - lie on one straight line (the two cells are collinear within
    :data:`COLLINEAR_TOL`), and
  - join cells of the same section and material (``E G A Iy Iz J Ip bar``
    equal within :data:`SAME_TOL`, local z axes parallel).

  Automatic members are labelled 0, 1, 2 ... in the order of their first
  cell.  The two cells of one ``line3`` cell are always one member.

A member's length is the sum of its cells' lengths; its *ends* are the points
that occur once in its cells (a member with other than two ends, possible only
with an explicit ``member`` field, has no chord; see :mod:`participation`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
import scipy.sparse.csgraph as csgraph

from .elements import local_axes
from ..errors import InputError
from ..model.model import Frame

#: 1 + cos(angle) between the two cells' directions away from the joint
COLLINEAR_TOL = 1e-8
#: relative difference below which two section properties are "the same"
SAME_TOL = 1e-9


@dataclass(frozen=True)
class Members:
    """Member of every element of the coarse (input) frame.

    Attributes
    ----------
    of_element : (e,) int, member index 0..m-1 of each coarse element
    label : (m,) int, the user's ``member`` value, or the running number
    length : (m,) float, sum of the cells' lengths
    ends : (m, 2) int, the member's end points (-1 when it has no two ends)
    explicit : True when taken from the ``member`` cell field
    """

    of_element: np.ndarray
    label: np.ndarray
    length: np.ndarray
    ends: np.ndarray
    explicit: bool

    @property
    def n(self) -> int:
        return len(self.label)

    def elements_of(self, m: int) -> np.ndarray:
        return np.flatnonzero(self.of_element == m)

    def index_of(self, label) -> int:
        hit = np.flatnonzero(self.label == int(label))
        if hit.size == 0:
            raise KeyError(label)
        return int(hit[0])


def group_members(frame: Frame, member_field=None, source: str = "<model>") -> Members:
    """Group the coarse frame's elements into members (see module docstring)."""
    ne = frame.n_elements
    if member_field is not None:
        v = np.asarray(member_field, float)
        bad = np.flatnonzero(~np.isfinite(v) | (np.abs(v - np.rint(v)) > 1e-9))
        if bad.size:
            raise InputError(f"cell field 'member' must hold whole numbers; cell {frame.parent[bad[0]]} "
                             f"has {v[bad[0]]!r} ({bad.size} cell(s))", source=source)
        labels, comp = np.unique(np.rint(v).astype(np.int64), return_inverse=True)
        return _finish(frame, comp.reshape(-1), labels, True)

    pairs = _joint_pairs(frame)
    # cells of one line3 cell (same parent) are always one member
    order = np.argsort(frame.parent, kind="stable")
    same = frame.parent[order[1:]] == frame.parent[order[:-1]]
    pairs = np.concatenate([pairs, np.column_stack([order[:-1][same], order[1:][same]])])
    g = sp.coo_matrix((np.ones(len(pairs)), (pairs[:, 0], pairs[:, 1])), shape=(ne, ne))
    _, comp = csgraph.connected_components(g, directed=False)
    # number members in the order of their first element
    _, first = np.unique(comp, return_index=True)
    rank = np.empty(len(first), np.int64)
    rank[np.argsort(first)] = np.arange(len(first))
    comp = rank[comp]
    return _finish(frame, comp, np.arange(len(first)), False)


def _joint_pairs(frame: Frame) -> np.ndarray:
    """Pairs of elements that continue one member through an interior point."""
    e = frame.elements
    nn = frame.n_nodes
    inc_node = e.reshape(-1)
    inc_el = np.repeat(np.arange(len(e)), 2)
    deg = np.bincount(inc_node, minlength=nn)
    order = np.argsort(inc_node, kind="stable")
    start = np.concatenate([[0], np.cumsum(deg)[:-1]])
    cand = np.flatnonzero((deg == 2) & ~frame.restraint.any(axis=1))
    if cand.size == 0:
        return np.empty((0, 2), np.int64)
    a = inc_el[order[start[cand]]]
    b = inc_el[order[start[cand] + 1]]
    ok = a != b
    cand, a, b = cand[ok], a[ok], b[ok]
    p = frame.nodes
    other_a = np.where(e[a, 0] == cand, e[a, 1], e[a, 0])
    other_b = np.where(e[b, 0] == cand, e[b, 1], e[b, 0])
    da = p[other_a] - p[cand]
    db = p[other_b] - p[cand]
    cos = np.einsum("ij,ij->i", da, db) / (np.linalg.norm(da, axis=1) * np.linalg.norm(db, axis=1))
    ok = 1.0 + cos <= COLLINEAR_TOL
    for name in ("E", "G", "A", "Iy", "Iz", "J", "Ip"):
        x = getattr(frame, name)
        ok &= np.abs(x[a] - x[b]) <= SAME_TOL * np.maximum(np.abs(x[a]), np.abs(x[b]))
    ok &= frame.bar[a] == frame.bar[b]
    R, _ = local_axes(frame)
    ok &= np.abs(np.einsum("ij,ij->i", R[a, 2], R[b, 2])) >= 1 - 1e-6
    return np.column_stack([a[ok], b[ok]])


def _finish(frame: Frame, comp: np.ndarray, labels: np.ndarray, explicit: bool) -> Members:
    m = len(labels)
    length = np.bincount(comp, weights=frame.lengths(), minlength=m)
    nn = frame.n_nodes
    key = np.repeat(comp, 2) * nn + frame.elements.reshape(-1)
    uk, cnt = np.unique(key, return_counts=True)
    ends_key = uk[cnt == 1]
    owner = ends_key // nn
    n_ends = np.bincount(owner, minlength=m)
    ends = np.full((m, 2), -1, np.int64)
    two = n_ends[owner] == 2
    ok_keys = ends_key[two]                       # sorted by member, then node
    ends[ok_keys[0::2] // nn, 0] = ok_keys[0::2] % nn
    ends[ok_keys[1::2] // nn, 1] = ok_keys[1::2] % nn
    return Members(comp.astype(np.int64), np.asarray(labels, np.int64), length, ends, explicit)
