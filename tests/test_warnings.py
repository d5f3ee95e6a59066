"""Suspicious but solvable inputs: the run completes (exit 0) and says clearly
what looks wrong (units, coincident points, separate parts), and a model with
no compression reports "no compressive instability" instead of failing.

Unit magnitudes (from memory): steel E = 2.1e11 N/m^2 = 2.1e5 N/mm^2;
a rolled I-section area is some 1e-3 m^2 = 1e3 mm^2 (common practice).
"""

from __future__ import annotations

import json

import meshio
import numpy as np
import pytest

import framebuckle as fb
from faultkit import A, E, G, IY, IZ, J, mesh_from, portal, portal_arrays, run_cli, sha


def _cli(tmp_path, mesh, name="model.vtu"):
    p = tmp_path / name
    meshio.write(p, mesh, binary=False)
    h = sha(p)
    r = run_cli(p, "--out", tmp_path / "out")
    assert sha(p) == h
    assert r.returncode == 0, r.stderr
    assert "Traceback" not in r.stderr
    summary = json.loads((tmp_path / "out" / name.replace(".vtu", ".summary.json")).read_text())
    return r, summary


def test_consistent_model_gives_no_warning(tmp_path):
    r, s = _cli(tmp_path, portal())
    assert "warning" not in r.stderr and s["warnings"] == []
    c = s["cases"][0]
    assert c["status"] == "ok" and c["checks"]["sturm_count"] >= len(c["load_factors"])


def test_modulus_in_mpa_with_lengths_in_metres(tmp_path):
    r, s = _cli(tmp_path, portal(E=E / 1e6, G=G / 1e6))
    assert "framebuckle: warning: units: E (median 2.1e+05)" in r.stderr
    assert "member lengths" in r.stderr and "look like metres" in r.stderr
    assert any("E and the point coordinates disagree" in w for w in s["warnings"])


def test_modulus_in_pa_with_lengths_in_millimetres(tmp_path):
    p, c, ax, r_ = portal_arrays()
    r, s = _cli(tmp_path, mesh_from(p * 1000, c, ax, r_, A=A * 1e6, Iy=IY * 1e12, Iz=IZ * 1e12,
                                    J=J * 1e12))
    assert "E (median 2.1e+11) looks like a stress per square metre" in r.stderr
    assert "look like millimetres" in r.stderr


def test_area_in_mm2_with_lengths_in_metres_is_refused_with_the_reason(tmp_path):
    # axial stiffness 1e6 times too high: K is so ill-conditioned that the modes fail their
    # residual check; the refusal names the unit mismatch as the possible reason
    p = tmp_path / "model.vtu"
    meshio.write(p, portal(A=A * 1e6), binary=False)
    r = run_cli(p, "--out", tmp_path / "out")
    assert r.returncode == 2 and "Traceback" not in r.stderr
    assert "possible reason: units: A (median 5.38e+03)" in r.stderr and "A / L^2" in r.stderr
    assert "Iy / A^2" in r.stderr                  # I in m^4 against A in mm^2


def test_shear_modulus_in_other_units(tmp_path):
    r, s = _cli(tmp_path, portal(G=G / 1e6))
    assert "G / E" in r.stderr and "G and E seem to use different units" in r.stderr


def test_forces_far_too_large_for_the_stiffness(tmp_path):
    p, c, ax, r_ = portal_arrays()
    r, s = _cli(tmp_path, mesh_from(p, c, ax * 1e5, r_))
    assert "axial force of cell 0" in r.stderr and "times E A" in r.stderr


def test_coincident_points_and_separate_parts_are_named(tmp_path):
    # two cantilever columns, each fixed at its base; their tops lie at one place as two points
    pts = np.array([[0, 0, 0], [0, 0, 3], [1, 0, 0], [0, 0, 3]], float)
    pts[2] = [0, 0, 6]                          # second column hangs from above (fixed at top)
    cells = np.array([[0, 1], [3, 2]])
    r_ = np.zeros((4, 6))
    r_[0] = r_[2] = 1
    r, s = _cli(tmp_path, mesh_from(pts, cells, np.array([-1e5, -1e5]), r_))
    assert "coincident points not joined: points 1 and 3" in r.stderr
    assert "2 separate parts" in r.stderr


def test_no_compression_is_a_clear_result_not_an_error(tmp_path):
    p, c, ax, r_ = portal_arrays()
    r, s = _cli(tmp_path, mesh_from(p, c, np.abs(ax), r_))
    assert "no compressive instability" in r.stdout
    case = s["cases"][0]
    assert case["status"] == "no_compression" and case["load_factors"] == []
    assert any("no compressive instability" in n for n in case["notes"])


def test_tension_and_zero_force_in_api():
    p, c, ax, r_ = portal_arrays()
    res = fb.solve(mesh_from(p, c, np.zeros(8), r_))
    assert res.cases[0].status == "no_compression" and res.cases[0].alpha_cr is None
