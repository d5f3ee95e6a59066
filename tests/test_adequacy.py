"""Mesh adequacy: twice the sub-division and Richardson extrapolation (framebuckle.solver.adequacy).

Reference: Timoshenko & Gere 1961 (Euler load); Strang & Fix 1973, An Analysis of the Finite Element Method (convergence order).
"""

import math

import numpy as np
import pytest

import framebuckle as fb
from framebuckle.solver.adequacy import ORDER_FLEXURE, richardson
from mech_models import E, column_mesh

L, I, P = 4.0, 6e-6, -1000.0
PE = math.pi ** 2 * E * I / L ** 2          # Timoshenko & Gere 1961, Theory of Elastic Stability, sec. 2.1


def test_richardson_closer_than_either_solve_one_cell_column():
    res = fb.solve(column_mesh(L=L, ncell=1, Iy=I, Iz=I, P=P), subdivide=2)
    mc = res.cases[0].mesh_check
    exact = PE / abs(P)
    e1, e2, eR = (abs(mc[k] / exact - 1) for k in ("alpha_cr", "alpha_cr_2", "richardson"))
    assert mc["subdivide"] == 2 and mc["subdivide_2"] == 4 and mc["order"] == 4
    assert eR < e2 < e1
    assert eR < 1e-4                               # 2 and 4 elements: 0.75 % and 0.05 % apart from exact


def test_observed_order_is_four_for_flexural_buckling():
    # third solve: p = log2((a_m - a_2m) / (a_2m - a_4m)); theory h^4 (Strang & Fix 1973, An Analysis
    # of the Finite Element Method, sec. 6.3: eigenvalue error h^(2(k+1-m)), k = 3, m = 2)
    a = [fb.solve(column_mesh(L=L, ncell=1, P=P), subdivide=m, mesh_check=False).cases[0].alpha_cr
         for m in (4, 8, 16)]
    p = math.log2((a[0] - a[1]) / (a[1] - a[2]))
    assert p == pytest.approx(ORDER_FLEXURE, abs=0.05)      # measured 3.96 (4, 8, 16); 3.87 (2, 4, 8)
    assert (np.diff(a) < 0).all()                  # Rayleigh-Ritz: upper bounds, decreasing


def test_warning_when_solves_differ_by_more_than_one_percent():
    # one element per cell over-estimates by 21.6 % (12 / pi^2, from the one-term Rayleigh-Ritz
    # quotient of the cubic: Timoshenko & Gere 1961, sec. 2.9), two by 0.75 %
    res = fb.solve(column_mesh(L=L, ncell=1, P=P), subdivide=1)
    c = res.cases[0]
    assert c.alpha_cr * abs(P) == pytest.approx(12 * E * I / L ** 2, rel=1e-9)
    assert not c.mesh_check["adequate"] and any("mesh check" in n for n in c.notes)
    assert res.summary()["cases"][0]["mesh_check"]["difference"] > 0.01
    assert fb.solve(column_mesh(L=L, ncell=1, P=P), subdivide=4).cases[0].mesh_check["adequate"]


def test_mesh_check_switch():
    m = column_mesh(L=L, ncell=1, P=P)
    assert fb.solve(m, mesh_check=False).cases[0].mesh_check is None
    assert fb.solve(m, {"analysis": {"mesh_check": False}}).cases[0].mesh_check is None
    with pytest.raises(fb.InputError, match="mesh_check"):
        fb.solve(m, {"analysis": {"mesh_check": "sometimes"}})
    assert richardson(1.0, 0.5, 1) == pytest.approx(0.0)


def test_unused_recovered_moments_keep_the_flexural_order():
    """Moments recovered from rotations but not used (moment_terms = "auto") must not lower the
    Richardson order: the Euler-Bernoulli element converges as h^4 (common practice, see
    framebuckle.solver.adequacy)."""
    from pathlib import Path
    sample = Path(__file__).resolve().parents[1] / "sample_meshes" / "workshop_portal.vtu"
    res = fb.solve(sample, modes=1)
    for c in res.cases:
        assert c.mesh_check["order"] == 4
        assert c.mesh_check["adequate"]
