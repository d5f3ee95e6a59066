"""Design effective lengths: every compressed member's N_cr and L_cr from its own governing mode
(the lowest mode in which it takes part), ranked by the member's critical factor."""

import math

import numpy as np
import pytest
from scipy.optimize import brentq

import framebuckle as fb
from framebuckle.engineering.check import run_check
from framebuckle.engineering.effective import relative_shares
from framebuckle.io.study import study_from_dict

import frames as F


def design(rep, case=None):
    """member label -> design row of a case."""
    return {r["member"]: r for r in rep.rows
            if r["row_type"] == "design" and (case is None or r["case"] == case)}


def mode_row(rep, mode, member):
    return next(r for r in rep.rows if r["row_type"] == "mode" and r["mode"] == mode and r["member"] == member)


# ---------------------------------------------------------------- Euler columns in one model

# end conditions (bottom, top) and K (Timoshenko & Gere 1961, Theory of Elastic Stability,
# sec. 2.1 pinned and cantilever; sec. 2.2 built in at both ends and built in / hinged, kl = 4.493)
ENDS = {"pinned": (F.PINNED, F.ROLLER, 1.0), "fixed-free": (F.FIXED, F.FREE, 2.0),
        "fixed-pinned": (F.FIXED, F.ROLLER, 0.6992), "fixed-fixed": (F.FIXED, F.GUIDED, 0.5)}
# each column loaded to 1 / a of its own Euler load: its weak-axis mode has load factor a (its
# strong-axis mode 1.5 a, Iz = 1.5 Iy; higher modes of the same column come in between)
FACTOR = {"pinned": 6.0, "fixed-free": 2.0, "fixed-pinned": 10.0, "fixed-fixed": 3.5}


def four_columns(L=4.0, I=8e-6):
    """Four separate columns along Z (two cells each), one per end condition."""
    pts, cells, rest, N = [], [], [], []
    for j, (name, (bottom, top, K)) in enumerate(ENDS.items()):
        o = len(pts)
        pts += [[3.0 * j, 0.0, z] for z in (0.0, L / 2, L)]
        cells += [[o, o + 1], [o + 1, o + 2]]
        rest += [bottom, F.FREE, top]
        P = math.pi ** 2 * F.E * I / (K * L) ** 2          # Timoshenko & Gere 1961, sec. 2.1-2.2
        N += [-P / FACTOR[name]] * 2
    n = len(cells)
    fields = {"axial_force": N, "E": [F.E] * n, "G": [F.G] * n, "A": [5e-3] * n, "Iy": [I] * n,
              "Iz": [1.5 * I] * n, "J": [1e-3] * n}
    return F.mesh(pts, cells, rest, fields)


def test_euler_columns_each_from_its_own_mode():
    res = fb.solve(four_columns(), subdivide=8, modes=8)
    lam = res.cases[0].load_factors
    own = {name: int(np.argmin(np.abs(lam - a))) + 1 for name, a in FACTOR.items()}
    for name, a in FACTOR.items():                          # each column at a times its Euler load
        assert lam[own[name] - 1] == pytest.approx(a, rel=1e-3)
    assert sorted(own.values()) == sorted(set(own.values())) and own["fixed-free"] == 1
    rep = run_check(res)
    d = design(rep)
    assert sorted(d) == [0, 1, 2, 3]                        # automatic members, in cell order
    for label, name in enumerate(ENDS):
        r = d[label]
        K = ENDS[name][2]
        assert r["status"] == "compression" and r["governing_mode"] == own[name], name
        assert r["axis"] == "y"                             # the weak axis (Iz = 1.5 Iy)
        assert r["L_cr_ratio"] == pytest.approx(K, abs=2e-4), name    # T & G 1961 (see ENDS)
        # N_cr = alpha_k |N_Ed| of the governing mode (definition), = the Euler load
        assert r["load_factor"] == pytest.approx(lam[own[name] - 1], rel=1e-12)
        assert r["N_cr"] == pytest.approx(r["load_factor"] * abs(r["N_Ed"]), rel=1e-12)
        # the lowest mode alone would give K sqrt(a / a_min): the defect this design row removes
        m1 = mode_row(rep, 1, label)
        assert m1["L_cr_ratio_y"] == pytest.approx(r["L_cr_ratio_y"] * math.sqrt(r["load_factor"] / lam[0]), rel=1e-9)
    # ranked by the member critical factor N_cr / |N_Ed|, lowest first
    ranked = [x["member"] for x in rep.summary["cases"][0]["design"]["members"]]
    assert ranked == sorted(d, key=lambda m: d[m]["load_factor"])
    assert [d[m]["design_rank"] for m in ranked] == [1, 2, 3, 4]
    assert rep.summary["cases"][0]["design"]["not_governed"] == []


# ---------------------------------------------------------------- portal with a leaning column


def leaning_portal(h=4.0, b=6.0, I1=8e-6, I2=8e-6, P1=1000.0, P2=1000.0):
    """Fixed-base cantilever column (cell 0, load P1) braced only by a rigid pin-ended link
    (cell 2, a bar) to a pinned-pinned leaning column (cell 1, load P2), in the X-Z plane."""
    pts = [[0, 0, 0], [0, 0, h], [b, 0, 0], [b, 0, h]]
    cells = [[0, 1], [2, 3], [1, 3]]
    rest = [F.FIXED, F.FREE, F.PINNED, F.FREE]
    fields = {"axial_force": [-P1, -P2, 0.0], "E": [F.E] * 3, "G": [F.G] * 3, "A": [5e-3, 5e-3, 1.0],
              "Iy": [I1, I2, 1e-4], "Iz": [I1, I2, 1e-4], "J": [2e-7] * 3, "bar": [0, 0, 1]}
    return F.mesh(pts, cells, rest, fields)


def sway_root(r):
    """kh of the sway mode, k^2 = P1 / (E I1), r = P2 / P1.

    Cantilever, fixed at x = 0, top free to rotate, carrying P1 and the horizontal force
    H = P2 Delta / h of the leaning column (a pin-ended strut tilted by Delta / h, no bending):
    E I w'' + P1 w = P1 Delta + H (h - x), w(0) = w'(0) = 0, w(h) = Delta.  With
    w = A cos kx + B sin kx + Delta + H (h - x) / P1: B = H / (P1 k), A = -(Delta + H h / P1),
    A cos kh + B sin kh = 0, i.e. (1 + r) kh cos kh - r sin kh = 0
    (Timoshenko & Gere 1961, sec. 2.1 method; the leaning-column load adds P2 / h to the
    destabilising shear; r = 0 gives kh = pi / 2, the cantilever).  Root in (0, pi / 2).
    """
    return brentq(lambda u: (1 + r) * u * math.cos(u) - r * math.sin(u), 1e-9, math.pi / 2)


@pytest.mark.parametrize("I2, P2, sway_first", [(8e-6, 1000.0, True), (8e-7, 5000.0, False)])
def test_leaning_column_portal_each_member_from_its_own_mode(I2, P2, sway_first):
    h, I1, P1 = 4.0, 8e-6, 1000.0
    res = fb.solve(leaning_portal(h=h, I2=I2, P2=P2), subdivide=8, modes=2, planar=True)
    rep = run_check(res)
    lam = res.cases[0].load_factors
    u = sway_root(P2 / P1)
    alpha_sway = u ** 2 * F.E * I1 / (h ** 2 * P1)
    # the leaning column's own bowing between its pins: Euler, K = 1 (Timoshenko & Gere 1961,
    # sec. 2.1); with Delta = 0 it needs no end shear at P = pi^2 E I / h^2, so the cantilever
    # stays straight: an exact mode of the whole system
    alpha_lean = math.pi ** 2 * F.E * I2 / (h ** 2 * P2)
    assert (alpha_sway < alpha_lean) == sway_first
    assert sorted([alpha_sway, alpha_lean]) == pytest.approx(list(lam), rel=1e-3)
    sway_mode, lean_mode = (1, 2) if sway_first else (2, 1)
    kinds = [m["type"] for m in rep.summary["cases"][0]["modes"]]
    assert kinds[sway_mode - 1] == "sway" and kinds[lean_mode - 1] == "member"
    d = design(rep)
    cant, lean, link = d[0], d[1], d[2]
    assert cant["governing_mode"] == sway_mode
    assert cant["L_cr_ratio"] == pytest.approx(math.pi / u, rel=1e-3)      # L_cr = pi / k
    assert lean["governing_mode"] == lean_mode
    assert lean["L_cr_ratio"] == pytest.approx(1.0, rel=1e-3)              # its own length
    assert link["status"] == "negligible" and link["governing_mode"] is None
    # the lowest mode alone gives the other member a length from a mode it takes no part in
    other = mode_row(rep, 1, 1 if sway_first else 0)
    assert other["energy_share"] < 1e-6
    # (or none at all, where the mode does not bend it beyond rounding: effective.BENT)
    if other["axis"] == "":
        assert other["L_cr_ratio"] is None
    else:
        assert other["L_cr_ratio"] > 1.5 * (lean if sway_first else cant)["L_cr_ratio"]
    # ranking by the member critical factor: the member of mode 1 first
    ranked = [x["member"] for x in rep.summary["cases"][0]["design"]["members"]]
    assert ranked == ([0, 1] if sway_first else [1, 0])


def test_member_in_no_computed_mode_is_said_so():
    # the leaning column's bowing is mode 1; with one mode the cantilever takes part in none
    res = fb.solve(leaning_portal(I2=8e-7, P2=5000.0), subdivide=8, modes=1, planar=True)
    rep = run_check(res)
    d = design(rep)
    assert d[1]["governing_mode"] == 1
    assert d[0]["status"] == "not_governed" and d[0]["N_cr"] is None and d[0]["L_cr"] is None
    case = rep.summary["cases"][0]
    assert case["design"]["not_governed"] == [0]
    assert [x["member"] for x in case["design"]["members"]] == [1]
    assert any("ask for more modes" in n for n in case["notes"])
    # the cell fields say so too: no design length, no governing mode
    assert np.isnan(rep.cell_fields["L_cr_ratio_y"][0]) and np.isnan(rep.cell_fields["governing_mode"][0])
    assert rep.cell_fields["governing_mode"][1] == 1


def test_member_share_threshold_from_study():
    # the cantilever takes no share of the leaning column's bowing: any threshold > 0 keeps it out
    res = fb.solve(leaning_portal(), subdivide=8, modes=2, planar=True)
    st = study_from_dict({"checks": {"member_share": 1.0}})
    rep = run_check(res, st)
    assert rep.summary["check"]["indicators"]["member_share"] == 1.0
    assert design(rep)[1]["governing_mode"] == 2
    for bad in (0.0, 1.5, -0.1):
        with pytest.raises(fb.InputError, match=r"\[checks\] member_share"):
            run_check(res, study_from_dict({"checks": {"member_share": bad}}))


def test_repeated_load_factor_shares_do_not_depend_on_the_basis():
    # modes of one repeated eigenvalue, K-orthonormal, are any rotation Q of each other; the
    # member shares of the rotated modes are diag(Q^T S_m Q) (S_m: the member's 2 x 2 energy
    # matrix in that eigenspace), whose sum trace(S_m) does not depend on Q (linear algebra,
    # invariance of the trace)
    rng = np.random.default_rng(1)
    S = rng.normal(size=(5, 2, 3))
    S = np.einsum("mij,mkj->mik", S, S)
    S /= np.trace(S.sum(axis=0))                            # total energy 1 per unit mode
    lam = np.array([3.0, 3.0, 7.0])
    other = rng.random(5)
    out = []
    for t in (0.0, 0.4, 1.3):
        Q = np.array([[math.cos(t), -math.sin(t)], [math.sin(t), math.cos(t)]])
        share = np.einsum("ik,mij,jk->km", Q, S, Q) * 2     # each mode's shares (sum 1)
        out.append(relative_shares(np.vstack([share, other / other.sum()]), lam))
    for o in out[1:]:
        assert o == pytest.approx(out[0], abs=1e-12)
    assert out[0][0] == pytest.approx(out[0][1]) and out[0].max(axis=1) == pytest.approx(1.0)


def test_report_ranks_members_by_critical_factor():
    # leaning column bowing first (mode 1), cantilever in the sway mode 2: the report lists the
    # leaning column first although the cantilever has the larger L_cr / L
    from framebuckle.pictures import report
    res = fb.solve(leaning_portal(I2=8e-7, P2=5000.0), subdivide=8, modes=2, planar=True)
    chk = run_check(res)
    d = design(chk)
    assert d[0]["L_cr_ratio"] > d[1]["L_cr_ratio"] and d[1]["load_factor"] < d[0]["load_factor"]
    html = report.build_html(res, {}, [], chk)
    table = html[html.index('<table class="design">'):]
    table = table[:table.index("</table>")]
    first, second = table.index('<td class="num">1</td><td class="num">1</td>'), \
        table.index('<td class="num">2</td><td class="num">0</td>')
    assert first < second and "1 (member)" in table and "2 (sway)" in table
    title, png, caption = report._member_plot(res, chk)
    assert title == "Members by critical factor" and png[:4] == b"\x89PNG" and "lowest first" in caption
