"""Smoke test of the pipeline on a one-cell pinned column.

Reference: Euler load P = pi^2 E I / L^2 (Timoshenko & Gere 1961, Theory of
Elastic Stability, 2nd ed., sec. 2.1).
"""

import math

import meshio
import numpy as np

import framebuckle as fb


def test_pinned_column_one_cell():
    L, E, I, A, G, J = 5.0, 2.1e11, 8e-6, 5e-3, 8.1e10, 2e-7
    r = np.zeros((2, 6))
    r[0, :3] = 1
    r[0, 5] = 1
    r[1, :2] = 1
    one = lambda v: [np.array([v])]
    mesh = meshio.Mesh(np.array([[0, 0, 0], [0, 0, L]], float), [("line", np.array([[0, 1]]))],
                       point_data={"restraint": r},
                       cell_data={"axial_force": one(-1000.0), "E": one(E), "G": one(G), "A": one(A),
                                  "Iy": one(I), "Iz": one(I), "J": one(J)})
    res = fb.solve(mesh)
    pe = math.pi ** 2 * E * I / L ** 2          # Timoshenko & Gere 1961, sec. 2.1
    lam = res.cases[0].load_factors
    assert abs(lam[0] * 1000 / pe - 1) < 1e-3
