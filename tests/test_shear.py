"""Shear-deformable (Timoshenko) beams with shear areas Asy, Asz."""

import math

import numpy as np
import pytest
import sympy as sp

import framebuckle as fb
from framebuckle.mechanics.elements import geometric_4x4
from framebuckle.model.model import make_frame
from mech_models import E, G, column_mesh, static_solve

L, I, A = 1.0, 6e-6, 4e-3
AS = 4.94e-4                                  # invented, very shear-flexible: P_E / (G As) = 0.31
PE = math.pi ** 2 * E * I / L ** 2            # Timoshenko & Gere 1961, Theory of Elastic Stability, sec. 2.1


def test_short_column_buckles_at_engesser_load():
    # Engesser: P = P_E / (1 + P_E / (G As)); Haringx: P (1 + P / (G As)) = P_E
    # (Timoshenko & Gere 1961, sec. 2.17).  The element works on the slope of the total deflection,
    # so it must reproduce Engesser's load and not Haringx's.
    engesser = PE / (1 + PE / (G * AS))
    haringx = G * AS * (math.sqrt(1 + 4 * PE / (G * AS)) - 1) / 2
    assert abs(haringx / engesser - 1) > 0.04
    mesh = column_mesh(L=L, ncell=1, Iy=I, Iz=I, A=A, P=-1.0, cell_data={"Asy": AS, "Asz": AS})
    res = fb.solve(mesh, subdivide=32, modes=2)
    lam = res.cases[0].load_factors
    assert lam[0] == pytest.approx(engesser, rel=2e-4)          # converges as h^2: 1.5e-4 at 32
    assert lam[1] == pytest.approx(engesser, rel=2e-4)          # both planes, same section
    mc = res.cases[0].mesh_check
    assert mc["order"] == 2 and mc["richardson"] == pytest.approx(engesser, rel=1e-6)
    # the study's section table reaches the same numbers; without shear areas: Euler
    st = {"sections": {"key": "sec", "values": {"1": {"Asy": AS, "Asz": AS}}}}
    mesh.cell_data["sec"] = [np.array([1.0])]
    assert fb.solve(mesh, st, subdivide=32).cases[0].alpha_cr == pytest.approx(lam[0], rel=1e-12)
    plain = column_mesh(L=L, ncell=1, Iy=I, Iz=I, A=A, P=-1.0)
    assert fb.solve(plain, subdivide=8).cases[0].alpha_cr == pytest.approx(PE, rel=1e-3)


def test_one_plane_only():
    # shear area only for shear along local y: bending in the x-y plane (about z, Iz) is affected
    mesh = column_mesh(L=L, ncell=1, Iy=2 * I, Iz=I, A=A, J=2e-5, P=-1.0, cell_data={"Asy": AS})
    lam = fb.solve(mesh, subdivide=32, modes=3, mesh_check=False).cases[0].load_factors
    assert lam[0] == pytest.approx(PE / (1 + PE / (G * AS)), rel=2e-4)
    # second mode in the same plane (two half-waves, 4 P_E, shear-corrected the same way)
    assert lam[1] == pytest.approx(4 * PE / (1 + 4 * PE / (G * AS)), rel=1e-3)
    assert lam[2] == pytest.approx(2 * PE, rel=1e-4)                 # x-z plane: Euler, Iy = 2 I


def test_cantilever_tip_deflection_includes_shear():
    # delta = P L^3 / (3 E I) + P L / (G As) (Timoshenko & Goodier 1951, Theory of Elasticity, sec. 21;
    # exact for the Timoshenko beam element)
    f = make_frame([[0, 0, 0], [L, 0, 0]], [[0, 1]], E, G, A, I, I, 1e-6, Asy=AS, Asz=np.inf,
                   restraint=[[1] * 6, [0] * 6])
    P = 1000.0
    loads = np.zeros((2, 6)); loads[1, 1] = P
    u = static_solve(f, loads)
    assert u[1, 1] == pytest.approx(P * L ** 3 / (3 * E * I) + P * L / (G * AS), rel=1e-10)
    loads = np.zeros((2, 6)); loads[1, 2] = P                      # no shear area along z: rigid
    assert static_solve(f, loads)[1, 2] == pytest.approx(P * L ** 3 / (3 * E * I), rel=1e-10)


def test_geometric_matrix_matches_symbolic_integral():
    # int_0^L v'^T v' dx of the Timoshenko element's deflection shape functions (Przemieniecki 1968,
    # Theory of Matrix Structural Analysis, sec. 5.6), integrated with sympy
    x, Ls, p = sp.symbols("x L phi", positive=True)
    xi, mu = x / Ls, 1 / (1 + p)
    N = [mu * (2 * xi**3 - 3 * xi**2 - p * xi + 1 + p), Ls * mu * (xi**3 - (2 + p / 2) * xi**2 + (1 + p / 2) * xi),
         mu * (-2 * xi**3 + 3 * xi**2 + p * xi), Ls * mu * (xi**3 - (1 - p / 2) * xi**2 - p / 2 * xi)]
    Lv, pv = 1.7, 0.8
    ref = np.array([[float(sp.integrate(sp.diff(N[i], x) * sp.diff(N[j], x), (x, 0, Ls)).subs({Ls: Lv, p: pv}))
                     for j in range(4)] for i in range(4)])
    got = geometric_4x4(np.array([Lv]), +1, np.array([pv]))[0]
    assert np.allclose(got, ref, rtol=1e-12, atol=1e-14)
    # phi = 0 is the Euler-Bernoulli matrix
    assert np.allclose(geometric_4x4(np.array([Lv]), -1, np.array([0.0])), geometric_4x4(np.array([Lv]), -1))
