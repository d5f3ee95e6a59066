"""Units and signs: declared units are converted, unit slips are named, a sign slip cannot pass.

References:
* load factors are dimensionless, so a consistent change of units leaves them unchanged
  (dimensional homogeneity, common practice); effective lengths scale with the length unit,
  critical forces with the force unit;
* the critical load factor of K + lambda Kg(N) is inversely proportional to a common factor
  on the axial forces N, since Kg is linear in N (Przemieniecki, Theory of Matrix Structural
  Analysis, 1968, ch. 15: the geometric stiffness is proportional to the axial force);
* unit magnitudes (from memory): steel E = 2.1e11 N/m^2 = 2.1e5 N/mm^2 (MPa); 1 kN = 1e3 N.
"""

from __future__ import annotations

import json
import subprocess
import sys

import meshio
import numpy as np
import pytest

import framebuckle as fb
from faultkit import A, E, G, IY, IZ, J, mesh_from, portal, portal_arrays
from framebuckle.engineering.check import run_check
from framebuckle.io.study import study_from_dict

KN_MM_MPA = {"units": {"force": "kN", "length": "mm", "stress": "MPa"}}


def _mm_portal(force=1e-3, stress=1e-6, **more):
    """The portal with lengths in mm, forces times ``force`` and moduli times ``stress``."""
    p, c, ax, r = portal_arrays()
    return mesh_from(p * 1e3, c, ax * force, r, E=E * stress, G=G * stress, A=A * 1e6,
                     Iy=IY * 1e12, Iz=IZ * 1e12, J=J * 1e12, **more)


def _check(tmp_path, mesh, study=None, name="model.vtu"):
    p = tmp_path / name
    meshio.write(p, mesh, binary=False)
    args = [sys.executable, "-m", "framebuckle", "check", str(p), "--out", str(tmp_path / "out")]
    if study is not None:
        s = tmp_path / "study.toml"
        s.write_text(study)
        args += ["--study", str(s)]
    r = subprocess.run(args, capture_output=True, text=True, timeout=300)
    assert "Traceback" not in r.stderr, r.stderr
    summary = json.loads((tmp_path / "out" / name.replace(".vtu", ".summary.json")).read_text())
    return r, summary


# ------------------------------------------------------------------ declared units


def test_kn_mm_mpa_give_the_load_factors_of_n_m_pa_and_outputs_in_the_declared_units():
    si_study = study_from_dict({"checks": {"fy": 355e6}})
    mm_study = study_from_dict({**KN_MM_MPA, "checks": {"fy": 355.0}})       # fy in MPa
    si = fb.solve(portal(), si_study, modes=4)
    mm = fb.solve(_mm_portal(), mm_study, modes=4)
    la, lb = si.cases[0].load_factors, mm.cases[0].load_factors
    # dimensional homogeneity: the load factors do not depend on the units
    assert np.allclose(lb, la, rtol=1e-8, atol=0)
    assert mm.warnings == [] and si.warnings == []
    assert mm.summary()["units"] == {"force": "kN", "length": "mm", "stress": "MPa"}
    assert any("converted to kN/mm^2 (x 0.001)" in n for n in mm.notes)
    ra, rb = run_check(si, si_study), run_check(mm, mm_study)
    # modes of a repeated load factor are any mix of the cluster: compare single modes only
    single = {i + 1 for i, x in enumerate(la) if np.sum(np.isclose(la, x, rtol=1e-6)) == 1}
    assert single == {1, 2}
    for x, y in zip(ra.rows, rb.rows):
        assert (x["member"], x["mode"]) == (y["member"], y["mode"])
        if x["mode"] not in single:
            continue
        if x["N_cr"] is None:
            assert y["N_cr"] is None
            continue
        assert y["N_cr"] == pytest.approx(x["N_cr"] / 1e3, rel=1e-8)        # kN
        assert y["axis"] == x["axis"]
        if x["L_cr"] is None:                   # a member the mode does not bend: no axis
            assert y["L_cr"] is None and x["axis"] == ""
        else:
            assert y["L_cr"] == pytest.approx(x["L_cr"] * 1e3, rel=1e-8)    # mm
        assert y["length"] == pytest.approx(x["length"] * 1e3, rel=1e-12)
        assert y["slenderness"] == pytest.approx(x["slenderness"], rel=1e-8)  # sqrt(A fy / N_cr)


def test_stresses_of_a_study_table_are_converted_like_the_mesh_fields():
    p, c, ax, r = portal_arrays()
    mesh = mesh_from(p * 1e3, c, ax * 1e-3, r, E=None, G=None, A=A * 1e6, Iy=IY * 1e12,
                     Iz=IZ * 1e12, J=J * 1e12, material_id=1.0)
    study = {**KN_MM_MPA, "materials": {"key": "material_id", "values": {"1": {"E": 2.1e5, "G": 8.1e4}}}}
    lb = fb.solve(mesh, study, modes=2).cases[0].load_factors
    la = fb.solve(portal(), modes=2).cases[0].load_factors
    assert np.allclose(lb, la, rtol=1e-8, atol=0)


def test_force_and_length_without_stress_are_labels_only():
    # N and m with the moduli in Pa: nothing is converted, the units are carried to the summary
    res = fb.solve(portal(), {"units": {"force": "N", "length": "m"}}, modes=1)
    ref = fb.solve(portal(), modes=1)
    assert res.cases[0].load_factors[0] == ref.cases[0].load_factors[0]
    assert res.summary()["units"] == {"force": "N", "length": "m", "stress": None}


# ------------------------------------------------------------------ unit slips named


def test_kn_with_pa_warns_naming_the_slip_in_check(tmp_path):
    p, c, ax, r = portal_arrays()
    r_cli, s = _check(tmp_path, mesh_from(p, c, ax / 1e3, r))        # forces in kN, E in Pa
    ref = fb.solve(portal(), modes=1).cases[0].alpha_cr
    # the slip makes alpha_cr 1000 times too large (Kg linear in N)
    assert s["cases"][0]["alpha_cr"] == pytest.approx(1e3 * ref, rel=1e-6)
    assert "framebuckle: warning: units:" in r_cli.stderr
    assert "Likely slip: forces in kN with E in Pa" in r_cli.stderr
    assert any("kN" in w and "Pa" in w for w in s["warnings"])


def test_n_with_mpa_and_metres_warns_naming_the_slip():
    res = fb.solve(portal(E=E / 1e6, G=G / 1e6), modes=1)      # moduli in MPa, lengths and A in m
    w = [x for x in res.warnings if "times E A" in x]
    assert w and "Likely slip: forces in N with E in MPa (N/mm^2) and lengths in m" in w[0]


def test_kn_with_mpa_and_mm_undeclared_warns_naming_the_slip():
    res = fb.solve(_mm_portal(), modes=1)
    w = [x for x in res.warnings if "median axial strain" in x]
    assert w and "Likely slip: forces in kN with E in MPa (N/mm^2) and lengths in mm" in w[0]


def test_declared_units_that_do_not_fit_the_forces_are_questioned():
    # forces in kN but [units] says N (with mm and MPa): the warning points at the declaration
    res = fb.solve(_mm_portal(), {"units": {"force": "N", "length": "mm", "stress": "MPa"}}, modes=1)
    assert any("[units] declares force = \"N\", but they look like kN" in w for w in res.warnings)


def test_alpha_above_a_thousand_with_small_strains_warns():
    # a 4 m pinned column under 1 kN: strain 9.5e-7 (above the strain limit), alpha_cr ~ 1e3
    from refmodels import column
    res = fb.solve(column(2, "pinned-pinned", N=-1000.0), modes=1)
    EI = 2.1e11 * 8.0e-6
    # Euler load pi^2 EI / L^2 (Timoshenko & Gere, Theory of Elastic Stability, 1961, sec. 2.1)
    assert res.cases[0].alpha_cr == pytest.approx(np.pi ** 2 * EI / 16.0 / 1000.0, rel=1e-4)
    w = [x for x in res.warnings if "alpha_cr of every case is above 1000" in x]
    assert w and "forces in kN with E in Pa" in w[0]
    # the same column under 100 kN (alpha_cr about 10): no unit warning
    assert fb.solve(column(2, "pinned-pinned", N=-1e5), modes=1).warnings == []


# ------------------------------------------------------------------ signs


def test_compression_positive_option_gives_the_tension_positive_load_factors():
    p, c, ax, r = portal_arrays()
    flipped = mesh_from(p, c, -ax, r)                     # compression given as positive
    ref = fb.solve(portal(), modes=3)
    res = fb.solve(flipped, {"analysis": {"compression": "positive"}}, modes=3)
    assert np.array_equal(res.cases[0].load_factors, ref.cases[0].load_factors)
    assert res.warnings == []
    assert any("compression-positive" in n for n in res.notes)
    # without the option the file has no member in compression and says why
    plain = fb.solve(flipped, modes=3)
    assert plain.cases[0].status == "no_compression"
    assert any("[analysis] compression = \"positive\"" in w for w in plain.warnings)


def test_check_of_a_file_without_compression_fails_with_the_sign_convention(tmp_path):
    p, c, ax, r = portal_arrays()
    r_cli, s = _check(tmp_path, mesh_from(p, c, -ax, r))
    assert r_cli.returncode == 1, r_cli.stderr
    assert "no load case has a member in compression" in r_cli.stderr
    assert "[analysis] compression = \"positive\"" in r_cli.stderr
    assert "allow_all_tension" in r_cli.stderr
    assert s["check"]["passed"] is False and "sign_convention" in s["check"]
    assert "FAIL" in r_cli.stdout


def test_allow_all_tension_lets_a_genuine_tension_run_pass(tmp_path):
    p, c, ax, r = portal_arrays()
    r_cli, s = _check(tmp_path, mesh_from(p, c, np.abs(ax), r), "[checks]\nallow_all_tension = true\n")
    assert r_cli.returncode == 0, r_cli.stderr
    assert s["check"]["passed"] is True and "sign_convention" not in s["check"]
    assert s["cases"][0]["status"] == "no_compression"


# ------------------------------------------------------------------ imperfection default


def test_default_imperfection_comes_from_the_case_with_the_lowest_alpha():
    p, c, ax, r = portal_arrays()
    mesh = mesh_from(p, c, None, r, **{"axial_force.light": ax, "axial_force.heavy": 2 * ax})
    res = fb.solve(mesh, modes=2)
    light, heavy = res.case("light").alpha_cr, res.case("heavy").alpha_cr
    # Kg is linear in N: twice the forces, half the load factor
    assert heavy == pytest.approx(light / 2, rel=1e-8)
    rep = run_check(res, study_from_dict({"imperfection": {"amplitude": 0.01}}))
    assert rep.imperfection["case"] == "heavy"
    assert rep.imperfection_mode[0] == [x.name for x in res.cases].index("heavy")
