"""Plausibility rules of framebuckle.model.plausible: impossible inputs are refused, suspicious ones warned,
and inputs that only look odd (export noise, long orientation vectors, close time steps) give the
same answer as their clean form.  Models are the invented portal of faultkit.py (N and m).
"""

from __future__ import annotations

import numpy as np
import pytest

import framebuckle as fb
from faultkit import A, E, IY, IZ, J, mesh_from, portal, portal_arrays
from framebuckle.engineering.check import run_check
from framebuckle.errors import InputError, ModelError
from framebuckle.model.plausible import IW_ERROR, IW_WARN, RM_RANGE, warping_ratio
from framebuckle.io.cases import time_labels
from framebuckle.io.study import study_from_dict


def _i_section(b, h, tf, tw):
    """Doubly symmetric I section from its plates: A, Iy (strong), Iz (weak), Iw = Iz hf^2 / 4.

    Iw of a doubly symmetric I section: Trahair, Flexural-Torsional Buckling of Structures
    (1993), App. A (Iw = Iz hf^2 / 4, hf the distance between flange centroids), from memory.
    """
    hw = h - 2 * tf
    hf = h - tf
    Af = b * tf
    A_ = 2 * Af + hw * tw
    Iy = 2 * (b * tf ** 3 / 12 + Af * (hf / 2) ** 2) + tw * hw ** 3 / 12
    Iz = 2 * tf * b ** 3 / 12 + hw * tw ** 3 / 12
    return A_, Iy, Iz, Iz * hf ** 2 / 4


@pytest.mark.parametrize("dims", [(0.150, 0.300, 0.0107, 0.0071),      # IPE 300 plates
                                  (0.300, 0.300, 0.019, 0.011),        # HEB 300 plates
                                  (0.100, 0.600, 0.008, 0.006)])       # a deep welded girder
def test_warping_rule_accepts_real_i_sections(dims):
    # the warping-depth rule is built on Iw = Iz hf^2/4 and Imax <= A hf^2/4: real sections give 1..3
    A_, Iy, Iz, Iw = _i_section(*dims)
    rho = warping_ratio({"Iy": np.array([Iy]), "Iz": np.array([Iz]), "A": np.array([A_]),
                         "Iw": np.array([Iw])}, np.array([True]))[0]
    assert 1.0 <= rho <= 3.0 < IW_WARN


def test_warping_constant_of_the_portal_is_quiet_and_a_hundredfold_one_warns():
    # IPE 300: Iw = 126e3 cm^6 = 1.26e-7 m^6 (section tables, from memory)
    res = fb.solve(portal(Iw=np.full(8, 1.26e-7)), modes=1, subdivide=2)
    assert not any("warping-depth" in w for w in res.warnings)
    res = fb.solve(portal(Iw=np.full(8, 1.26e-7 * 100)), modes=1, subdivide=2)
    assert any("warping-depth" in w and "cell 0" in w for w in res.warnings)


def test_warping_constant_in_cm6_is_refused():
    with pytest.raises(InputError, match="warping-depth"):
        fb.solve(portal(Iw=np.full(8, 1.26e-7 * 1e12)), modes=1)
    assert 1.26e-7 * 1e12 * A / (IZ * IY) > IW_ERROR


def test_torsion_constant_of_a_circle_equals_its_polar_moment():
    # solid circle: J = Ip = pi d^4 / 32 (Timoshenko & Goodier, Theory of Elasticity, 1970, sec. 104):
    # the bound of rule torsion-polar is reached without a warning; above it a warning, far above an error
    d = 0.1
    I_ = np.pi * d ** 4 / 64
    sec = {"Iy": I_, "Iz": I_, "A": np.pi * d ** 2 / 4}
    res = fb.solve(portal(J=2 * I_, **sec), modes=1, subdivide=2)
    assert not any("torsion-polar" in w for w in res.warnings)
    res = fb.solve(portal(J=2.5 * I_, **sec), modes=1, subdivide=2)
    assert any("torsion-polar" in w for w in res.warnings)
    with pytest.raises(InputError, match="torsion-polar"):
        fb.solve(portal(J=2 * I_ * 1e8, **sec), modes=1)


def test_time_labels_have_enough_digits():
    assert time_labels([0.0, 0.5, 1.0]) == ["t=0", "t=0.5", "t=1"]          # unchanged where :g suffices
    labels = time_labels([1.0000001, 1.0000002, 1.0000003])
    assert len(set(labels)) == 3 and labels[0] == "t=1.0000001"


def test_column_out_of_plumb_by_export_noise_keeps_its_section():
    # a result must not depend on micrometre export noise (project rule): same alpha_cr as plumb
    ref = fb.solve(portal(), modes=2, subdivide=4).cases[0].load_factors
    p, c, ax, r = portal_arrays()
    p[4, 1] += 5e-6
    noisy = fb.solve(mesh_from(p, c, ax, r), modes=2, subdivide=4)
    assert np.allclose(noisy.cases[0].load_factors, ref, rtol=1e-5)
    assert not noisy.warnings


def test_orientation_is_judged_after_normalising():
    ori = np.tile([0.0, 0.0, 1.0], (8, 1))
    ori[:4] = [1, 0, 0]
    ref = fb.solve(portal(orientation=ori), modes=2, subdivide=4).cases[0].load_factors
    huge = fb.solve(portal(orientation=ori * 1e300), modes=2, subdivide=4).cases[0].load_factors
    tiny = fb.solve(portal(orientation=ori * 1e-200), modes=2, subdivide=4).cases[0].load_factors
    assert np.allclose(huge, ref, rtol=1e-12) and np.allclose(tiny, ref, rtol=1e-12)


def test_orientation_near_the_axis_warns():
    p, c, ax, r = portal_arrays()
    p[4, 0] += 0.04                   # column 0 leans 1 in 100: default orientation Z is 0.6 deg off
    res = fb.solve(mesh_from(p, c, ax, r), modes=1, subdivide=2)
    assert any("orientation-near-axis" in w and "cell(s) 0 " in w for w in res.warnings)


def test_cell_outlier_is_named_and_explains_a_mechanism():
    e = np.full(8, E)
    e[5] = E / 1e6                    # one beam in N/mm^2
    res = fb.solve(portal(E=e), modes=1, subdivide=2)
    assert any("cell outlier: E of cell(s) 5 " in w for w in res.warnings)
    # a column with a unit slip in Iz: the warning becomes a "possible reason" of a later error
    pts = np.array([[0, 0, 0], [0, 0, 4], [0, 0, 8], [0, 0, 12]], float)
    r = np.zeros((4, 6))
    r[0, :3] = 1                      # pinned base, free top: a mechanism
    iz = np.full(3, IZ)
    iz[1] = IZ * 1e-8
    with pytest.raises(ModelError, match="possible reason: cell outlier: Iz of cell"):
        fb.solve(mesh_from(pts, np.array([[0, 1], [1, 2], [2, 3]]), np.full(3, -1e4), r, Iz=iz), modes=1)


def test_overlapping_cells_warn():
    p, c, ax, r = portal_arrays()
    p = np.vstack([p, [[0, 0, 2.0]]])
    r = np.vstack([r, np.zeros(6)])
    res = fb.solve(mesh_from(p, np.vstack([c, [[0, 8]]]), np.r_[ax, -1e5], r), modes=1, subdivide=2)
    assert any("overlapping cells: cells 0 and 8" in w for w in res.warnings)


def test_unused_points_do_not_set_the_zero_length_tolerance():
    # a far-away unused point (1e9) used to make a 0.1 m cell "zero length"
    p, c, ax, r = portal_arrays()
    p = np.vstack([p, [[1e9, 0, 0]], [[0, 0, 4.1]]])
    r = np.vstack([r, np.zeros((2, 6))])
    res = fb.solve(mesh_from(p, np.vstack([c, [[4, 9]]]), np.r_[ax, -1.0], r), modes=1, subdivide=2)
    assert res.cases[0].status == "ok"


def test_rigid_model_with_compression_is_an_error():
    p, c, ax, r = portal_arrays()
    with pytest.raises(ModelError, match="nothing can move"):
        fb.solve(mesh_from(p, c, ax, np.ones((8, 6)), bar=np.ones(8)), modes=1)


@pytest.fixture(scope="module")
def portal_result():
    return fb.solve(portal(), modes=2, subdivide=4)


@pytest.mark.parametrize("text, match", [
    ("R_M = 0.0", "storey-RM"),
    ("R_M = -0.5", "storey-RM"),
    ("P_mf = 2e7", "storey-Pmf"),
    ("case = 'defualt'", "storey-case"),
    ("height = 4000.0", "storey-height"),
    ("drift = 2.0", "storey-drift"),
])
def test_storey_inputs_out_of_range(portal_result, text, match):
    # AISC 360-16 Eq. (A-8-8): R_M = 1 - 0.15 P_mf / P_story, so 0.85 <= R_M <= 1 and P_mf <= P_story
    st = {"P_story": 8e5, "H": 1e4, "height": 4.0, "drift": 0.01}
    key, value = (s.strip() for s in text.split("="))
    st[key] = eval(value)
    with pytest.raises(InputError, match=match):
        run_check(portal_result, study_from_dict({"storeys": [st]}))
    assert RM_RANGE == (1 - 0.15, 1.0)


def test_storey_in_range_gives_the_formula(portal_result):
    # AISC 360-16 Eq. (A-8-6), (A-8-7), (A-8-8) evaluated here independently
    st = {"P_story": 8e5, "P_mf": 4e5, "H": 1e4, "height": 4.0, "drift": 0.01}
    rep = run_check(portal_result, study_from_dict({"storeys": [st], "checks": {"codes": ["AISC360"]}}))
    v = [x for x in rep.summary["cases"][0]["verdicts"] if x["check"] == "storey_amplifier_B2"][0]
    RM = 1 - 0.15 * 4e5 / 8e5
    assert v["B2"] == pytest.approx(1 / (1 - 8e5 / (RM * 1e4 * 4.0 / 0.01)), rel=1e-12)


@pytest.mark.parametrize("imp, match", [
    ({"W": 6.28e-4, "fy": 355.0}, "yield-modulus"),             # fy in MPa beside E in Pa
    ({"amplitude": 20.0}, "imperfection-size"),                 # mm beside m
    ({"e0": 16.0}, "imperfection-size"),
    ({"W": 6.28e5, "fy": 3.55e8}, "section-modulus"),           # W in mm^3
])
def test_imperfection_inputs_out_of_range(portal_result, imp, match):
    with pytest.raises(InputError, match=match):
        run_check(portal_result, study_from_dict({"imperfection": imp}))


def test_checks_fy_default_beside_timber_members_is_judged_against_the_median_E():
    # a steel frame with timber members (the workshop sample's glulam purlins): S355's fy = 355 MPa
    # against glulam's E = 11.5 GPa is fy / E = 0.031, above the rule's 0.02, yet no unit slip; the
    # default is judged against the median E of the cells it fills (steel: E = 210 GPa, fy / E =
    # 1.7e-3; values from memory, EN 1993-1-1 Table 3.1 and EN 14080 GL24h)
    e = np.full(len(portal_arrays()[1]), E)
    e[-1] = E * 1.15e10 / 2.1e11                        # one timber cell of eight
    res = fb.solve(portal(E=e), modes=1, subdivide=2)
    rep = run_check(res, study_from_dict({"checks": {"fy": 3.55e8}}))
    assert rep.summary["cases"]
    with pytest.raises(InputError, match="yield-modulus"):      # fy in MPa beside E in Pa
        run_check(res, study_from_dict({"checks": {"fy": 355.0}}))


def test_imperfection_in_range_is_accepted(portal_result):
    # IPE 300: W_el,y = 557 cm^3 (section tables, from memory); S355
    rep = run_check(portal_result, study_from_dict({"imperfection": {"W": 5.57e-4, "fy": 3.55e8}}))
    assert rep.imperfection["e0"] > 0


def test_unused_points_do_not_change_the_planar_detection():
    # a plane frame in XZ (supports fix no out-of-plane DOF) is analysed in its plane; a point no
    # member uses, off the plane, must not turn it into a 3D mechanism
    pts = np.array([[0, 0, 0], [6, 0, 0], [0, 0, 4], [6, 0, 4]], float)
    cells = np.array([[0, 2], [1, 3], [2, 3]])
    r = np.zeros((4, 6))
    r[:2, [0, 2, 4]] = 1                                  # fixed in the plane
    ax = np.array([-2e5, -2e5, -5e3])
    ref = fb.solve(mesh_from(pts, cells, ax, r), modes=2, subdivide=4)
    assert ref.constraints.planar_axis == 1
    more = fb.solve(mesh_from(np.vstack([pts, [[3, 5, 2]]]), cells, ax, np.vstack([r, np.zeros(6)])),
                    modes=2, subdivide=4)
    assert more.constraints.planar_axis == 1
    assert np.allclose(more.cases[0].load_factors, ref.cases[0].load_factors, rtol=1e-10)


def test_a_cell_with_outlying_bending_constants_is_named_not_its_torsion_constant():
    # one cell's Iy, Iz 1e-8 times the others' (another unit) makes its J exceed Iy + Iz 1e5 times:
    # the bending constants are the slip, so that is a warning naming them, not a J error
    iy, iz = np.full(8, IY), np.full(8, IZ)
    iy[6] *= 1e-8
    iz[6] *= 1e-8
    res = fb.solve(portal(Iy=iy, Iz=iz), modes=1, subdivide=2)
    assert any("cell outlier: Iy of cell(s) 6 " in w for w in res.warnings)
    assert any("torsion-polar" in w and "cell(s) 6" in w for w in res.warnings)


# ------------------------------------------------------------------ coincident points


def test_close_pairs_equal_scipy_kdtree_pairs():
    """framebuckle.model.sanity.close_pairs against scipy.spatial.cKDTree.query_pairs (the
    reference library), on random clouds with pairs planted just inside and just outside r."""
    from scipy.spatial import cKDTree

    from framebuckle.model.sanity import close_pairs
    rng = np.random.default_rng(11)
    for trial in range(20):
        P = rng.uniform(-50, 50, (300, 3))
        r = 1e-6 * 100
        base = rng.integers(0, 300, 40)
        d = rng.standard_normal((40, 3))
        d *= (r * rng.choice([0.0, 0.3, 0.999, 1.001, 1.7], 40) / np.linalg.norm(d, axis=1))[:, None]
        P = np.concatenate([P, P[base] + d, P[base[:5]]])          # incl. exact duplicates
        ref = np.asarray(sorted(map(tuple, cKDTree(P).query_pairs(r, output_type="ndarray").tolist())))
        got = close_pairs(P, r)
        assert got.tolist() == (ref.tolist() if len(ref) else []), trial
    assert close_pairs(np.zeros((1, 3)), 1.0).shape == (0, 2)
