r"""Element matrices for all elements at once.

Local axes of an element: x along the member from start to end node, z the
part of the orientation vector perpendicular to x, y = z x x.  Local DOFs per
node are ``[u, v, w, theta_x, theta_y, theta_z]``; the 12 DOFs of an element
are those of its start node followed by those of its end node.

Beam (Euler-Bernoulli, cubic Hermite bending, linear axial and twist):

.. math::

    K_e = \int_0^L B^T D B \, dx, \qquad
    K_{g} = P \int_0^L \phi'^T \phi' \, dx + \frac{P I_p}{A L}
            \begin{bmatrix} 1 & -1 \\ -1 & 1 \end{bmatrix}_{\theta_x}

with ``P`` the axial force (tension positive).  In the x-y plane the DOFs are
``(v1, theta_z1, v2, theta_z2)`` and

.. math::

    \frac{P}{30 L}\begin{bmatrix} 36 & 3L & -36 & 3L \\ 3L & 4L^2 & -3L & -L^2 \\
    -36 & -3L & 36 & -3L \\ 3L & -L^2 & -3L & 4L^2 \end{bmatrix};

in the x-z plane (``theta_y = -dw/dx``) the signs of the coupling terms flip.
Bars carry only axial stiffness ``EA/L`` and the string geometric stiffness
``P/L (I - e e^T)`` on the translations.
"""

from __future__ import annotations

import numpy as np

from ..model.model import Frame


def local_axes(frame: Frame) -> tuple[np.ndarray, np.ndarray]:
    """Rotation matrices ``R`` (e, 3, 3), rows = local x, y, z; and lengths (e,)."""
    p = frame.nodes
    d = p[frame.elements[:, 1]] - p[frame.elements[:, 0]]
    L = np.linalg.norm(d, axis=1)
    ex = d / L[:, None]
    o = frame.orientation
    ez = o - np.einsum("ij,ij->i", o, ex)[:, None] * ex
    ez /= np.linalg.norm(ez, axis=1)[:, None]
    ey = np.cross(ez, ex)
    return np.stack([ex, ey, ez], axis=1), L


def transformation(R: np.ndarray) -> np.ndarray:
    """12 x 12 block-diagonal transformation ``T`` (local = T @ global)."""
    T = np.zeros((len(R), 12, 12))
    for b in range(4):
        T[:, 3 * b:3 * b + 3, 3 * b:3 * b + 3] = R
    return T


def beam_elastic_local(L, E, G, A, Iy, Iz, J, phi_y=None, phi_z=None) -> np.ndarray:
    """Local elastic stiffness of 3D beams, shape (e, 12, 12).

    Euler-Bernoulli unless the shear parameters ``phi_y = 12 E Iz / (G Asy L^2)``
    (x-y plane) and ``phi_z = 12 E Iy / (G Asz L^2)`` (x-z plane) are given: then
    the Timoshenko beam of :func:`shear_parameters`.
    """
    n = len(L)
    K = np.zeros((n, 12, 12))
    ea = E * A / L
    gj = G * J / L
    _put(K, (0, 6), ea[:, None, None] * np.array([[1, -1], [-1, 1]]))
    _put(K, (3, 9), gj[:, None, None] * np.array([[1, -1], [-1, 1]]))
    # x-y plane bending, DOFs v, theta_z: EIz
    _put(K, (1, 5, 7, 11), _bend(E * Iz, L, +1, phi_y))
    # x-z plane bending, DOFs w, theta_y: EIy, coupling signs flipped
    _put(K, (2, 4, 8, 10), _bend(E * Iy, L, -1, phi_z))
    return K


def shear_parameters(frame: Frame, L: np.ndarray, sel) -> tuple:
    r"""Shear-flexibility parameters of the Timoshenko beam, ``(phi_y, phi_z)`` or ``(None, None)``.

    .. math::  \phi_y = \frac{12 E I_z}{G A_{sy} L^2}, \qquad \phi_z = \frac{12 E I_y}{G A_{sz} L^2}

    (``phi_y`` for bending in the x-y plane, where the shear force acts along y).
    The elastic stiffness is then the exact Timoshenko beam stiffness, e.g. in the
    x-y plane :math:`\frac{EI}{(1+\phi)L^3}[12, 6L, -12, 6L; 6L, (4+\phi)L^2, -6L,
    (2-\phi)L^2; \dots]`, and the geometric stiffness is :math:`\int v'^T v' dx` of the
    same element's deflection shape functions (Przemieniecki 1968, Theory of Matrix
    Structural Analysis, secs. 5.6 and 15.3):

    .. math::

        \frac{P}{(1+\phi)^2 L}\begin{bmatrix}
        \tfrac65 + 2\phi + \phi^2 & \tfrac{L}{10} & \cdot & \tfrac{L}{10} \\
        & L^2(\tfrac{2}{15} + \tfrac{\phi}{6} + \tfrac{\phi^2}{12}) & -\tfrac{L}{10} &
        -L^2(\tfrac{1}{30} + \tfrac{\phi}{6} + \tfrac{\phi^2}{12}) \\ \dots \end{bmatrix}.

    The second-order work is done on the slope of the total deflection, so the shear force
    in the buckled member is ``P`` times that slope: the column buckles at Engesser's load
    :math:`P_E / (1 + P_E / (G A_s))` (Timoshenko & Gere 1961, Theory of Elastic Stability,
    sec. 2.17), not at Haringx's.
    """
    out = []
    for As, I in ((frame.Asy, frame.Iz), (frame.Asz, frame.Iy)):
        if As is None:
            out.append(None)
            continue
        with np.errstate(divide="ignore"):
            out.append(12 * frame.E[sel] * I[sel] / (frame.G[sel] * As[sel] * L ** 2))
    return tuple(out)


def _bend(EI, L, s, phi=None):
    L2 = L * L
    ph = np.zeros(len(L)) if phi is None else phi
    c = EI / (L2 * L * (1 + ph))
    m = np.empty((len(L), 4, 4))
    m[:, 0, 0] = 12; m[:, 0, 1] = s * 6 * L; m[:, 0, 2] = -12; m[:, 0, 3] = s * 6 * L
    m[:, 1, 1] = (4 + ph) * L2; m[:, 1, 2] = -s * 6 * L; m[:, 1, 3] = (2 - ph) * L2
    m[:, 2, 2] = 12; m[:, 2, 3] = -s * 6 * L
    m[:, 3, 3] = (4 + ph) * L2
    iu = np.triu_indices(4, 1)
    m[:, iu[1], iu[0]] = m[:, iu[0], iu[1]]
    return c[:, None, None] * m


def geometric_4x4(L, s=+1, phi=None) -> np.ndarray:
    r"""Plane geometric stiffness per unit axial force, ``\int phi'^T phi' dx``.

    DOFs ``(v1, theta1, v2, theta2)`` with ``theta = dv/dx`` for ``s = +1``
    (``theta = -dv/dx`` for ``s = -1``).  Shape (e, 4, 4).  With the shear
    parameter ``phi`` the Timoshenko element's form (see :func:`shear_parameters`).
    """
    L = np.asarray(L, dtype=float)
    L2 = L * L
    m = np.empty((len(L), 4, 4))
    if phi is None:
        m[:, 0, 0] = 36; m[:, 0, 1] = s * 3 * L; m[:, 0, 2] = -36; m[:, 0, 3] = s * 3 * L
        m[:, 1, 1] = 4 * L2; m[:, 1, 2] = -s * 3 * L; m[:, 1, 3] = -L2
        m[:, 2, 2] = 36; m[:, 2, 3] = -s * 3 * L
        m[:, 3, 3] = 4 * L2
        scale = 1.0 / (30 * L)
    else:
        p = phi
        a = 36 + 60 * p + 30 * p * p             # 30 (6/5 + 2 phi + phi^2)
        b = L2 * (8 + 10 * p + 5 * p * p) / 2    # 30 L^2 (2/15 + phi/6 + phi^2/12)
        c = -L2 * (2 + 10 * p + 5 * p * p) / 2   # -30 L^2 (1/30 + phi/6 + phi^2/12)
        m[:, 0, 0] = a; m[:, 0, 1] = s * 3 * L; m[:, 0, 2] = -a; m[:, 0, 3] = s * 3 * L
        m[:, 1, 1] = b; m[:, 1, 2] = -s * 3 * L; m[:, 1, 3] = c
        m[:, 2, 2] = a; m[:, 2, 3] = -s * 3 * L
        m[:, 3, 3] = b
        scale = 1.0 / (30 * L * (1 + p) ** 2)
    iu = np.triu_indices(4, 1)
    m[:, iu[1], iu[0]] = m[:, iu[0], iu[1]]
    return m * scale[:, None, None]


def beam_geometric_local(L, A, Ip, phi_y=None, phi_z=None) -> np.ndarray:
    """Local geometric stiffness of beams per unit axial force, (e, 12, 12)."""
    n = len(L)
    G = np.zeros((n, 12, 12))
    _put(G, (1, 5, 7, 11), geometric_4x4(L, +1, phi_y))
    _put(G, (2, 4, 8, 10), geometric_4x4(L, -1, phi_z))
    r2 = Ip / A / L
    _put(G, (3, 9), r2[:, None, None] * np.array([[1, -1], [-1, 1]]))
    return G


def bar_elastic_local(L, E, A) -> np.ndarray:
    K = np.zeros((len(L), 12, 12))
    _put(K, (0, 6), (E * A / L)[:, None, None] * np.array([[1, -1], [-1, 1]]))
    return K


def bar_geometric_local(L) -> np.ndarray:
    G = np.zeros((len(L), 12, 12))
    m = (1.0 / L)[:, None, None] * np.array([[1, -1], [-1, 1]])
    _put(G, (1, 7), m)
    _put(G, (2, 8), m)
    return G


def _put(M, idx, block):
    idx = np.asarray(idx)
    M[:, idx[:, None], idx[None, :]] += block


def element_matrices(frame: Frame) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Global elastic stiffness and unit-force geometric stiffness of every element.

    Returns ``(Ke, Ge, T)``, each (e, 12, 12): ``Kg_element = P * Ge``.
    """
    Kl, Gl, T, _ = local_matrices(frame)
    Ke = _rotate(T, Kl)
    Ge = _rotate(T, Gl)
    return Ke, Ge, T


def local_matrices(frame: Frame):
    """Local ``(Kl, Gl, T, C)``: elastic and unit-force geometric stiffness after end-release
    condensation, the transformation, and the condensation matrices ``C`` (None without releases).
    """
    R, L = local_axes(frame)
    T = transformation(R)
    beam = ~frame.bar
    Kl = np.zeros((frame.n_elements, 12, 12))
    Gl = np.zeros_like(Kl)
    if beam.any():
        b = beam
        phi = shear_parameters(frame, L[b], b)
        Kl[b] = beam_elastic_local(L[b], frame.E[b], frame.G[b], frame.A[b],
                                   frame.Iy[b], frame.Iz[b], frame.J[b], *phi)
        Gl[b] = beam_geometric_local(L[b], frame.A[b], frame.Ip[b], *phi)
    if frame.bar.any():
        b = frame.bar
        Kl[b] = bar_elastic_local(L[b], frame.E[b], frame.A[b])
        Gl[b] = bar_geometric_local(L[b])
    C = None
    if frame.release is not None and frame.release.any():
        from ..model.releases import condensation, condense
        r = np.flatnonzero(frame.release.any(axis=1))
        C = np.broadcast_to(np.eye(12), Kl.shape).copy()
        C[r] = condensation(Kl[r], frame.release[r], frame.parent[r], frame.source)
        Kl[r] = condense(Kl[r], C[r])
        Gl[r] = condense(Gl[r], C[r])
    return Kl, Gl, T, C


def _rotate(T: np.ndarray, M: np.ndarray) -> np.ndarray:
    """``T^T M T`` for every element: two batched matrix products (BLAS per element;
    measured faster than the three-operand einsum and identical to it)."""
    return np.matmul(np.matmul(T.transpose(0, 2, 1), M), T)


def element_dofs(frame: Frame) -> np.ndarray:
    """Global DOF numbers of every element, shape (e, 12)."""
    c = np.arange(6)
    return np.concatenate([6 * frame.elements[:, :1] + c, 6 * frame.elements[:, 1:] + c], axis=1)
