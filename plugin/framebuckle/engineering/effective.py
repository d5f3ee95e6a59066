r"""Effective (buckling) lengths of members from a buckling mode.

For mode ``k`` with load factor :math:`\alpha_k` and a member whose most
compressed cell carries :math:`N_{Ed} < 0`:

.. math::

    N_{cr} = \alpha_k |N_{Ed}|, \qquad
    L_{cr,y} = \pi \sqrt{E I_y / N_{cr}}, \qquad
    L_{cr,z} = \pi \sqrt{E I_z / N_{cr}}, \qquad
    \bar\lambda = \sqrt{A f_y / N_{cr}},

with ``E``, ``Iy``, ``Iz``, ``A`` and ``fy`` of that most compressed cell.
The axis the mode bends the member about is the one with the larger bending
strain energy in the member (``y``: bending in the local x-z plane, ``E Iy``).

Members whose largest compression is at most :data:`NEGLIGIBLE` times the
largest compression of the case (or carry no force) are ``negligible``;
members in tension throughout are ``tension``; bars are ``bar`` (N_cr only: the analysis has no
bending of bars, check them as pin-ended members).  Such members get NaN,
not infinite lengths.  In a planar analysis only the in-plane axis gets a length.

**Design values** (:func:`design_lengths`).  One mode's N_cr is meaningful only for the
members that take part in that mode: a lightly loaded member that the lowest mode barely
bends gets a huge, meaningless L_cr from it.  So each compressed member gets its design
values from its *governing mode*: the lowest computed mode in which it takes part, i.e. in
which its share of the mode's strain energy is at least :data:`MEMBER_SHARE` (0.05) times
the largest member share of that mode.  The threshold is relative, so that the verdict does
not depend on the size of the model: in the storey sway of a building with 100 equal columns
each column holds about 1 % of the energy and every one of them takes part; in a local mode
where one member holds 90 %, a neighbour holding 1 % (ratio 0.011) does not.  Modes whose
load factors are equal within :data:`REPEATED` are one eigenvalue: their shares are added
before the test, which makes it independent of the arbitrary basis of that eigenspace (the
modes are K-orthogonal); the mode of the cluster with the member's largest share is recorded.
The member's critical factor is ``alpha_m = N_cr / |N_Ed|`` = the governing mode's load
factor; members are ranked by it (lowest first, then by relative share).  A compressed
member that takes part in no computed mode is ``not_governed``: ask for more modes.  Both
lengths come from the governing mode's N_cr; about an axis that mode does not bend, the
length is an upper bound (no lower mode involves the member).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..mechanics.elements import local_axes
from ..mechanics.members import Members
from ..model.model import Frame

#: compression below this fraction of the case's largest compression is negligible
NEGLIGIBLE = 1e-3
#: a member takes part in a mode from this share of the mode's largest member share
MEMBER_SHARE = 0.05

#: bending energy of a member, relative to the most bent member of the mode, below which the
#: mode is taken not to bend the member at all (rounding level; no governing axis then)
BENT = 1e-9
#: load factors within this (relative) of each other are one repeated eigenvalue
REPEATED = 1e-6


@dataclass(frozen=True)
class EffectiveLengths:
    """Per member arrays (m,) for one mode of one case."""

    status: np.ndarray        # "compression", "negligible", "tension", "bar"
    N_Ed: np.ndarray          # most compressive axial force (tension positive)
    N_cr: np.ndarray
    L_cr_y: np.ndarray
    L_cr_z: np.ndarray
    ratio_y: np.ndarray       # L_cr_y / L
    ratio_z: np.ndarray
    axis: np.ndarray          # "y", "z" or ""
    L_cr: np.ndarray          # about the governing axis
    ratio: np.ndarray
    slenderness: np.ndarray   # sqrt(A fy / N_cr), NaN without fy
    governing_element: np.ndarray   # coarse element of N_Ed


def member_forces(frame: Frame, members: Members, axial: np.ndarray):
    """Most compressive axial force of each member and the element where it acts."""
    axial = np.asarray(axial, float)
    order = np.lexsort((axial, members.of_element))
    mem_sorted = members.of_element[order]
    first = np.flatnonzero(np.r_[True, mem_sorted[1:] != mem_sorted[:-1]])
    g = np.empty(members.n, np.int64)
    g[mem_sorted[first]] = order[first]
    return axial[g], g


def effective_lengths(frame: Frame, members: Members, axial: np.ndarray, alpha: float,
                      bend_y: np.ndarray, bend_z: np.ndarray, fy: np.ndarray | None = None,
                      negligible: float = NEGLIGIBLE, planar_axis: int | None = None) -> EffectiveLengths:
    """Effective lengths of all members for one mode (``bend_y``/``bend_z`` per member).

    In a planar analysis (``planar_axis`` = global axis normal to the plane) the length
    about the member axis that bends out of the plane is NaN: that buckling was not analysed.
    """
    N, g = member_forces(frame, members, axial)
    cmax = max(float(-np.min(axial)), 0.0)
    comp = N < 0
    small = comp & (-N <= negligible * cmax)
    bar = frame.bar[g]
    status = np.where(N > 0, "tension", np.where(~comp | small, "negligible",
                                                 np.where(bar, "bar", "compression")))
    use = comp & ~small
    Ncr = np.where(use, alpha * np.abs(N), np.nan)
    beam = use & ~bar
    with np.errstate(divide="ignore", invalid="ignore"):
        Ly = np.where(beam, np.pi * np.sqrt(frame.E[g] * frame.Iy[g] / Ncr), np.nan)
        Lz = np.where(beam, np.pi * np.sqrt(frame.E[g] * frame.Iz[g] / Ncr), np.nan)
        ry = Ly / members.length
        rz = Lz / members.length
        lam = np.full(members.n, np.nan) if fy is None else np.sqrt(frame.A[g] * np.asarray(fy, float)[g] / Ncr)
    lam = np.where(use, lam, np.nan)
    if planar_axis is not None:
        R, _ = local_axes(frame)
        y_in_plane_bending = np.abs(R[g, 1, planar_axis]) >= np.abs(R[g, 2, planar_axis])
        Lz = np.where(y_in_plane_bending, np.nan, Lz)
        Ly = np.where(y_in_plane_bending, Ly, np.nan)
        ry = Ly / members.length
        rz = Lz / members.length
    about_y = bend_y >= bend_z
    # a member the mode does not bend (energy at rounding level against the mode's most bent
    # member) gets no axis: its y/z choice would be decided by rounding noise
    tot = bend_y + bend_z
    bent = tot > BENT * max(float(np.max(tot, initial=0.0)), 1e-300)
    axis = np.where(beam & bent, np.where(about_y, "y", "z"), "")
    Lg = np.where(axis == "y", Ly, np.where(axis == "z", Lz, np.nan))
    return EffectiveLengths(status, N, Ncr, Ly, Lz, ry, rz, axis, Lg, Lg / members.length, lam, g)


@dataclass(frozen=True)
class DesignLengths:
    """Per member arrays (m,) of one case: values from each member's governing mode."""

    status: np.ndarray        # "compression", "bar", "not_governed", "negligible", "tension"
    mode: np.ndarray          # governing mode index (0-based), -1 where none
    alpha: np.ndarray         # member critical factor N_cr / |N_Ed| (the governing load factor)
    relative_share: np.ndarray  # share / largest member share in the governing mode (cluster)
    eff: EffectiveLengths     # lengths etc. gathered from the governing modes
    rank: np.ndarray          # 1 = lowest alpha; 0 for members without a governing mode


def relative_shares(share: np.ndarray, load_factors, repeated: float = REPEATED) -> np.ndarray:
    """(k, m) member shares over the largest member share of each mode.

    Shares of modes whose load factors agree within ``repeated`` (relative) are summed
    first (basis-independent for K-orthogonal modes of one repeated eigenvalue).
    """
    share = np.asarray(share, float)
    lam = np.asarray(load_factors, float)
    new = np.r_[True, np.abs(np.diff(lam)) > repeated * np.abs(lam[1:])] if lam.size else np.zeros(0, bool)
    group = np.cumsum(new) - 1
    summed = np.zeros((int(group.max()) + 1 if lam.size else 0, share.shape[1]))
    np.add.at(summed, group, share)
    top = summed.max(axis=1, keepdims=True)
    rel = summed / np.where(top > 0, top, 1.0)
    return rel[group]


def design_lengths(per_mode: list, share: np.ndarray, load_factors, member_share: float = MEMBER_SHARE,
                   repeated: float = REPEATED) -> DesignLengths:
    """Design values of every member from its governing mode (see the module docstring).

    ``per_mode``: the :class:`EffectiveLengths` of modes 1..k; ``share`` (k, m) the strain
    energy shares of the members in those modes.
    """
    lam = np.asarray(load_factors, float)
    share = np.asarray(share, float)
    rel = relative_shares(share, lam, repeated)
    base = per_mode[0]
    m = len(base.status)
    candidate = np.isin(base.status, ("compression", "bar"))
    takes_part = (rel >= member_share * (1 - 1e-12)) & candidate[None, :]
    found = takes_part.any(axis=0)
    first = np.argmax(takes_part, axis=0)
    # within a repeated eigenvalue: the mode of the cluster where the member's share is largest
    same = np.abs(lam[:, None] - lam[first][None, :]) <= repeated * np.abs(lam[first])[None, :]
    mode = np.argmax(np.where(same, share, -1.0), axis=0)
    mode = np.where(found, mode, -1)
    cols = np.arange(m)
    k = np.where(found, mode, 0)

    def pick(name):
        a = np.stack([getattr(e, name) for e in per_mode])[k, cols]
        if a.dtype.kind == "f":
            return np.where(found, a, np.nan)
        return np.where(found, a, "")

    eff = EffectiveLengths(base.status, base.N_Ed, pick("N_cr"), pick("L_cr_y"), pick("L_cr_z"),
                           pick("ratio_y"), pick("ratio_z"), pick("axis"), pick("L_cr"), pick("ratio"),
                           pick("slenderness"), base.governing_element)
    alpha = np.where(found, lam[k], np.nan)
    rshare = np.where(found, rel[k, cols], np.nan)
    # bars never bend in the analysis: one that takes part in no mode stays "bar" (check it pin-ended)
    status = np.where(candidate & ~found & (base.status != "bar"), "not_governed", base.status)
    # ties (identical members: shares equal up to the eigensolver's tolerance) keep member order
    order = np.lexsort((cols, -np.round(np.nan_to_num(rshare), 6), np.where(found, alpha, np.inf)))
    order = order[found[order]]
    rank = np.zeros(m, np.int64)
    rank[order] = np.arange(1, len(order) + 1)
    return DesignLengths(status, mode, alpha, rshare, eff, rank)


def design_summary(design: DesignLengths, labels, threshold: float) -> dict:
    """JSON-ready design table: members by what governs them, lowest critical factor first."""
    e = design.eff
    ranked = np.flatnonzero(design.rank > 0)
    ranked = ranked[np.argsort(design.rank[ranked])]
    return {
        "member_share": threshold,
        "rule": "each compressed member's N_cr = alpha_k |N_Ed| from the lowest mode k in which its strain-energy "
                "share is at least member_share times the mode's largest member share; ranked by alpha_k "
                "(= N_cr / |N_Ed|, the member's critical factor), lowest first",
        "members": [{"member": int(labels[m]), "rank": int(design.rank[m]),
                     "governing_mode": int(design.mode[m]) + 1, "alpha": float(design.alpha[m]),
                     "relative_share": float(design.relative_share[m]), "status": str(design.status[m]),
                     "N_Ed": float(e.N_Ed[m]), "N_cr": _finite(e.N_cr[m]), "axis": str(e.axis[m]),
                     "L_cr": _finite(e.L_cr[m]), "L_cr_ratio": _finite(e.ratio[m]),
                     "L_cr_y": _finite(e.L_cr_y[m]), "L_cr_z": _finite(e.L_cr_z[m])} for m in ranked],
        "not_governed": [int(labels[m]) for m in np.flatnonzero(design.status == "not_governed")],
    }


def _finite(x):
    x = float(x)
    return x if np.isfinite(x) else None
