"""Element matrices against closed forms and against sympy integration.

References
----------
* Przemieniecki 1968, Theory of Matrix Structural Analysis, McGraw-Hill,
  sec. 15.2 (geometric "stability" matrix of a beam element, the
  P/(30 L) [36 3L -36 3L; ...] matrix) and sec. 5.4 (beam stiffness matrix).
* The matrices follow from the energy integrals
  ``K = int EI phi''^T phi'' dx`` and ``Kg = P int phi'^T phi' dx`` with the cubic
  Hermite shape functions (same text, ch. 15); here sympy integrates them
  independently of the package (sympy as the general-purpose reference library).
* Section and chapter numbers are from memory; the matrices themselves are
  re-derived here by sympy.
"""

from functools import lru_cache

import numpy as np
import pytest
import sympy as sp

from framebuckle.mechanics import elements as el
from framebuckle.model.model import make_frame

LENGTHS = np.array([0.7, 2.5, 6.0])


# ------------------------------------------------------------------ sympy references

X, LL = sp.symbols("x L", positive=True)


@lru_cache(None)
def hermite(s: int = +1):
    """Cubic Hermite shape functions for DOFs (v1, theta1, v2, theta2) with theta = s dv/dx."""
    xi = X / LL
    n1 = 1 - 3 * xi**2 + 2 * xi**3
    n2 = LL * (xi - 2 * xi**2 + xi**3)
    n3 = 3 * xi**2 - 2 * xi**3
    n4 = LL * (-xi**2 + xi**3)
    # theta = s v'  <=>  v' = s theta, so the rotation shape functions carry the factor s
    return [n1, s * n2, n3, s * n4]


@lru_cache(None)
def sympy_geometric(s: int = +1) -> sp.Matrix:
    """int_0^L phi_i' phi_j' dx (Przemieniecki 1968, ch. 15, derivation of the stability matrix)."""
    d = [sp.diff(f, X) for f in hermite(s)]
    return sp.Matrix(4, 4, lambda i, j: sp.integrate(d[i] * d[j], (X, 0, LL)))


@lru_cache(None)
def sympy_bending(s: int = +1) -> sp.Matrix:
    """int_0^L phi_i'' phi_j'' dx (times EI: the bending stiffness; Przemieniecki 1968, sec. 5.4)."""
    d = [sp.diff(f, X, 2) for f in hermite(s)]
    return sp.Matrix(4, 4, lambda i, j: sp.integrate(d[i] * d[j], (X, 0, LL)))


def evaluate(M: sp.Matrix, L: float) -> np.ndarray:
    return np.array(M.subs(LL, L).evalf(), dtype=float)


def przemieniecki_geometric(L: float) -> np.ndarray:
    """Closed form, per unit axial force (Przemieniecki 1968, sec. 15.2)."""
    return np.array([[36, 3 * L, -36, 3 * L],
                     [3 * L, 4 * L**2, -3 * L, -L**2],
                     [-36, -3 * L, 36, -3 * L],
                     [3 * L, -L**2, -3 * L, 4 * L**2]]) / (30 * L)


def przemieniecki_bending(EI: float, L: float) -> np.ndarray:
    """Closed form (Przemieniecki 1968, sec. 5.4), DOFs (v1, theta_z1, v2, theta_z2)."""
    return EI / L**3 * np.array([[12, 6 * L, -12, 6 * L],
                                 [6 * L, 4 * L**2, -6 * L, 2 * L**2],
                                 [-12, -6 * L, 12, -6 * L],
                                 [6 * L, 2 * L**2, -6 * L, 4 * L**2]])


def errors_geometric_4x4() -> dict:
    """Largest relative deviations of geometric_4x4 from the two references (for the report)."""
    g = el.geometric_4x4(LENGTHS, +1)
    closed = max(np.abs(g[i] - przemieniecki_geometric(L)).max() / np.abs(przemieniecki_geometric(L)).max()
                 for i, L in enumerate(LENGTHS))
    sym = max(np.abs(g[i] - evaluate(sympy_geometric(+1), L)).max() / np.abs(g[i]).max()
              for i, L in enumerate(LENGTHS))
    return {"closed_form": closed, "sympy": sym}


# ------------------------------------------------------------------ 4 x 4 blocks


def test_geometric_4x4_equals_przemieniecki_closed_form():
    g = el.geometric_4x4(LENGTHS, +1)
    for i, L in enumerate(LENGTHS):
        # Przemieniecki 1968, Theory of Matrix Structural Analysis, sec. 15.2
        np.testing.assert_allclose(g[i], przemieniecki_geometric(L), rtol=1e-14, atol=1e-14 / L)


@pytest.mark.parametrize("s", [+1, -1])
def test_geometric_4x4_equals_sympy_integral(s):
    g = el.geometric_4x4(LENGTHS, s)
    for i, L in enumerate(LENGTHS):
        # sympy: int_0^L phi_i' phi_j' dx with the cubic Hermite functions (theta = s dv/dx)
        np.testing.assert_allclose(g[i], evaluate(sympy_geometric(s), L), rtol=1e-13, atol=1e-13)


def test_sympy_geometric_reproduces_przemieniecki_symbolically():
    # the two references agree exactly (symbolic), so neither is a typo
    L = LL
    closed = sp.Matrix([[36, 3 * L, -36, 3 * L], [3 * L, 4 * L**2, -3 * L, -L**2],
                        [-36, -3 * L, 36, -3 * L], [3 * L, -L**2, -3 * L, 4 * L**2]]) / (30 * L)
    assert sp.simplify(sympy_geometric(+1) - closed) == sp.zeros(4, 4)


def test_bending_block_equals_closed_form_and_sympy():
    EIz, EIy = 3.0e6, 1.3e6
    n = len(LENGTHS)
    K = el.beam_elastic_local(LENGTHS, np.full(n, 1.0), np.full(n, 1.0), np.full(n, 1.0),
                              np.full(n, EIy), np.full(n, EIz), np.full(n, 1.0))
    xy = np.ix_([1, 5, 7, 11], [1, 5, 7, 11])
    xz = np.ix_([2, 4, 8, 10], [2, 4, 8, 10])
    for i, L in enumerate(LENGTHS):
        # Przemieniecki 1968, sec. 5.4 (x-y plane, theta_z = dv/dx)
        np.testing.assert_allclose(K[i][xy], przemieniecki_bending(EIz, L), rtol=1e-14)
        # sympy: EI int phi_i'' phi_j'' dx, x-y plane (theta_z = +dv/dx) and x-z plane (theta_y = -dw/dx)
        np.testing.assert_allclose(K[i][xy], EIz * evaluate(sympy_bending(+1), L), rtol=1e-13)
        np.testing.assert_allclose(K[i][xz], EIy * evaluate(sympy_bending(-1), L), rtol=1e-13)


# ------------------------------------------------------------------ 12 x 12 local matrices


def sympy_local_12(L: float, EA, GJ, EIy, EIz, r2):
    """Full 12 x 12 local elastic and unit-force geometric matrices from energy (sympy).

    Local DOFs [u, v, w, tx, ty, tz] per node.  Axial displacement and twist are
    linear; v(x) uses Hermite functions with theta_z = +dv/dx; w(x) with
    theta_y = -dw/dx (right-handed axes: a positive rotation about y moves +x
    towards -z).  Energy (Przemieniecki 1968, ch. 5 and 15):

    U  = 1/2 int EA u'^2 + GJ tx'^2 + EIz v''^2 + EIy w''^2 dx
    Ug = 1/2 P int v'^2 + w'^2 + (Ip/A) tx'^2 dx

    The Hessians are placed field by field at the DOFs that carry each field.
    """
    lin = [1 - X / LL, X / LL]
    lin_int = sp.Matrix(2, 2, lambda i, j: sp.integrate(sp.diff(lin[i], X) * sp.diff(lin[j], X),
                                                        (X, 0, LL)))
    a = evaluate(lin_int, L)
    K = np.zeros((12, 12))
    Kg = np.zeros((12, 12))
    fields = [  # (dofs, K block, Kg block)
        ([0, 6], EA * a, 0 * a),
        ([3, 9], GJ * a, r2 * a),
        ([1, 5, 7, 11], EIz * evaluate(sympy_bending(+1), L), evaluate(sympy_geometric(+1), L)),
        ([2, 4, 8, 10], EIy * evaluate(sympy_bending(-1), L), evaluate(sympy_geometric(-1), L)),
    ]
    for dofs, kb, gb in fields:
        K[np.ix_(dofs, dofs)] += kb
        Kg[np.ix_(dofs, dofs)] += gb
    return K, Kg


def test_local_12x12_equals_sympy_energy_including_xz_sign_convention():
    L = LENGTHS
    n = len(L)
    E_, G_, A_, Iy, Iz, J_, Ip = 2.0e11, 8.0e10, 4e-3, 3e-6, 7e-6, 1e-7, 1.1e-5
    K = el.beam_elastic_local(L, np.full(n, E_), np.full(n, G_), np.full(n, A_), np.full(n, Iy),
                              np.full(n, Iz), np.full(n, J_))
    Gm = el.beam_geometric_local(L, np.full(n, A_), np.full(n, Ip))
    for i in range(n):
        # sympy energy with theta_y = -dw/dx (Przemieniecki 1968, ch. 5 and 15)
        Kref, Gref = sympy_local_12(L[i], E_ * A_, G_ * J_, E_ * Iy, E_ * Iz, Ip / A_)
        np.testing.assert_allclose(K[i], Kref, rtol=1e-12, atol=1e-12 * np.abs(Kref).max())
        np.testing.assert_allclose(Gm[i], Gref, rtol=1e-12, atol=1e-12 * np.abs(Gref).max())


def _skew_frame():
    """Three beams in general 3D positions with orientation vectors not along any axis."""
    nodes = np.array([[0.0, 0.0, 0.0], [1.3, 2.1, 0.7], [-0.4, 1.0, 3.2], [2.0, -1.0, 1.0]])
    elements = np.array([[0, 1], [1, 2], [3, 0]])
    orient = np.array([[0.3, -0.2, 1.0], [1.0, 0.4, 0.1], [0.2, 1.0, -0.5]])
    return make_frame(nodes, elements, 2.1e11, 8.1e10, 5e-3, 3e-6, 9e-6, 2e-7,
                      orientation=orient)


def _rigid_body_modes(frame):
    """Six global rigid-body motions of the two nodes of every element, (e, 12, 6)."""
    p = frame.nodes[frame.elements]                       # (e, 2, 3)
    out = np.zeros((frame.n_elements, 12, 6))
    for k in range(3):
        t = np.zeros(3)
        t[k] = 1
        out[:, [k, 6 + k], k] = 1.0                       # translation
        w = np.zeros(3)
        w[k] = 1
        for a in range(2):
            out[:, 6 * a:6 * a + 3, 3 + k] = np.cross(w, p[:, a])   # u = w x p
            out[:, 6 * a + 3 + k, 3 + k] = 1.0                      # theta = w
    return out


def test_global_matrices_symmetric():
    Ke, Ge, T = el.element_matrices(_skew_frame())
    # symmetry of an energy Hessian (common practice)
    np.testing.assert_allclose(Ke, np.swapaxes(Ke, 1, 2), rtol=0, atol=1e-12 * np.abs(Ke).max())
    np.testing.assert_allclose(Ge, np.swapaxes(Ge, 1, 2), rtol=0, atol=1e-12 * np.abs(Ge).max())
    # T is a rotation (orthogonal), local = T @ global
    np.testing.assert_allclose(np.einsum("eij,ekj->eik", T, T), np.broadcast_to(np.eye(12), T.shape),
                               atol=1e-14)


def test_rigid_body_modes_in_null_space_of_K():
    frame = _skew_frame()
    Ke, Ge, _ = el.element_matrices(frame)
    R = _rigid_body_modes(frame)
    KR = np.einsum("eij,ejk->eik", Ke, R)
    # a rigid motion strains nothing (Przemieniecki 1968, sec. 5.4; common practice):
    # |K r| small against |K| |r|
    scale = np.abs(Ke).max(axis=(1, 2))[:, None, None] * np.abs(R).max(axis=1, keepdims=True)
    assert (np.abs(KR) <= 1e-10 * scale).all()
    # rigid translations do no work on the geometric matrix either (rotations do: the
    # axial force turns with the member, which is why Kg is not rotation-free)
    GR = np.einsum("eij,ejk->eik", Ge, R[:, :, :3])
    assert (np.abs(GR) <= 1e-12 * np.abs(Ge).max()).all()
    # and the elastic matrix has exactly six zero eigenvalues
    for K in Ke:
        w = np.linalg.eigvalsh(K)
        assert (np.abs(w) <= 1e-9 * w.max()).sum() == 6


def test_xz_plane_sign_convention_by_rigid_rotation_about_local_y():
    """A rigid rotation ``theta_y = 1`` about local y moves the end node by ``w = -L``.

    With theta_y = -dw/dx the pair (w = -x, theta_y = 1) is rigid and must be in the
    null space of the local stiffness; with the opposite convention it would not be.
    (Right-hand rule; Przemieniecki 1968, sec. 5.4.)
    """
    L = np.array([2.0])
    K = el.beam_elastic_local(L, *(np.ones(1),) * 6)[0]
    r = np.zeros(12)
    r[4] = r[10] = 1.0       # theta_y at both ends
    r[8] = -L[0]             # w at the end node
    assert np.abs(K @ r).max() <= 1e-12 * np.abs(K).max()
    r_wrong = r.copy()
    r_wrong[8] = +L[0]
    assert np.abs(K @ r_wrong).max() > 1.0


def test_sparse_assembly_equals_direct_scatter_and_repeats():
    """The vectorised CSR assembly against a plain scatter-add of the element matrices
    (the direct stiffness method, common practice), on members along the global axes
    (whose 6 x 6 blocks hold exact zeros) and skew ones; no stored zeros, and repeated
    calls (the pattern is reused for every load case) give the same matrices."""
    from framebuckle.mechanics.assemble import Assembler
    nodes = np.array([[0.0, 0, 0], [0, 0, 3.0], [4.0, 0, 3.0], [4.0, 0, 0], [1.3, 2.1, 0.7]])
    elements = np.array([[0, 1], [1, 2], [2, 3], [1, 4], [4, 2]])
    fr = make_frame(nodes, elements, 2.1e11, 8.1e10, 5e-3, 3e-6, 9e-6, 2e-7)
    asm = Assembler.build(fr)
    dofs = (6 * fr.elements[:, :, None] + np.arange(6)).reshape(len(elements), 12)
    axial = np.array([-1.0e5, 2.0e4, -3.0e4, -5.0e3, 7.0e3])

    def scatter(mats):
        out = np.zeros((fr.n_dofs, fr.n_dofs))
        for d, m in zip(dofs, mats):
            out[np.ix_(d, d)] += m
        return out

    for _ in range(2):
        K = asm.stiffness()
        G1 = asm.geometric(axial)
        G2 = asm.geometric(-2.0 * axial)
        for M, ref in ((K, scatter(asm.Ke)), (G1, scatter(asm.Ge * axial[:, None, None])),
                       (G2, scatter(asm.Ge * (-2.0 * axial)[:, None, None]))):
            assert (M.data != 0).all()
            np.testing.assert_allclose(M.toarray(), ref, rtol=0, atol=1e-12 * np.abs(ref).max())
    assert K.nnz < 0.8 * len(asm.indices)       # the axis-aligned members' zeros are gone
