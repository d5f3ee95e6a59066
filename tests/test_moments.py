"""Moment terms of the geometric stiffness: lateral-torsional buckling (framebuckle.mechanics.moments)."""

import math

import meshio
import numpy as np
import pytest
import scipy.linalg as sla

import framebuckle as fb
from framebuckle.model.model import make_frame
from mech_models import E, G, static_solve

# an invented narrow rectangular section 20 x 200 mm, strong axis = local y (depth along local z)
L, b, h = 4.0, 0.02, 0.2
IY, IZ, A = b * h ** 3 / 12, h * b ** 3 / 12, b * h
J = h * b ** 3 / 3 * (1 - 0.63 * b / h)       # narrow rectangle (Timoshenko & Gere 1961, sec. 6.2)
MCR = math.pi / L * math.sqrt(E * IZ * G * J)  # Timoshenko & Gere 1961, Theory of Elastic Stability, sec. 6.2


def _beam(ncell, ms, me, field=True, extra_points=None):
    """Fork-supported beam along global X; internal moment My varying linearly from ms to me."""
    n = ncell + 1
    pts = np.zeros((n, 3)); pts[:, 0] = np.linspace(0, L, n)
    cells = np.column_stack([np.arange(ncell), np.arange(1, n)])
    r = np.zeros((n, 6)); r[0, :4] = 1; r[-1, 1:4] = 1            # forks: v = w = twist = 0
    cd = {k: [np.full(ncell, v)] for k, v in dict(E=E, G=G, A=A, Iy=IY, Iz=IZ, J=J).items()}
    if field:
        x0, x1 = pts[cells[:, 0], 0] / L, pts[cells[:, 1], 0] / L
        Ms = np.zeros((ncell, 3)); Me = np.zeros((ncell, 3))
        Ms[:, 1] = ms + (me - ms) * x0
        Me[:, 1] = ms + (me - ms) * x1
        cd["moment_start"] = [Ms]; cd["moment_end"] = [Me]
    return meshio.Mesh(pts, [("line", cells)], point_data=dict({"restraint": r}, **(extra_points or {})),
                       cell_data=cd)


@pytest.mark.parametrize("M", [1000.0, -1000.0])
def test_uniform_moment_narrow_rectangle(M):
    # M_cr = (pi / L) sqrt(E Iz G J) (Timoshenko & Gere 1961, sec. 6.2), within 1 % at fine sub-division
    res = fb.solve(_beam(1, M, M), subdivide=16, modes=2)
    c = res.cases[0]
    assert c.alpha_cr * abs(M) == pytest.approx(MCR, rel=0.01)
    assert c.alpha_cr * abs(M) == pytest.approx(MCR, rel=2e-3)          # 0.16 % measured
    assert c.load_factors[1] * abs(M) == pytest.approx(2 * MCR, rel=0.02)   # two half-waves
    mc = c.mesh_check
    assert mc["order"] == 2 and mc["richardson"] * abs(M) == pytest.approx(MCR, rel=1e-5)


def _series_mcr(psi, nterms=12, nq=200):
    """Ritz solution of the same energy with sine series: 1/2 int(E Iz v''^2 + G J th'^2) + int M th v''."""
    xq, wq = np.polynomial.legendre.leggauss(nq)
    x = (xq + 1) * L / 2
    w = wq * L / 2
    Mx = 1.0 + (psi - 1.0) * x / L                    # M(0) = 1, M(L) = psi
    n = np.arange(1, nterms + 1)
    S = np.sin(np.outer(n, x) * math.pi / L)
    k = (n * math.pi / L)
    K = np.zeros((2 * nterms, 2 * nterms))
    K[:nterms, :nterms] = np.diag(E * IZ * k ** 4 * L / 2)
    K[nterms:, nterms:] = np.diag(G * J * k ** 2 * L / 2)
    C = -(S * k[:, None] ** 2 * Mx * w) @ S.T           # v'' of v-term i, times theta-term j
    Kg = np.zeros_like(K)
    Kg[:nterms, nterms:] = C
    Kg[nterms:, :nterms] = C.T
    mu = sla.eigh(-Kg, K, eigvals_only=True)
    return 1.0 / mu.max()


def test_moment_gradient_matches_series_solution():
    # one end moment (psi = 0): the element assembly must reproduce an independent Ritz (sine series)
    # solution of the same energy (common practice); the factor C1 = M_cr / M_cr(uniform) is about 1.75
    # (Salvadori's approximation 1.75 + 1.05 psi + 0.3 psi^2, from memory)
    res = fb.solve(_beam(2, 1000.0, 0.0), subdivide=16)
    got = res.cases[0].mesh_check["richardson"] * 1000.0
    ref = _series_mcr(0.0)
    assert got == pytest.approx(ref, rel=2e-3)
    assert got / MCR == pytest.approx(1.75, rel=0.03)
    assert _series_mcr(1.0) == pytest.approx(MCR, rel=1e-6)             # series self-check, sec. 6.2


def test_moments_recovered_from_displacements_and_rotations():
    # end moments applied to the beam in a first-order run; the moment field comes back from the
    # displacements and rotations and gives the uniform-moment M_cr (Timoshenko & Gere 1961, sec. 6.2)
    n = 5
    pts = np.zeros((n, 3)); pts[:, 0] = np.linspace(0, L, n)
    cells = np.column_stack([np.arange(n - 1), np.arange(1, n)])
    r = np.zeros((n, 6)); r[0, :4] = 1; r[-1, 1:4] = 1
    frame = make_frame(pts, cells, E, G, A, IY, IZ, J, restraint=r)
    M = 1000.0
    loads = np.zeros((n, 6)); loads[0, 4] = -M; loads[-1, 4] = M      # equal and opposite about Y
    u = static_solve(frame, loads)
    mesh = _beam(n - 1, 0, 0, field=False, extra_points={"displacement": u[:, :3], "rotation": u[:, 3:]})
    auto = fb.solve(mesh, subdivide=4)
    assert auto.cases[0].status == "no_compression"          # recovered moments: off unless asked
    res = fb.solve(mesh, {"analysis": {"moment_terms": True}}, subdivide=4)
    Mrec = res.input.cases[0].extra["moments"]
    assert np.allclose(np.abs(Mrec[:, [1, 4]]), M, rtol=1e-8)          # uniform, statics
    assert res.cases[0].mesh_check["richardson"] * M == pytest.approx(MCR, rel=1e-3)
    off = fb.solve(_beam(1, 1000.0, 1000.0), subdivide=4, moment_terms=False)
    assert off.cases[0].status == "no_compression"


def test_missing_end_field_is_refused():
    mesh = _beam(1, 1.0, 1.0)
    del mesh.cell_data["moment_end"]
    with pytest.raises(fb.InputError, match="'moment_start' is given but 'moment_end' is not"):
        fb.solve(mesh)


def test_moment_about_local_z_same_as_about_local_y():
    # the same beam with its local axes turned by 90 degrees (orientation = global Y): the strong
    # axis is now local z and the moment is Mz; M_cr must not change (Timoshenko & Gere 1961, sec. 6.2)
    m = _beam(1, 1000.0, 1000.0)
    m.cell_data["Iy"], m.cell_data["Iz"] = [np.array([IZ])], [np.array([IY])]
    m.cell_data["orientation"] = [np.array([[0.0, 1.0, 0.0]])]
    m.cell_data["moment_start"] = [np.array([[0.0, 0.0, 1000.0]])]
    m.cell_data["moment_end"] = [np.array([[0.0, 0.0, 1000.0]])]
    turned = fb.solve(m, subdivide=8).cases[0]
    plain = fb.solve(_beam(1, 1000.0, 1000.0), subdivide=8).cases[0]
    assert turned.alpha_cr == pytest.approx(plain.alpha_cr, rel=1e-10)
    assert turned.mesh_check["richardson"] * 1000.0 == pytest.approx(MCR, rel=1e-5)


def test_beam_column_axial_force_and_uniform_moment():
    # lateral-torsional buckling of a doubly symmetric simply supported beam-column under P and M:
    # M^2 = r0^2 (P_z - P) (P_T - P), r0^2 = Ip / A, P_T = G J / r0^2 (Timoshenko & Gere 1961, ch. 6;
    # Trahair 1993, Flexural-Torsional Buckling of Structures, ch. 7; sections from memory).
    # Both scale with the load factor: lam^2 M^2 = r0^2 (Pz - lam P)(PT - lam P).
    r02 = (IY + IZ) / A
    pz = math.pi ** 2 * E * IZ / L ** 2
    pt = G * J / r02
    P, M = 0.3 * pz, 0.5 * MCR
    a, b, c = M ** 2 - r02 * P ** 2, r02 * P * (pz + pt), -r02 * pz * pt
    lam = (-b + math.sqrt(b * b - 4 * a * c)) / (2 * a)
    mesh = _beam(1, M, M)
    mesh.cell_data["axial_force"] = [np.array([-P])]
    res = fb.solve(mesh, subdivide=16)
    assert res.cases[0].mesh_check["richardson"] == pytest.approx(lam, rel=1e-4)
