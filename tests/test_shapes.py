"""Mode curves: cubic Hermite interpolation inside elements, and reading result files."""

import math

import numpy as np
import pytest

import framebuckle as fb
from framebuckle.pictures import shapes
from framebuckle.mechanics.elements import local_axes
from framebuckle.io.write import write_result

import picture_models as pm


def _cubic(c, x):
    return c[0] + c[1] * x + c[2] * x ** 2 + c[3] * x ** 3


def _dcubic(c, x):
    return c[1] + 2 * c[2] * x + 3 * c[3] * x ** 2


@pytest.mark.parametrize("a, b, orient", [
    ((0.0, 0.0, 0.0), (3.0, 0.0, 0.0), (0.0, 0.0, 1.0)),
    ((1.0, -2.0, 0.5), (2.5, 1.0, 4.0), (0.3, -1.0, 0.2)),
])
def test_hermite_reproduces_a_cubic_exactly(a, b, orient):
    # Cubic Hermite interpolation from end values and end slopes reproduces any cubic
    # exactly (common practice: these are the beam element's bending shape functions).
    # The reference is the cubic itself, evaluated independently with numpy.
    nodes = np.array([a, b])
    elements = np.array([[0, 1]])
    R, L = local_axes(shapes._geometry_frame(nodes, elements, np.array([orient])))
    R, L = R[0], float(L[0])
    cv = np.array([0.01, -0.03, 0.02, 0.005])    # v(x) in local y
    cw = np.array([-0.02, 0.01, 0.015, -0.004])  # w(x) in local z
    cu = np.array([0.002, 0.001, 0.0, 0.0])      # axial: linear
    mode = np.zeros((2, 6))
    for node, x in ((0, 0.0), (1, L)):
        local_t = np.array([_cubic(cu, x), _cubic(cv, x), _cubic(cw, x)])
        # local rotations: theta_z = dv/dx, theta_y = -dw/dx; theta_x (twist) plays no part
        local_r = np.array([0.123, -_dcubic(cw, x), _dcubic(cv, x)])
        mode[node, :3] = R.T @ local_t
        mode[node, 3:] = R.T @ local_r
    pts, disp = shapes.element_curves(nodes, elements, np.array([orient]), mode, samples=9)
    x = np.linspace(0, L, 9)
    expect_local = np.stack([_cubic(cu, x), _cubic(cv, x), _cubic(cw, x)], axis=1)
    np.testing.assert_allclose(disp[0], expect_local @ R, atol=1e-13)
    np.testing.assert_allclose(pts[0], nodes[0] + np.outer(x / L, nodes[1] - nodes[0]), atol=1e-13)
    # the curve does not depend on the orientation vector (same ends, another local y-z pair)
    other = np.cross(nodes[1] - nodes[0], orient)
    _, disp2 = shapes.element_curves(nodes, elements, np.array([other]), mode, samples=9)
    np.testing.assert_allclose(disp2, disp, atol=1e-13)


def test_bars_are_drawn_straight():
    nodes = np.array([[0.0, 0, 0], [2.0, 0, 0]])
    mode = np.array([[0, 0.1, 0, 0, 0, 0.5], [0, 0.3, 0, 0, 0, -0.2]], float)
    _, disp = shapes.element_curves(nodes, np.array([[0, 1]]), None, mode, bar=np.array([True]), samples=5)
    np.testing.assert_allclose(disp[0, :, 1], np.linspace(0.1, 0.3, 5), atol=1e-15)


@pytest.mark.parametrize("subdivide", [1, 4])
def test_pinned_column_one_cell_draws_a_symmetric_half_wave(subdivide):
    # The buckled shape of a pinned-pinned column is a half sine wave, largest at midspan
    # and zero at the ends (Timoshenko & Gere 1961, Theory of Elastic Stability, sec. 2.1).
    L = 5.0
    res = fb.solve(pm.pinned_column(L, cells=1), subdivide=subdivide)
    ms = shapes.from_result(res)
    pts, disp = ms.curves(ms.cases[0].modes[0], samples=11)
    z = pts[..., 2].ravel()
    mag = np.linalg.norm(disp, axis=-1).ravel()
    order = np.argsort(z, kind="stable")
    z, mag = z[order], mag[order]
    z, idx = np.unique(np.round(z, 12), return_index=True)
    mag = mag[idx]
    assert mag[0] < 1e-12 and mag[-1] < 1e-12                      # ends do not move
    assert abs(z[np.argmax(mag)] - L / 2) < 1e-9                   # largest at midspan
    np.testing.assert_allclose(mag, mag[::-1], atol=1e-9 * mag.max())   # symmetric
    assert np.all(np.diff(mag[: len(mag) // 2 + 1]) > 0)           # one half-wave: rises to midspan
    if subdivide == 4:
        # with four cubic sub-elements the drawn curve is the half sine within 1 % of its amplitude
        np.testing.assert_allclose(mag / mag.max(), np.sin(math.pi * z / L), atol=0.01)


def test_result_file_gives_the_same_modes(tmp_path):
    res = fb.solve(pm.portal_3d(), modes=2)
    paths = write_result(res, tmp_path)
    a = shapes.from_result(res)
    b = shapes.load(paths["modes_fine"])
    assert [c.name for c in b.cases] == ["gravity", "wind"]
    np.testing.assert_array_equal(b.elements, a.elements)
    np.testing.assert_array_equal(b.bar, a.bar)
    for ca, cb in zip(a.cases, b.cases):
        np.testing.assert_allclose(cb.load_factors, ca.load_factors, rtol=1e-15)
        np.testing.assert_allclose(cb.modes, ca.modes, atol=1e-12)
    # curves do not need the orientation vectors, which the result file does not hold
    np.testing.assert_allclose(b.curves(b.cases[1].modes[0])[1], a.curves(a.cases[1].modes[0])[1], atol=1e-12)


def test_a_plain_mesh_is_not_a_result(tmp_path):
    import meshio
    p = tmp_path / "in.vtu"
    meshio.write(p, pm.pinned_column())
    with pytest.raises(fb.InputError, match="not a framebuckle result"):
        shapes.load(p)


def test_missing_mode_is_named():
    ms = shapes.from_result(fb.solve(pm.portal_3d(), modes=2))
    with pytest.raises(fb.InputError, match="mode 3 does not exist"):
        ms.mode("gravity", 3)
    with pytest.raises(fb.InputError, match="no load case 'nope'"):
        ms.mode("nope", 1)


def test_input_level_result_file_draws_one_curve_per_cell(tmp_path):
    # <stem>.modes.vtu holds the modes at the input points only: each cell is one Hermite curve
    res = fb.solve(pm.portal_3d(), modes=1)
    ms = shapes.load(write_result(res, tmp_path)["modes"])
    assert len(ms.elements) == 9
    np.testing.assert_allclose(ms.case("wind").modes[0], res.input_mode("wind", 0), atol=1e-12)
    pts, disp = ms.curves(ms.case("wind").modes[0], samples=5)
    np.testing.assert_allclose(disp[:, 0], res.input_mode("wind", 0)[ms.elements[:, 0], :3], atol=1e-12)
