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
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .elements import local_axes
from .members import Members
from .model import Frame

#: compression below this fraction of the case's largest compression is negligible
NEGLIGIBLE = 1e-3


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
    bent = (bend_y + bend_z) > 0
    axis = np.where(beam & bent, np.where(about_y, "y", "z"), "")
    Lg = np.where(axis == "y", Ly, np.where(axis == "z", Lz, np.nan))
    return EffectiveLengths(status, N, Ncr, Ly, Lz, ry, rz, axis, Lg, Lg / members.length, lam, g)
