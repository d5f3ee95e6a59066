"""Warping results do not depend on how members are cut into cells (framebuckle.mechanics.twistlength)."""

import math
from pathlib import Path

import meshio
import numpy as np
import pytest

import framebuckle as fb
from framebuckle.io.read import read_input
from mech_models import E, G

SAMPLES = Path(__file__).resolve().parents[1] / "sample_meshes"
# invented sections of IPE / HEB type (orders of magnitude as in rolled-section tables, from memory)
IPE = dict(A=53.8e-4, Iy=8356e-8, Iz=603.8e-8, J=20.12e-8, Iw=125.9e-9)
HEB = dict(A=78.1e-4, Iy=5696e-8, Iz=2003e-8, J=59.28e-8, Iw=171.1e-9)
M0, P0 = 1000.0, -1000.0


def _line(pts, cd, restraint):
    n = len(pts) - 1
    cells = np.column_stack([np.arange(n), np.arange(1, n + 1)])
    cdata = {k: [np.tile(np.asarray(v, float), (n, 1)) if np.ndim(v) else np.full(n, float(v))]
             for k, v in cd.items()}
    return meshio.Mesh(pts, [("line", cells)], point_data={"restraint": restraint}, cell_data=cdata)


def ltb_beam(x):
    """Fork-supported beam along X through the points ``x`` under a uniform moment M0 about y."""
    x = np.asarray(x, float)
    r = np.zeros((len(x), 6))
    r[0, :4] = 1
    r[-1, 1:4] = 1
    cd = dict(E=E, G=G, **IPE, moment_start=[0.0, M0, 0.0], moment_end=[0.0, M0, 0.0])
    return _line(np.column_stack([x, 0 * x, 0 * x]), cd, r)


def torsion_column(z):
    """Pinned column along Z through the points ``z``, twist held at both ends, under P0."""
    z = np.asarray(z, float)
    r = np.zeros((len(z), 6))
    r[0, [0, 1, 2, 5]] = 1
    r[-1, [0, 1, 5]] = 1
    return _line(np.column_stack([0 * z, 0 * z, z]), dict(E=E, G=G, axial_force=P0, **HEB), r)


def mcr_uniform(L, s=IPE):
    # Timoshenko & Gere 1961, Theory of Elastic Stability, sec. 6.3 (fork supports, uniform moment)
    return math.pi / L * math.sqrt(E * s["Iz"] * G * s["J"]) * math.sqrt(
        1 + math.pi ** 2 * E * s["Iw"] / (G * s["J"] * L ** 2))


def ncr_torsion(L, s=HEB):
    # Timoshenko & Gere 1961, Theory of Elastic Stability, sec. 5.3: (G J + pi^2 E Iw / L^2) / i0^2
    return (G * s["J"] + math.pi ** 2 * E * s["Iw"] / L ** 2) / ((s["Iy"] + s["Iz"]) / s["A"])


def torsional_factor(res):
    """Lowest load factor of a pure twist mode (no lateral translation) of a column along Z."""
    c = res.cases[0]
    for lam, mode in zip(c.load_factors, c.modes):
        if np.abs(mode[:, 5]).max() > 0 and np.abs(mode[:, :2]).max() < 1e-6 * np.abs(mode[:, 5]).max():
            return lam
    raise AssertionError("no torsional mode among the load factors")


def split(mesh, k, rng):
    """Every beam cell (bars stay whole) cut into ``k`` cells at random interior points; cell
    fields copied (end moments interpolated, releases kept at the old ends); new points carry no
    restraint."""
    pts = [np.asarray(mesh.points, float)]
    n = len(mesh.points)
    cells, src, t0, t1 = [], [], [], []
    (c,) = [b for b in mesh.cells if b.type == "line"]
    bar = np.asarray(mesh.cell_data["bar"][0]) if "bar" in mesh.cell_data else np.zeros(len(c.data))
    for i, (a, b) in enumerate(c.data):
        kk = 1 if bar[i] else k
        # one random point in the middle half of each k-th (no cell shorter than half a k-th:
        # very short sub-elements beside long ones are a conditioning matter, not a warping one)
        t = np.concatenate([[0.0], (np.arange(1, kk) + rng.uniform(-0.25, 0.25, kk - 1)) / kk, [1.0]])
        new = pts[0][a] + t[1:-1, None] * (pts[0][b] - pts[0][a])
        ids = np.concatenate([[a], n + np.arange(kk - 1), [b]])
        pts.append(new)
        n += kk - 1
        cells += list(zip(ids[:-1], ids[1:]))
        src += [i] * kk
        t0 += list(t[:-1])
        t1 += list(t[1:])
    src, t0, t1 = np.array(src), np.array(t0)[:, None], np.array(t1)[:, None]
    first = np.r_[True, src[1:] != src[:-1]]
    last = np.r_[src[1:] != src[:-1], True]
    cd = {}
    for name, (v,) in mesh.cell_data.items():
        v = np.asarray(v)
        base = name.split(".")[0]
        if base in ("moment_start", "moment_end"):
            ms = np.asarray(mesh.cell_data[name.replace(base, "moment_start")][0])[src]
            me = np.asarray(mesh.cell_data[name.replace(base, "moment_end")][0])[src]
            t = t0 if base == "moment_start" else t1
            cd[name] = [ms + t * (me - ms)]
        elif base in ("release_start", "release_end"):
            keep = first if base == "release_start" else last
            cd[name] = [np.where(keep[:, None], v[src], 0)]
        else:
            cd[name] = [v[src]]
    pd = {}
    for name in ("restraint", "warping_restraint"):
        if name in mesh.point_data:
            v = np.asarray(mesh.point_data[name])
            pd[name] = np.concatenate([v, np.zeros((n - len(v),) + v.shape[1:], v.dtype)])
    return meshio.Mesh(np.concatenate(pts), [("line", np.array(cells))], point_data=pd, cell_data=cd)


def test_six_cell_ltb_beam_meets_closed_form():
    # Timoshenko & Gere 1961, sec. 6.3; six cells of unequal length (was 3.4 x too high)
    L = 6.0
    res = fb.solve(ltb_beam([0.0, 0.7, 1.9, 3.0, 3.6, 4.8, L]), modes=1, subdivide=8, mesh_check=False)
    assert res.settings["warping"] == "equivalent"
    assert res.cases[0].alpha_cr * M0 == pytest.approx(mcr_uniform(L), rel=0.005)
    assert any("between torsional restraints" in n for n in res.notes)


def test_four_cell_torsional_column_meets_closed_form():
    # Timoshenko & Gere 1961, sec. 5.3 (was 5.7 x too high)
    L = 4.0
    res = fb.solve(torsion_column([0.0, 0.5, 1.7, 3.1, L]), modes=6, subdivide=8, mesh_check=False)
    assert res.settings["warping"] == "equivalent"
    assert torsional_factor(res) * -P0 == pytest.approx(ncr_torsion(L), rel=0.005)


def test_twist_restrained_at_mid_height_halves_the_length():
    # twist held at mid-height, warping free: the twist is sin(2 pi z / L), so N_T uses L / 2
    # (Timoshenko & Gere 1961, sec. 5.3 with the half-wave length L / 2); both formulations
    L = 4.0
    m = torsion_column([0.0, 1.3, 2.0, 3.1, L])
    m.point_data["restraint"][2, 5] = 1
    for w in ("equivalent", "dof"):
        res = fb.solve(m, modes=8, subdivide=8, mesh_check=False, warping=w)
        assert torsional_factor(res) * -P0 == pytest.approx(ncr_torsion(L / 2), rel=0.005)


def test_torsion_segments():
    # continuous beam on three supports: a support fixing only translations does not end the
    # twist length, one fixing the twist does; a bar at a point does not; a member boundary does
    L = 3.0
    x = np.array([0.0, 1.0, L, 4.0, 2 * L])
    m = ltb_beam(x)
    m.point_data["restraint"][2, 1:3] = 1
    im = read_input(m)
    assert np.allclose(im.extra["twist_lengths"].length[im.extra["twist_lengths"].segment], 2 * L)
    # J_eq = J + pi^2 E Iw / (G L_t^2) (Timoshenko & Gere 1961, sec. 5.3)
    assert np.allclose(im.frame.J, IPE["J"] + math.pi ** 2 * E * IPE["Iw"] / (G * (2 * L) ** 2))
    m.point_data["restraint"][2, 3] = 1
    tl = read_input(m).extra["twist_lengths"]
    assert np.allclose(tl.length[tl.segment], L)
    m.point_data["restraint"][2, 3] = 0
    m.cell_data["member"] = [np.array([1.0, 1.0, 1.0, 2.0])]
    tl = read_input(m).extra["twist_lengths"]
    assert np.allclose(tl.length[tl.segment], [4.0, 4.0, 4.0, 2.0])
    del m.cell_data["member"]
    m.points = np.vstack([m.points, [[1.0, 2.0, 0.0]]])
    m.point_data["restraint"] = np.vstack([m.point_data["restraint"], np.ones((1, 6))])
    m.cells = [meshio.CellBlock("line", np.vstack([m.cells[0].data, [[1, 5]]]))]
    for name in list(m.cell_data):
        v = m.cell_data[name][0]
        m.cell_data[name] = [np.concatenate([v, v[:1]])]
    m.cell_data["bar"] = [np.array([0, 0, 0, 0, 1.0])]
    tl = read_input(m).extra["twist_lengths"]
    assert np.allclose(tl.length[tl.segment[:4]], 2 * L) and tl.segment[4] == -1
    m.cell_data["bar"] = [np.zeros(5)]                    # a beam joining ends the length
    tl = read_input(m).extra["twist_lengths"]
    assert np.allclose(tl.length[tl.segment[:4]], [1.0, 5.0, 5.0, 5.0])


def test_stepped_member_switches_to_the_warping_dof():
    # E Iw changes inside the member: no single equivalent constant; "auto" runs the warping DOF
    m = torsion_column([0.0, 1.0, 2.5, 4.0])
    m.cell_data["Iw"] = [np.array([HEB["Iw"], 0.5 * HEB["Iw"], HEB["Iw"]])]
    auto = fb.solve(m, modes=6, subdivide=8, mesh_check=False)
    dof = fb.solve(m, modes=6, subdivide=8, mesh_check=False, warping="dof")
    assert auto.settings["warping"] == "dof"
    assert any('warping = "auto"' in n and "cells 0, 1, 2" in n for n in auto.notes)
    assert np.array_equal(auto.cases[0].load_factors, dof.cases[0].load_factors)
    eq = fb.solve(m, modes=6, subdivide=8, mesh_check=False, warping="equivalent")
    assert eq.settings["warping"] == "equivalent"
    assert any("not well defined" in w for w in eq.warnings)
    # no warping warning with "auto" (the test column's load is far below its buckling load, so
    # the unit-slip rule alpha_cr > 1e3 rightly warns; that one is not about warping)
    assert not [w for w in auto.warnings if not w.startswith("units:")]


def test_interior_twist_release_and_warping_restraint_switch():
    m = torsion_column([0.0, 2.0, 4.0])
    m.cell_data["release_end"] = [np.array([[0, 0, 0, 1, 0, 0], [0] * 6], float)]
    im = read_input(m)
    assert im.extra["twist_lengths"].undefined[0][1] == "the twist is released at an interior point"
    m = torsion_column([0.0, 2.0, 4.0])
    m.point_data["warping_restraint"] = np.array([1.0, 0.0, 1.0])
    res = fb.solve(m, modes=6, subdivide=8, mesh_check=False)
    assert res.settings["warping"] == "dof" and any("warping is restrained" in n for n in res.notes)
    # warping restrained at both ends: P_T = (G J + 4 pi^2 E Iw / L^2) / i0^2
    # (Timoshenko & Gere 1961, secs. 2.3 and 5.3)
    assert torsional_factor(res) * -P0 == pytest.approx(ncr_torsion(2.0), rel=1e-3)


def _factors(res):
    return {c.name: c.load_factors for c in res.cases if c.status == "ok"}


@pytest.mark.parametrize("name", ["ltb_beam", "torsion_column", "footbridge.vtu", "workshop_portal.vtu",
                                  "lattice_mast.vtu"])
def test_split_cells_leave_load_factors_unchanged(name):
    # property: cutting every cell into k cells at random interior points changes no load factor
    # beyond the mesh tolerance (a physical result must not depend on the cells)
    rng = np.random.default_rng(12)
    if name == "ltb_beam":
        mesh, k, modes = ltb_beam([0.0, 6.0]), 4, 2
    elif name == "torsion_column":
        mesh, k, modes = torsion_column([0.0, 4.0]), 3, 4
    else:
        mesh, k, modes = meshio.read(SAMPLES / name), 2, 3
    base = fb.solve(mesh, modes=modes, subdivide=8)
    for _ in range(2):
        cut = fb.solve(split(mesh, k, rng), modes=modes, subdivide=8)
        assert cut.settings["warping"] == base.settings["warping"]
        a, b = _factors(base), _factors(cut)
        assert a.keys() == b.keys()
        for case in a:
            # the moment terms converge as h^2: compare the extrapolated values of the mesh check
            ra = base.cases[[c.name for c in base.cases].index(case)].mesh_check
            rb = cut.cases[[c.name for c in cut.cases].index(case)].mesh_check
            if ra and ra.get("order") == 2:
                assert rb["richardson"] == pytest.approx(ra["richardson"], rel=1e-4)
            else:
                np.testing.assert_allclose(b[case], a[case], rtol=1e-4)
