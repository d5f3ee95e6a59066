r"""First-order (linear) static analysis of a :class:`~framebuckle.model.model.Frame`.

Used to produce the axial forces of the sample meshes from real loads, and to
recover member forces from a linear run's displacements.

Loads
-----
* nodal loads ``P`` (n, 6) in global axes: forces and moments on
  ``[ux, uy, uz, rx, ry, rz]``;
* uniformly distributed member loads ``q`` (e, 3), force per unit length in
  global axes, over the whole member (self-weight is such a load:
  ``q = rho A g``, see :func:`self_weight`).

A distributed load enters through its consistent equivalent nodal loads (the
negatives of the fixed-end forces).  With ``(q_x, q_y, q_z) = R q`` in local
axes, for a beam of length ``L`` (``theta_y = -dw/dx``):

.. math::

    f^{eq} = \Bigl[\tfrac{q_x L}{2}, \tfrac{q_y L}{2}, \tfrac{q_z L}{2}, 0,
             -\tfrac{q_z L^2}{12}, \tfrac{q_y L^2}{12},\;
             \tfrac{q_x L}{2}, \tfrac{q_y L}{2}, \tfrac{q_z L}{2}, 0,
             \tfrac{q_z L^2}{12}, -\tfrac{q_y L^2}{12}\Bigr]

and for a pin-ended bar the moment terms are zero (simple-beam reactions).

Solution and member forces
--------------------------
``K u = P + sum_e T_e^T f^{eq}_e`` on the free DOFs; the end forces acting on
each element, in its local axes, are

.. math::  f_e = k_e T_e u_e - f^{eq}_e ,

so that at every joint ``sum_e T_e^T f_e`` equals the applied nodal load
(plus the reaction at a support).  Internal forces follow the usual
positive-face convention: at the start node the internal force is ``-f`` of
the start DOFs, at the end node ``+f`` of the end DOFs; thus the axial force
``N`` is tension positive, ``Mx`` is the torque, ``My``/``Mz`` the bending
moments about local y/z.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from ..mechanics.assemble import Assembler
from ..mechanics.elements import element_dofs, local_axes
from ..errors import InputError, ModelError
from ..model.model import DOF_NAMES, Frame
from .solve import Constraints, factorize, find_constraints

#: standard acceleration of gravity, m/s^2 (ISO 80000-3)
STANDARD_GRAVITY = 9.80665


@dataclass(frozen=True)
class MemberForces:
    """End forces of every element in its local axes.

    ``local`` (e, 12) are the forces and moments acting *on* the element at its
    start (0:6) and end (6:12) node.  The properties give internal forces at
    both ends, shape (e, 2), positive-face convention.
    """

    local: np.ndarray

    def _pair(self, c: int) -> np.ndarray:
        return np.column_stack([-self.local[:, c], self.local[:, 6 + c]])

    @property
    def N_ends(self) -> np.ndarray:
        """Axial force at start and end, tension positive."""
        return self._pair(0)

    @property
    def N(self) -> np.ndarray:
        """Axial force at mid-length (mean of both ends), tension positive, (e,)."""
        return self.N_ends.mean(axis=1)

    @property
    def Vy(self) -> np.ndarray:
        return self._pair(1)

    @property
    def Vz(self) -> np.ndarray:
        return self._pair(2)

    @property
    def Mx(self) -> np.ndarray:
        """Torque."""
        return self._pair(3)

    @property
    def My(self) -> np.ndarray:
        return self._pair(4)

    @property
    def Mz(self) -> np.ndarray:
        return self._pair(5)


@dataclass(frozen=True)
class StaticResult:
    frame: Frame
    displacements: np.ndarray     # (n, 6) global [ux, uy, uz, rx, ry, rz]
    reactions: np.ndarray         # (n, 6) support reactions (zero at free DOFs)
    forces: MemberForces
    loads: np.ndarray             # (n, 6) total applied nodal loads incl. equivalent member loads
    constraints: Constraints

    @property
    def axial(self) -> np.ndarray:
        """Mid-length axial force of every element, tension positive."""
        return self.forces.N


def self_weight(frame: Frame, density, gravity=(0.0, 0.0, -STANDARD_GRAVITY)) -> np.ndarray:
    """Distributed self-weight ``rho A g`` of every element, (e, 3) force per length."""
    rho = np.broadcast_to(np.asarray(density, float), (frame.n_elements,))
    return (rho * frame.A)[:, None] * np.asarray(gravity, float)[None, :]


def _udl(frame: Frame, udl) -> np.ndarray | None:
    if udl is None:
        return None
    q = np.asarray(udl, float)
    if q.shape == (3,):
        q = np.broadcast_to(q, (frame.n_elements, 3))
    if q.shape != (frame.n_elements, 3):
        raise InputError(f"member loads must have shape ({frame.n_elements}, 3), got {q.shape}",
                         source=frame.source)
    if not np.isfinite(q).all():
        raise InputError("member loads have NaN or infinite values", source=frame.source)
    return q


def equivalent_loads_local(frame: Frame, udl) -> np.ndarray:
    """Equivalent nodal loads ``f_eq`` (e, 12) in local axes of uniform member loads."""
    q = _udl(frame, udl)
    fe = np.zeros((frame.n_elements, 12))
    if q is None:
        return fe
    R, L = local_axes(frame)
    ql = np.einsum("eij,ej->ei", R, q)                   # local components per length
    half = ql * (L / 2)[:, None]
    fe[:, 0:3] = half
    fe[:, 6:9] = half
    beam = ~frame.bar
    m = (L * L / 12)[beam]
    fe[beam, 4] = -ql[beam, 2] * m
    fe[beam, 5] = ql[beam, 1] * m
    fe[beam, 10] = ql[beam, 2] * m
    fe[beam, 11] = -ql[beam, 1] * m
    return fe


def _scatter(frame: Frame, fe_global: np.ndarray) -> np.ndarray:
    return np.bincount(element_dofs(frame).ravel(), weights=fe_global.ravel(),
                       minlength=frame.n_dofs).reshape(-1, 6)


def member_forces(frame: Frame, displacements, udl=None, assembler: Assembler | None = None) -> MemberForces:
    """End forces in local axes from global displacements (n, 6): ``k T u_e - f_eq``.

    This is the public map from a linear run's displacements (and its member
    loads) to element forces; it does not solve anything.
    """
    u = np.asarray(displacements, float)
    if u.shape != (frame.n_nodes, 6):
        raise InputError(f"displacements must have shape ({frame.n_nodes}, 6), got {u.shape}",
                         source=frame.source)
    asm = assembler or Assembler.build(frame)
    ue = u.reshape(-1)[element_dofs(frame)]                          # (e, 12) global
    f = np.einsum("eij,ejk,ek->ei", asm.T, asm.Ke, ue, optimize=True)
    f -= equivalent_loads_local(frame, udl)
    f.setflags(write=False)
    return MemberForces(f)


def solve_static(frame: Frame, loads=None, udl=None, *, planar: bool | str = False,
                 assembler: Assembler | None = None) -> StaticResult:
    """Linear static solution for nodal ``loads`` (n, 6) and member loads ``udl`` (e, 3).

    Restraints come from ``frame.restraint``; rotational DOFs that no element
    stiffens are restrained automatically (a load on one is refused).
    Raises :class:`ModelError` for a mechanism.
    """
    n = frame.n_nodes
    P = np.zeros((n, 6)) if loads is None else np.array(loads, float)
    if P.shape != (n, 6):
        raise InputError(f"nodal loads must have shape ({n}, 6), got {P.shape}", source=frame.source)
    if not np.isfinite(P).all():
        raise InputError("nodal loads have NaN or infinite values", source=frame.source)
    asm = assembler or Assembler.build(frame)
    K = asm.stiffness()
    cons = find_constraints(frame, K, planar)
    auto = cons.fixed.reshape(n, 6) & ~frame.restraint
    bad = np.flatnonzero((auto & (P != 0)).any(axis=1))
    if bad.size:
        comps = [DOF_NAMES[c] for c in np.flatnonzero(auto[bad[0]] & (P[bad[0]] != 0))]
        raise ModelError(f"a load acts on point {bad[0]} in {', '.join(comps)}, a direction in which no "
                         f"member gives stiffness (or outside the plane of a planar analysis)",
                         source=frame.source)
    fe = equivalent_loads_local(frame, udl)
    F = P + _scatter(frame, np.einsum("eji,ej->ei", asm.T, fe))
    factor, _ = factorize(K, cons, frame, n, frame.source)
    u = np.zeros(frame.n_dofs)
    u[cons.free] = factor.solve(F.reshape(-1)[cons.free])
    r = sp.csr_matrix(K) @ u - F.reshape(-1)
    r[cons.free] = 0.0
    disp = u.reshape(n, 6)
    forces = member_forces(frame, disp, udl, asm)
    return StaticResult(frame, _ro(disp), _ro(r.reshape(n, 6)), forces, _ro(F), cons)


def _ro(a):
    a = np.array(a, float)
    a.setflags(write=False)
    return a
