r"""Frames against closed-form characteristic equations solved with scipy.optimize.brentq.

Reference: Timoshenko & Gere 1961, sec. 2.8; Chen & Lui 1987, Structural Stability; Yura 1971 (named beside each check).

Portal frame, sway (antisymmetric) mode
---------------------------------------
Columns of height ``h`` and ``EI_c`` carry equal compression ``P`` (``k^2 = P / EI_c``);
the beam of span ``b`` and ``EI_b`` carries none.  In the sway mode both column tops
translate by ``Delta`` and rotate by the same ``theta``; the beam bends in double
curvature, so (slope-deflection) each end resists with ``M = 6 EI_b theta / b``: a
rotational spring ``C = 6 EI_b / b`` on each column top.  By symmetry each column's
shear is zero.  With ``y(x)`` the column deflection from its base:

* pinned base: ``EI_c y'' = -P y``, ``y = a sin kx``; at the top
  ``EI_c y''(h) = -C y'(h)`` gives ``P sin kh = C k cos kh``, i.e.

  .. math::  kh \tan kh = 6 \frac{I_b h}{I_c b}   \qquad (0 < kh < \pi/2)

* fixed base: ``y = a (1 - \cos kx)``; the same top condition gives
  ``EI_c k \cos kh = -C \sin kh``, i.e.

  .. math::  kh \cot kh = -6 \frac{I_b h}{I_c b}  \qquad (\pi/2 < kh < \pi)

(Timoshenko & Gere 1961, Theory of Elastic Stability, 2nd ed., sec. 2.8, buckling of
frames; Chen & Lui 1987, Structural Stability, ch. 4 (sway frames, the sidesway-uninhibited
alignment-chart equation with G = (I_c/h)/(I_b/b) at the top, G = 0 or infinity at the
base), both from memory; the equations are derived above.)  Limits check them: a rigid
beam gives K = 2 (pinned base) and K = 1 (fixed base); no beam gives a mechanism and
K = 2 respectively.  The closed form takes the members as inextensible; the model's
finite axial stiffness lowers the load by about 0.03 % here.

Column with a leaning column
----------------------------
A fixed-base cantilever (``EI``, height ``h``, compression ``P_1``) is tied at its top
by a pin-ended link to a pin-ended ("leaning", gravity-only) column of the same height
with compression ``P_2``.  The leaning column, displaced by ``Delta``, pushes the tie
with ``H = P_2 Delta / h`` (the string stiffness of a bar).  The cantilever under ``P_1``
and a tip load ``H`` deflects ``Delta = H (tan kh - kh) / (P_1 k)`` (beam-column,
Timoshenko & Gere 1961, sec. 1.3-1.4, from memory; derived: ``y = a cos kx + c sin kx +
Delta + H (h - x)/P_1`` with ``y(0) = y'(0) = 0``, ``y(h) = Delta``).  Eliminating
``Delta`` gives

.. math::  \tan kh = kh \, (1 + P_1 / P_2),

the lean-on column case (Yura 1971, The effective length of columns in unbraced
frames, AISC Engineering Journal 8(2); Chen & Lui 1987, Structural Stability, ch. 4;
both from memory).
"""

import math
import re

import numpy as np
import pytest
from scipy.optimize import brentq

import framebuckle as fb

from refmodels import E, FREE, I, line_mesh, rel

H, B = 4.0, 6.0
IC, IB = 8e-6, 1.6e-5
P = 1.0e5
#: in-plane supports of a frame in the XZ plane: [ux, uy, uz, rx, ry, rz]
FIXED_XZ = (1, 0, 1, 0, 1, 0)
PINNED_XZ = (1, 0, 1, 0, 0, 0)


def portal_mesh(base):
    return line_mesh([[0, 0, 0], [0, 0, H], [B, 0, H], [B, 0, 0]], [[0, 1], [1, 2], [2, 3]],
                     axial=[-P, 0.0, -P], restraint=[base, FREE, FREE, base],
                     Iy=[IC, IB, IC], Iz=[IC, IB, IC])


def portal_reference(base) -> float:
    """Critical column load of the sway mode from the characteristic equation (brentq)."""
    c = 6 * IB * H / (IC * B)
    if base == PINNED_XZ:
        kh = brentq(lambda u: u * math.tan(u) - c, 1e-9, math.pi / 2 - 1e-9)   # kh tan kh = 6 Ib h/(Ic b)
    else:
        kh = brentq(lambda u: u / math.tan(u) + c, math.pi / 2 + 1e-9, math.pi - 1e-9)  # kh cot kh = -6 Ib h/(Ic b)
    return kh ** 2 * E * IC / H ** 2


def portal_error(base, m=None) -> float:
    res = fb.solve(portal_mesh(base), subdivide=m)
    # Timoshenko & Gere 1961, sec. 2.8 (characteristic equation derived in the module docstring)
    return rel(res.cases[0].load_factors[0] * P, portal_reference(base))


@pytest.mark.parametrize("base", [FIXED_XZ, PINNED_XZ], ids=["fixed", "pinned"])
def test_portal_sway_converged(base):
    # Timoshenko & Gere 1961, sec. 2.8; Chen & Lui 1987, ch. 4
    assert abs(portal_error(base, m=16)) < 1e-3


@pytest.mark.parametrize("base", [FIXED_XZ, PINNED_XZ], ids=["fixed", "pinned"])
def test_portal_sway_default_subdivision(base):
    # Timoshenko & Gere 1961, sec. 2.8; Chen & Lui 1987, ch. 4
    assert abs(portal_error(base)) < 5e-3


def test_portal_sway_limits_of_the_reference():
    """The characteristic equations' limits are the textbook effective lengths.

    Rigid beam: pinned base K = 2, fixed base K = 1; fixed base without beam: K = 2
    (Timoshenko & Gere 1961, sec. 2.1-2.3).
    """
    kh = brentq(lambda u: u * math.tan(u) - 1e9, 1e-9, math.pi / 2 - 1e-12)
    assert kh == pytest.approx(math.pi / 2, rel=1e-6)
    kh = brentq(lambda u: u / math.tan(u) + 1e9, math.pi / 2 + 1e-9, math.pi - 1e-12)
    assert kh == pytest.approx(math.pi, rel=1e-6)
    kh = brentq(lambda u: u / math.tan(u) + 1e-12, math.pi / 2 - 1e-3, math.pi - 1e-9)
    assert kh == pytest.approx(math.pi / 2, rel=1e-6)


# ------------------------------------------------------------------ planar detection


def test_planar_portal_detected_and_solved_in_plane():
    # the portal lies in the XZ plane and its restraint fixes no out-of-plane DOF
    res = fb.solve(portal_mesh(FIXED_XZ))
    assert res.summary()["model"]["planar"] == "XZ"
    assert any("planar" in n for n in res.summary()["notes"])
    # its alpha_cr is the in-plane sway load (Timoshenko & Gere 1961, sec. 2.8)
    assert abs(rel(res.cases[0].load_factors[0] * P, portal_reference(FIXED_XZ))) < 5e-3


def test_planar_switched_off_refuses_the_mechanism_naming_free_dofs():
    with pytest.raises(fb.ModelError) as exc:
        fb.solve(portal_mesh(FIXED_XZ), planar=False)
    msg = str(exc.value)
    assert "Free DOFs" in msg
    listed = msg.split("Free DOFs")[1].split("Probable cause")[0]
    named = {d.strip() for group in re.findall(r"\(([a-z, ]+)\)", listed) for d in group.split(",")}
    # the mechanisms are out of the plane (XZ): only uy, rx, rz may be named, and some are
    assert named and named <= {"uy", "rx", "rz"}, msg


def test_planar_auto_off_when_out_of_plane_dofs_are_restrained():
    base = (1, 1, 1, 1, 1, 1)
    mesh = line_mesh([[0, 0, 0], [0, 0, H], [B, 0, H], [B, 0, 0]], [[0, 1], [1, 2], [2, 3]],
                     axial=[-P, 0.0, -P], restraint=[base, FREE, FREE, base],
                     Iy=[IC, IB, IC], Iz=[IC, IB, IC])
    res = fb.solve(mesh)
    assert res.summary()["model"]["planar"] is None
    # a 3D frame: the out-of-plane modes are found too, so alpha_cr can only be lower
    assert res.cases[0].load_factors[0] * P <= portal_reference(FIXED_XZ) * (1 + 5e-3)


# ------------------------------------------------------------------ leaning column


def leaning_reference(N1: float, N2: float) -> float:
    """Load factor from tan(kh) = kh (1 + P1/P2) (derived in the module docstring)."""
    u = brentq(lambda x: math.tan(x) - x * (1 + N1 / N2), 1e-6, math.pi / 2 - 1e-9)
    return u ** 2 * E * I / (H ** 2 * N1)


def leaning_error(N1: float, N2: float, m=None) -> float:
    # cantilever 0-1, tie 1-2 (bar, no force), leaning column 3-2 (bar)
    mesh = line_mesh([[0, 0, 0], [0, 0, H], [B, 0, H], [B, 0, 0]], [[0, 1], [1, 2], [3, 2]],
                     axial=[-N1, 0.0, -N2], bar=[0, 1, 1],
                     restraint=[FIXED_XZ, FREE, FREE, PINNED_XZ])
    res = fb.solve(mesh, subdivide=m)
    return rel(res.cases[0].load_factors[0], leaning_reference(N1, N2))


@pytest.mark.parametrize("ratio", [1.0, 3.0])
def test_column_with_leaning_column(ratio):
    # Yura 1971 / Chen & Lui 1987 (lean-on column); closed form derived in the module docstring
    assert abs(leaning_error(P, ratio * P)) < 1e-3


def test_leaning_reference_limits():
    # no leaning load: the cantilever alone, K = 2 (Timoshenko & Gere 1961, sec. 2.2)
    assert leaning_reference(P, 1e-6 * P) * P == pytest.approx(math.pi ** 2 * E * I / (2 * H) ** 2, rel=1e-5)
    # vanishing cantilever load: the sway stiffness 3EI/h^3 carries P2/h (common practice)
    assert leaning_reference(1e-9 * P, P) * P == pytest.approx(3 * E * I / H ** 2, rel=1e-6)
