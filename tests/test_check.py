"""Engineering check: effective lengths, participation, sensitivity, verdicts, imperfection."""

import math

import numpy as np
import pytest
from scipy.optimize import brentq

import framebuckle as fb
from framebuckle.engineering.check import run_check
from framebuckle.engineering.codecheck import aisc_b2, en1993_amplifier, en1993_first_order
from framebuckle.mechanics.members import group_members
from framebuckle.io.read import read_input
from framebuckle.io.study import study_from_dict

import frames as F


def rows(report, mode=1, case=None):
    return [r for r in report.rows if r["mode"] == mode and (case is None or r["case"] == case)]


def case_modes(report, i=0):
    return report.summary["cases"][i]["modes"]


# ---------------------------------------------------------------- effective lengths


@pytest.mark.parametrize("bottom, top, ratio", [
    (F.PINNED, F.ROLLER, 1.0),      # Timoshenko & Gere 1961, Theory of Elastic Stability, sec. 2.1
    (F.FIXED, F.FREE, 2.0),         # Timoshenko & Gere 1961, sec. 2.1 (cantilever, "fundamental case")
    (F.FIXED, F.GUIDED, 0.5),       # Timoshenko & Gere 1961, sec. 2.2 (both ends built in)
    (F.FIXED, F.ROLLER, 0.6992),    # Timoshenko & Gere 1961, sec. 2.2 (built in / hinged, kl = 4.493)
])
@pytest.mark.parametrize("ncell", [1, 5])
def test_euler_columns_effective_length(bottom, top, ratio, ncell):
    res = fb.solve(F.column(ncell, bottom, top, J=1e-3), subdivide=8, modes=1)
    rep = run_check(res)
    r = rows(rep)
    assert len(r) == 1                                   # the cells form one member
    assert r[0]["length"] == pytest.approx(4.0)
    assert r[0]["status"] == "compression"
    assert r[0]["axis"] == "y"                           # the weaker axis (Iz = 1.5 Iy)
    assert r[0]["L_cr_ratio"] == pytest.approx(ratio, abs=2e-4)
    # about the stiffer axis the same N_cr gives sqrt(1.5) times the length (definition)
    assert r[0]["L_cr_ratio_z"] == pytest.approx(ratio * math.sqrt(1.5), abs=3e-4)
    assert r[0]["N_cr"] == pytest.approx(res.cases[0].load_factors[0] * 1000.0)


def test_sway_portal_effective_length_closed_form():
    h, b, Ic, Ib = 4.0, 6.0, 8e-6, 1.2e-5
    res = fb.solve(F.portal(h, b, Ic, Ib), subdivide=8, modes=2, planar=True)
    rep = run_check(res)
    GB = (Ic / h) / (Ib / b)
    # Column fixed at the base, free to sway, restrained at the top by the beam in antisymmetric
    # bending (rotational stiffness 6 E Ib / b): y = A (cos kx - 1) gives kh cot(kh) = -6 / G_B,
    # Timoshenko & Gere 1961, sec. 2.3 (elastically restrained ends); the same as the sway
    # alignment-chart equation with G_A = 0 (AISC 360-16 Commentary App. 7, Eq. C-A-7-2, from memory).
    x = brentq(lambda x: x / math.tan(x) + 6.0 / GB, math.pi / 2 + 1e-9, math.pi - 1e-9)
    K = math.pi / x
    assert K > 1
    r = rows(rep)
    cols = [x for x in r if x["status"] == "compression"]
    assert len(cols) == 2 and len(r) == 3
    for c in cols:
        assert c["L_cr_ratio"] == pytest.approx(K, rel=1e-3)
        assert c["L_cr_ratio"] > 1
    beam = [x for x in r if x["status"] != "compression"][0]
    assert beam["status"] == "negligible" and beam["N_cr"] is None and beam["L_cr"] is None
    assert case_modes(rep)[0]["type"] == "sway"
    # chord share of the same closed-form shape y = 1 - cos(k z), k h = x (the beam does no work):
    # (y(h)^2 / h) / integral(y'^2) = (1 - cos x)^2 / (x^2 (1/2 - sin 2x / (4 x)))
    share = (1 - math.cos(x)) ** 2 / (x ** 2 * (0.5 - math.sin(2 * x) / (4 * x)))
    assert case_modes(rep)[0]["sway_share"] == pytest.approx(share, rel=1e-3)


def test_tension_member_is_marked_not_infinite():
    res = fb.solve(F.portal(P=(-1000.0, 500.0)), subdivide=4, modes=1, planar=True)
    rep = run_check(res)
    r = rows(rep)
    tens = [x for x in r if x["status"] == "tension"]
    assert len(tens) == 1
    assert tens[0]["N_cr"] is None and tens[0]["L_cr_y"] is None and tens[0]["slenderness"] is None


def test_slenderness_from_study_fy():
    st = study_from_dict({"checks": {"fy": 355e6}})
    res = fb.solve(F.column(2, J=1e-3), st, subdivide=8, modes=1)
    r = rows(run_check(res, st))[0]
    # non-dimensional slenderness sqrt(A fy / N_cr), EN 1993-1-1:2005 Eq. (6.50)
    assert r["slenderness"] == pytest.approx(math.sqrt(5e-3 * 355e6 / r["N_cr"]), rel=1e-12)


# ---------------------------------------------------------------- members


def test_members_automatic_and_explicit():
    m = F.portal(ncol=3)
    im = read_input(m)
    mem = group_members(im.frame)
    assert mem.n == 3                               # two columns of three cells each, one beam
    assert np.allclose(sorted(mem.length), [4.0, 4.0, 6.0])
    # a restraint at an intermediate point splits the column
    m.point_data["restraint"][2] = [1, 0, 0, 0, 0, 0]
    assert group_members(read_input(m).frame).n == 4
    # a change of section at a free point splits a collinear chain
    assert group_members(read_input(F.column(4, Iy=np.array([8e-6, 8e-6, 5e-6, 5e-6]))).frame).n == 2
    # explicit field wins and keeps the user's labels
    mx = F.column(4, member=[7, 7, 9, 9])
    mem = group_members(read_input(mx).frame, read_input(mx).extra["member"])
    assert mem.label.tolist() == [7, 9] and np.allclose(mem.length, [2.0, 2.0])


def test_member_field_must_be_integer():
    mx = F.column(2, member=[1.5, 2])
    with pytest.raises(fb.InputError, match="member.*whole numbers.*cell 0"):
        run_check(fb.solve(mx, subdivide=2, modes=1))


# ---------------------------------------------------------------- participation and mode type


def test_mode_types_and_energy_shares():
    # tall slender pinned column in 10 cells: the member bows between fixed joints
    col = fb.solve(F.column(10, L=20.0, J=1e-3), subdivide=4, modes=2)
    rc = run_check(col)
    assert case_modes(rc)[0]["type"] == "member"
    assert case_modes(rc)[0]["sway_share"] < 1e-9
    # unbraced portal: joints sway
    rp = run_check(fb.solve(F.portal(), subdivide=4, modes=2, planar=True))
    assert case_modes(rp)[0]["type"] == "sway"
    # a half cosine (cantilever-like) column shape does 8 / pi^2 of its work by chord rotation
    # (integral of the chord slope^2 vs the slope^2 of 1 - cos(pi x / 2h); common practice)
    assert 0.6 < case_modes(rp)[0]["sway_share"] < 0.95
    # cruciform column: torsional buckling below flexural (Timoshenko & Gere 1961, sec. 5.3:
    # P_T = G J A / Ip for a section with negligible warping)
    m, s = F.cruciform()
    res = fb.solve(m, subdivide=4, modes=2)
    rt = run_check(res)
    PT = F.G * s["J"] * s["A"] / s["Ip"]
    PE = math.pi ** 2 * F.E * s["I"] / 1.0 ** 2      # Timoshenko & Gere 1961, sec. 2.1
    assert PT < PE
    assert res.cases[0].load_factors[0] * 1000 == pytest.approx(PT, rel=1e-6)
    assert case_modes(rt)[0]["type"] == "torsional"
    assert case_modes(rt)[0]["twist_share"] > 0.99
    for rep in (rc, rp, rt):
        for mode in (1, 2):
            shares = [x["energy_share"] for x in rows(rep, mode)]
            assert sum(shares) == pytest.approx(1.0, abs=1e-12)
            assert min(shares) >= 0


def test_members_carrying_energy():
    # column braced laterally at mid-height, slender lower half: the lower member buckles
    m = F.column(4, L=8.0, J=1e-3, Iy=np.array([2e-6, 2e-6, 8e-6, 8e-6]))
    m.point_data["restraint"][2] = [1, 1, 0, 0, 0, 0]
    rep = run_check(fb.solve(m, subdivide=4, modes=1))
    mode = case_modes(rep)[0]
    assert mode["type"] == "member"
    assert mode["members_carrying"][0] == 0          # automatic labels: lower half first
    shares = {r["member"]: r["energy_share"] for r in rows(rep)}
    assert len(shares) == 2 and shares[0] > shares[1]
    assert sum(shares[k] for k in mode["members_carrying"]) >= 0.9


# ---------------------------------------------------------------- sensitivity


def _alpha_scaled(mesh_fn, cells, factor=1.01, **kw):
    m = mesh_fn(**kw)
    for name in ("Iy", "Iz"):
        a = m.cell_data[name][0].copy()
        a[cells] *= factor
        m.cell_data[name][0] = a
    return fb.solve(m, subdivide=6, modes=1, planar=True).cases[0].load_factors[0]


@pytest.mark.parametrize("kw", [dict(Ic=8e-6, Ic2=5e-6, P=(-1000.0, -1500.0)), dict(Ib=3e-6)])
def test_sensitivity_against_finite_differences(kw):
    res = fb.solve(F.portal(**kw), subdivide=6, modes=1, planar=True)
    rep = run_check(res)
    a0 = res.cases[0].load_factors[0]
    sens = {r["member"]: r["sensitivity"] for r in rows(rep)}
    members = {0: [0], 1: [1], 2: [2]}               # left column, beam, right column (one cell each)
    for m, cells in members.items():
        fd = (_alpha_scaled(F.portal, cells, **kw) - a0) / 0.01
        # first-order eigenvalue derivative vs forward difference, 2 % (common practice)
        assert sens[m] == pytest.approx(fd, rel=0.02), m
    # the ranking follows the derivative (equal values, e.g. symmetric columns, may come in
    # member order)
    ranked = [s["member"] for s in rep.summary["cases"][0]["stiffen_first"]]
    vals = [sens[m] for m in ranked]
    top = max(abs(v) for v in sens.values())
    assert all(a >= b - 1e-9 * top for a, b in zip(vals, vals[1:]))
    assert ranked[0] == max(sens, key=lambda k: sens[k]) or abs(sens[ranked[0]] - max(sens.values())) <= 1e-9 * top


def test_sensitivity_explicit_members_3d():
    # two-member column (explicit field), 3D, different halves: derivative vs re-solve
    Iy = [8e-6, 8e-6, 5e-6, 5e-6]
    mk = lambda: F.column(4, L=6.0, J=1e-3, member=[1, 1, 2, 2], Iy=np.array(Iy))
    res = fb.solve(mk(), subdivide=6, modes=1)
    rep = run_check(res)
    sens = {r["member"]: r["sensitivity"] for r in rows(rep)}
    a0 = res.cases[0].load_factors[0]
    for label, cells in ((1, [0, 1]), (2, [2, 3])):
        m = mk()
        for name in ("Iy", "Iz"):
            a = m.cell_data[name][0].copy()
            a[cells] *= 1.01
            m.cell_data[name][0] = a
        fd = (fb.solve(m, subdivide=6, modes=1).cases[0].load_factors[0] - a0) / 0.01
        assert sens[label] == pytest.approx(fd, rel=0.02)     # common practice (see above)


# ---------------------------------------------------------------- code verdicts


@pytest.mark.parametrize("alpha", [1.5, 2.999, 3.0, 3.001, 5.0, 9.999, 10.0, 10.001, 14.999, 15.0, 40.0])
def test_en1993_verdict_boundaries(alpha):
    # EN 1993-1-1:2005 clause 5.2.1(3), Eq. (5.1): first order if alpha_cr >= 10 (elastic), >= 15 (plastic)
    assert en1993_first_order(alpha, "elastic")["passes"] == (alpha >= 10)
    assert en1993_first_order(alpha, "plastic")["passes"] == (alpha >= 15)
    assert en1993_first_order(alpha)["clause"] == "EN 1993-1-1:2005 clause 5.2.1(3)"
    # EN 1993-1-1:2005 clause 5.2.2(6)B, Eq. (5.4): amplifier 1 / (1 - 1/alpha_cr) for alpha_cr >= 3
    v = en1993_amplifier(alpha)
    assert v["clause"] == "EN 1993-1-1:2005 clause 5.2.2(5)-(6)"
    if alpha >= 3:
        assert v["passes"] and v["amplifier"] == pytest.approx(1 / (1 - 1 / alpha), rel=1e-14)
    else:
        assert not v["passes"] and v["amplifier"] is None and "second-order analysis" in v["text"]


def test_thresholds_overridable():
    assert not en1993_first_order(11.0, "elastic", elastic_limit=12)["passes"]
    assert en1993_amplifier(2.5, min_alpha=2.0)["passes"]


def test_aisc_b2():
    # AISC 360-16 Appendix 8, Eq. (A-8-6), (A-8-7), (A-8-8)
    s = {"name": "1", "P_story": 2.0e6, "P_mf": 1.0e6, "H": 1.0e5, "height": 4.0, "drift": 0.01}
    RM = 1 - 0.15 * 1.0e6 / 2.0e6
    Pe = RM * 1.0e5 * 4.0 / 0.01
    v = aisc_b2(s, alpha=1.0)
    assert v["P_e_story"] == pytest.approx(Pe)
    assert v["B2"] == pytest.approx(1 / (1 - 2.0e6 / Pe))
    assert v["clause"].startswith("AISC 360-16 Appendix 8")
    v16 = aisc_b2({"P_story": 1.0, "P_e_story": 2.0}, alpha=1.6)
    assert v16["B2"] == pytest.approx(1 / (1 - 1.6 / 2.0))
    assert not aisc_b2({"P_story": 3.0, "P_e_story": 2.0})["passes"]
    assert not aisc_b2({"P_story": 1.0, "P_e_story": 2.0}, max_b2=1.5)["passes"]


def test_case_verdicts_in_report_and_gate():
    res = fb.solve(F.portal(), subdivide=4, modes=1, planar=True)
    a = res.cases[0].load_factors[0]
    st = study_from_dict({"storeys": [{"name": "roof", "P_story": 2000.0, "P_e_story": 2000.0 * a}]})
    rep = run_check(res, st, min_alpha=a * 0.99)
    case = rep.summary["cases"][0]
    clauses = [v["clause"] for v in case["verdicts"]]
    assert any("5.2.1(3)" in c for c in clauses) and any("5.2.2" in c for c in clauses)
    assert any("Appendix 8" in c for c in clauses)
    assert rep.passed and rep.exit_code == 0
    assert not run_check(res, st, min_alpha=a * 1.01).passed
    assert rep.summary["cautions"] == list(fb.CAUTIONS)


# ---------------------------------------------------------------- imperfection


@pytest.mark.parametrize("bottom, top", [(F.PINNED, F.ROLLER), (F.FIXED, F.FREE)])
def test_imperfection_amplitude_en1993_5_3_2_11(bottom, top):
    L, I, A, fy, W = 4.0, 8e-6, 5e-3, 355e6, 1.2e-4
    st = study_from_dict({"imperfection": {"curve": "b", "W": W, "fy": fy, "gamma_M1": 1.0}})
    res = fb.solve(F.column(2, bottom, top, L=L, I=I, A=A, J=1e-3, N=-2.0e5), st, subdivide=8, modes=1)
    info = run_check(res, st).imperfection
    # independent evaluation, EN 1993-1-1:2005 clause 5.3.2(11), Eqs. (5.9), (5.10), (6.49):
    K = 1.0 if top == F.ROLLER else 2.0
    Ncr = math.pi ** 2 * F.E * I / (K * L) ** 2           # Timoshenko & Gere 1961, sec. 2.1
    lam = math.sqrt(A * fy / Ncr)
    a = 0.34                                              # EN 1993-1-1:2005 Table 6.1, curve b
    phi = 0.5 * (1 + a * (lam - 0.2) + lam ** 2)
    chi = 1 / (phi + math.sqrt(phi ** 2 - lam ** 2))
    e0 = a * (lam - 0.2) * (W * fy) / (A * fy) * (1 - chi * lam ** 2) / (1 - chi * lam ** 2)
    # eta_cr = sin(pi x / L) (pinned) or 1 - cos(pi x / 2L) (cantilever), max 1:
    # E I |eta''|max = E I (pi / K L)^2 = N_cr, so eta_init has amplitude e0 exactly
    assert info["e0"] == pytest.approx(e0, rel=1e-4)
    assert info["amplitude"] == pytest.approx(e0, rel=1e-4)
    assert info["clause"] == "EN 1993-1-1:2005 clause 5.3.2(11)"
    assert "e0 * N_cr" in info["formula"]


def test_imperfection_given_amplitude_and_default_e0():
    st = study_from_dict({"imperfection": {"amplitude": 0.02}})
    res = fb.solve(F.column(2, J=1e-3), subdivide=4, modes=1)
    assert run_check(res, st).imperfection["amplitude"] == 0.02
    info = run_check(res).imperfection                 # default: e0 = L/250 (Table 5.1 curve b)
    assert info["e0"] == pytest.approx(4.0 / 250)


def test_torsional_modes_give_no_imperfection_by_default():
    m, _ = F.cruciform()
    rep = run_check(fb.solve(m, subdivide=4, modes=1))
    assert rep.imperfection["skipped"] and rep.imperfection_mode is None


def test_plastic_analysis_gate_and_bad_settings():
    res = fb.solve(F.portal(), subdivide=4, modes=1, planar=True)
    a = res.cases[0].load_factors[0]
    # EN 1993-1-1:2005 clause 5.2.1(3): the plastic-analysis limit is 15, the elastic one 10;
    # scale the forces so that 10 <= alpha_cr < 15
    m = F.portal(P=(-1000.0 * a / 12.0, -1000.0 * a / 12.0))
    r = run_check(fb.solve(m, subdivide=4, modes=1, planar=True), study_from_dict({"checks": {"analysis": "plastic"}}))
    assert r.summary["check"]["min_alpha"] == 15 and not r.passed
    assert run_check(fb.solve(m, subdivide=4, modes=1, planar=True)).passed
    for bad in ({"analysis": "rigid"}, {"sway_limit": 1.5}, {"codes": ["XX"]}, {"min_alpha": -2}):
        with pytest.raises(fb.InputError, match=r"\[checks\]"):
            run_check(res, study_from_dict({"checks": bad}))


from hypothesis import given, settings, strategies as st  # noqa: E402


@settings(max_examples=8, deadline=None, derandomize=True)
@given(h=st.floats(2.0, 8.0), b=st.floats(3.0, 20.0), ratio=st.floats(0.05, 20.0))
def test_portal_properties(h, b, ratio):
    """Any fixed-base portal with equal column loads: sway, closed-form L_cr / L and chord share,
    shares summing to 1, and sum of sensitivities = alpha * bending share of the strain energy."""
    Ic = 8e-6
    res = fb.solve(F.portal(h, b, Ic, Ic * ratio), subdivide=6, modes=1, planar=True)
    rep = run_check(res)
    GB = (Ic / h) / (Ic * ratio / b)
    # Timoshenko & Gere 1961, sec. 2.3 (see test_sway_portal_effective_length_closed_form)
    x = brentq(lambda x: x / math.tan(x) + 6.0 / GB, math.pi / 2 + 1e-12, math.pi - 1e-12)
    mode = case_modes(rep)[0]
    assert mode["type"] == "sway"
    assert mode["sway_share"] == pytest.approx(
        (1 - math.cos(x)) ** 2 / (x ** 2 * (0.5 - math.sin(2 * x) / (4 * x))), rel=2e-3)
    r = rows(rep)
    for c in r:
        if c["status"] == "compression":
            assert c["L_cr_ratio"] == pytest.approx(math.pi / x, rel=2e-3)
    assert sum(c["energy_share"] for c in r) == pytest.approx(1.0, abs=1e-12)
    # identity of the eigenvalue derivative: sum_m d alpha / d s_m = alpha * U_bend / U <= alpha
    assert 0 < sum(c["sensitivity"] for c in r) <= res.cases[0].load_factors[0] * (1 + 1e-12)
