"""Single columns, each given as ONE line cell, against the classical closed forms.

Reference: Timoshenko & Gere 1961, Theory of Elastic Stability, ch. 2 and 5 (named beside each check).

References
----------
* Timoshenko & Gere 1961, Theory of Elastic Stability, 2nd ed., McGraw-Hill:
  sec. 2.1-2.3 (Euler load P = pi^2 EI / (K L)^2 with K = 1 pinned-pinned,
  2 fixed-free, 0.5 fixed-fixed, 0.6992 fixed-pinned from tan(kL) = kL) and
  sec. 5.3 (torsional buckling of a doubly symmetric column whose ends are held
  against twist and free to warp: P = (G J + pi^2 E Iw / L^2) A / Ip, so
  P = G J A / Ip without warping stiffness).
  Section numbers are from memory; the formulas are the classical ones.
"""

import math

import numpy as np
import pytest
from scipy.optimize import brentq

import framebuckle as fb
from framebuckle.pipeline.api import DEFAULT_SUBDIVIDE

from refmodels import E, G, A, I, column, column_restraint, euler_load, line_mesh, rel

L = 4.0
N = -1000.0


def fixed_pinned_factor() -> float:
    """K = pi / (kL) with kL the first positive root of tan(kL) = kL (Timoshenko & Gere 1961, sec. 2.3)."""
    kl = brentq(lambda x: math.tan(x) - x, math.pi + 1e-6, 1.5 * math.pi - 1e-6)
    return math.pi / kl


EFFECTIVE_LENGTH = {"pinned-pinned": 1.0, "fixed-free": 2.0, "fixed-fixed": 0.5,
                    "fixed-pinned": fixed_pinned_factor()}

#: Tolerances at four sub-elements.  Four cubic sub-elements reach 0.1 % only where the
#: mode has at most half a sine wave per cell.  The fixed-fixed mode (a full cosine wave)
#: and the fixed-pinned one err by +0.75 % and +0.21 % (measured; the cubic element
#: converges as m^-4 and always from above, i.e. on the unsafe side).  They reach 0.1 %
#: at 7 and 5 sub-elements, which is why the default sub-division is 8.
FOUR_TOL = {"pinned-pinned": 1e-3, "fixed-free": 1e-3, "fixed-fixed": 8e-3, "fixed-pinned": 2.5e-3}


def euler_error(ends: str, axis: int = 2, m: int | None = None) -> float:
    """Relative error of the lowest load factor of one cell against the Euler load."""
    res = fb.solve(column(axis, ends, L=L, N=N), subdivide=m)
    lam = res.cases[0].load_factors[0]
    # Timoshenko & Gere 1961, sec. 2.1-2.3: P = pi^2 E I / (K L)^2
    return rel(lam * abs(N), euler_load(E * I, L, EFFECTIVE_LENGTH[ends]))


def test_fixed_pinned_factor_is_0_6992():
    # Timoshenko & Gere 1961, sec. 2.3: kL = 4.493, K = 0.699
    assert abs(fixed_pinned_factor() - 0.6992) < 1e-4


@pytest.mark.parametrize("axis", [0, 1, 2], ids=["X", "Y", "Z"])
@pytest.mark.parametrize("ends", list(EFFECTIVE_LENGTH))
def test_euler_column_one_cell_default_subdivision(ends, axis):
    err = euler_error(ends, axis)
    # Timoshenko & Gere 1961, sec. 2.1-2.3; the finite element is an upper bound
    assert 0 <= err < 1e-3, (ends, DEFAULT_SUBDIVIDE, err)


@pytest.mark.parametrize("ends", list(EFFECTIVE_LENGTH))
def test_euler_column_one_cell_at_four_subelements(ends):
    err = euler_error(ends, 2, m=4)
    # Timoshenko & Gere 1961, sec. 2.1-2.3; bounds measured at m = 4 (see FOUR_TOL)
    assert 0 <= err < FOUR_TOL[ends], (ends, err)


@pytest.mark.parametrize("axis", [0, 1, 2], ids=["X", "Y", "Z"])
@pytest.mark.parametrize("ends", ["pinned-pinned", "fixed-free"])
def test_both_bending_planes_and_their_directions(ends, axis):
    """Iy < Iz: the weak mode bends about local y (moves along local z), the strong about local z.

    Default orientation (input contract): local z is global Z, or global X for a
    vertical member; local y = z x x.
    """
    Iy, Iz = 4e-6, 9e-6
    res = fb.solve(column(axis, ends, L=L, N=N, Iy=Iy, Iz=Iz), modes=4)
    c = res.cases[0]
    K = EFFECTIVE_LENGTH[ends]
    weak, strong = euler_load(E * Iy, L, K), euler_load(E * Iz, L, K)   # Timoshenko & Gere 1961, sec. 2.1-2.2
    lam = c.load_factors * abs(N)
    assert 0 <= rel(lam[0], weak) < 1e-3
    strong_i = int(np.argmin(np.abs(lam / strong - 1)))
    assert 0 <= rel(lam[strong_i], strong) < 1e-3
    x = np.eye(3)[axis]
    z = np.array([0.0, 0.0, 1.0]) if axis != 2 else np.array([1.0, 0.0, 0.0])
    y = np.cross(z, x)
    for i, direction in ((0, z), (strong_i, y)):
        tr = c.modes[i][:, :3]
        p = tr[np.argmax(np.linalg.norm(tr, axis=1))]
        assert abs(abs(p @ direction) - np.linalg.norm(p)) < 1e-9, (i, p, direction)


def test_explicit_orientation_selects_the_weak_plane():
    # a column along Z with orientation +Y: local z = Y, so Iy (the weak axis) buckles along Y
    Iy, Iz = 4e-6, 9e-6
    mesh = line_mesh([[0, 0, 0], [0, 0, L]], [[0, 1]], axial=N, restraint=column_restraint(2, "pinned-pinned"),
                     Iy=Iy, Iz=Iz, orientation=[0.0, 1.0, 0.0])
    c = fb.solve(mesh).cases[0]
    assert 0 <= rel(c.load_factors[0] * abs(N), euler_load(E * Iy, L, 1.0)) < 1e-3   # Timoshenko & Gere 1961, sec. 2.1
    tr = c.modes[0][:, :3]
    p = tr[np.argmax(np.linalg.norm(tr, axis=1))]
    assert abs(p[1]) == pytest.approx(np.linalg.norm(p), rel=1e-9)


# ------------------------------------------------------------------ torsional buckling

#: a cruciform-like doubly symmetric section: large bending stiffness, tiny J, no warping
TORSION = dict(Iy=8e-6, Iz=8e-6, J=1e-8, A=A)


def torsional_error(axis: int = 2, Iw: float | None = None) -> float:
    r = column_restraint(axis, "pinned-pinned")
    r[1, 3 + axis] = 1                                 # fork supports: twist held at both ends
    p = np.zeros((2, 3))
    p[1, axis] = L
    extra = None if Iw is None else {"Iw": Iw}
    res = fb.solve(line_mesh(p, [[0, 1]], axial=N, restraint=r, extra=extra, **TORSION), modes=2)
    c = res.cases[0]
    Ip = TORSION["Iy"] + TORSION["Iz"]
    # Timoshenko & Gere 1961, sec. 5.3: P = (G J + pi^2 E Iw / L^2) A / Ip
    pt = (G * TORSION["J"] + math.pi ** 2 * E * (Iw or 0.0) / L ** 2) * A / Ip
    assert pt < euler_load(E * TORSION["Iy"], L, 1.0)  # torsion governs for this section
    assert np.abs(c.modes[0][:, :3]).max() < 1e-9      # a pure twist
    if Iw is None:
        assert any("twist" in n for n in c.notes)      # and the output says so
    return rel(c.load_factors[0] * abs(N), pt)


@pytest.mark.parametrize("axis", [0, 1, 2], ids=["X", "Y", "Z"])
def test_torsional_buckling_without_warping(axis):
    # Timoshenko & Gere 1961, sec. 5.3: P = G J A / Ip (exact for the linear twist field)
    assert abs(torsional_error(axis)) < 1e-9


def test_torsional_buckling_with_warping_constant():
    # Timoshenko & Gere 1961, sec. 5.3: P = (G J + pi^2 E Iw / L^2) A / Ip for warping-free ends
    assert abs(torsional_error(2, Iw=2e-10)) < 1e-9
