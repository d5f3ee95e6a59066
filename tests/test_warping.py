"""Warping torsion with a 7th DOF per node (framebuckle.solver.warping)."""

import math

import meshio
import numpy as np
import pytest

import framebuckle as fb
from mech_models import E, G, column_mesh

# an invented wide-flange I-section (doubly symmetric)
A, IY, IZ, J, IW = 6e-3, 8e-5, 2e-5, 2e-7, 2e-7
R02 = (IY + IZ) / A                       # polar radius of gyration squared about the shear centre


def _column(L, ncell=1, Iz=IZ):
    """Pinned column along Z with the twist held at both ends (forks); warping free unless restrained."""
    m = column_mesh(L=L, ncell=ncell, A=A, Iy=IY, Iz=Iz, J=J, P=-1000.0, cell_data={"Iw": IW})
    m.point_data["restraint"][-1, 5] = 1
    return m


def test_torsional_buckling_warping_free_ends():
    # P_T = (G J + pi^2 E Iw / L^2) / r0^2 (Timoshenko & Gere 1961, Theory of Elastic Stability, sec. 5.3)
    L = 3.0
    pt = (G * J + math.pi ** 2 * E * IW / L ** 2) / R02
    assert pt < math.pi ** 2 * E * IZ / L ** 2                   # torsion governs this invented column
    res = fb.solve(_column(L), {"analysis": {"warping": "dof"}}, subdivide=8)
    c = res.cases[0]
    assert c.alpha_cr * 1000.0 == pytest.approx(pt, rel=0.01)
    assert c.alpha_cr * 1000.0 == pytest.approx(pt, rel=1e-4)
    assert res.settings["warping"] == "dof"
    assert any("warping DOF" in n for n in res.notes)
    assert not any("J + pi^2 E Iw" in n for n in res.notes)
    # the equivalent-J path is exact for this case too (same source)
    eq = fb.solve(_column(L), subdivide=8).cases[0].alpha_cr
    assert eq == pytest.approx(c.alpha_cr, rel=1e-4)


def test_torsional_buckling_warping_restrained_ends():
    # theta = theta' = 0 at both ends: E Iw theta'''' + (P r0^2 - G J) theta'' = 0 is the clamped
    # column equation, so P_T = (G J + 4 pi^2 E Iw / L^2) / r0^2 (Timoshenko & Gere 1961, secs. 2.3, 5.3)
    L, Iz = 3.0, IY                       # flexurally stiffer variant: torsion still governs
    pt = (G * J + 4 * math.pi ** 2 * E * IW / L ** 2) / ((IY + Iz) / A)
    m = _column(L, Iz=Iz)
    assert pt < math.pi ** 2 * E * Iz / L ** 2
    r1 = fb.solve(m, {"analysis": {"warping": "dof"}, "warping": {"supports": "restrained"}}, subdivide=8)
    assert r1.cases[0].alpha_cr * 1000.0 == pytest.approx(pt, rel=1e-3)
    m.point_data["warping_restraint"] = np.array([1.0, 1.0])
    r2 = fb.solve(m, warping="dof", subdivide=8)
    assert r2.cases[0].alpha_cr == pytest.approx(r1.cases[0].alpha_cr, rel=1e-12)


def test_fork_supported_i_beam_uniform_moment():
    # M_cr = (pi / L) sqrt(E Iz (G J + pi^2 E Iw / L^2)) (Timoshenko & Gere 1961, sec. 6.3)
    L, Iy, Iz, Jb, Iw = 6.0, 8e-5, 4e-6, 1.5e-7, 9e-8
    mcr = math.pi / L * math.sqrt(E * Iz * (G * Jb + math.pi ** 2 * E * Iw / L ** 2))
    pts = np.array([[0, 0, 0], [L, 0, 0]], float)
    r = np.zeros((2, 6)); r[0, :4] = 1; r[1, 1:4] = 1
    M = 1000.0
    cd = {k: [np.array([v])] for k, v in dict(E=E, G=G, A=A, Iy=Iy, Iz=Iz, J=Jb, Iw=Iw).items()}
    cd["moment_start"] = [np.array([[0.0, M, 0.0]])]
    cd["moment_end"] = [np.array([[0.0, M, 0.0]])]
    mesh = meshio.Mesh(pts, [("line", np.array([[0, 1]]))], point_data={"restraint": r}, cell_data=cd)
    res = fb.solve(mesh, warping="dof", subdivide=8)
    c = res.cases[0]
    assert c.alpha_cr * M == pytest.approx(mcr, rel=0.01)
    assert c.alpha_cr * M == pytest.approx(mcr, rel=1e-4)            # 2.1e-5 measured: cubic twist
    assert c.mesh_check["order"] == 4 and c.mesh_check["richardson"] * M == pytest.approx(mcr, rel=1e-6)


def test_switch_without_iw_is_the_six_dof_path():
    m = column_mesh(L=3.0, ncell=2, A=A, Iy=IY, Iz=IZ, J=J)
    a = fb.solve(m, modes=3)
    b = fb.solve(m, modes=3, warping="dof")
    assert np.array_equal(a.cases[0].load_factors, b.cases[0].load_factors)
    assert b.settings["warping"] == "equivalent"
    with pytest.raises(fb.InputError, match="warping"):
        fb.solve(m, {"analysis": {"warping": "vlasov"}})


def test_two_cells_with_releases_and_points_option():
    # column in three cells, base released for bending (already pinned: no effect on the result),
    # warping restrained at the third point through [warping] points (at mid-length the first mode
    # has no rate of twist by symmetry): the torsional load rises
    # (common practice: restraint can only raise an elastic critical load, Rayleigh's principle)
    L = 3.0
    m = _column(L, ncell=3)
    m.cell_data["release_start"] = [np.array([[0, 0, 0, 0, 1, 1]] + [[0, 0, 0, 0, 0, 0]] * 2, float)]
    free = fb.solve(m, warping="dof", subdivide=8).cases[0].alpha_cr
    pt = (G * J + math.pi ** 2 * E * IW / L ** 2) / R02            # Timoshenko & Gere 1961, sec. 5.3
    assert free * 1000.0 == pytest.approx(pt, rel=1e-4)
    mid = fb.solve(m, {"analysis": {"warping": "dof"}, "warping": {"points": [1]}}, subdivide=8)
    assert mid.cases[0].alpha_cr > free * 1.05
