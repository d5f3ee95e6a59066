"""`framebuckle check`: exit codes, files written, CSV / JSON / VTU read back."""

import csv
import json
import math
import subprocess
import sys
from pathlib import Path

import meshio
import numpy as np
import pytest
import pyvista as pv

import frames as F


def run(*args, cwd=None):
    return subprocess.run([sys.executable, "-m", "framebuckle", "check", *map(str, args)],
                          capture_output=True, text=True, cwd=cwd)


@pytest.fixture(scope="module")
def portal_file(tmp_path_factory):
    d = tmp_path_factory.mktemp("portal")
    m = F.portal(ncol=2)
    m.cell_data["axial_force.wind"] = [np.array([-800.0, -800.0, 0.0, -1200.0, -1200.0])]
    m.cell_data["axial_force.gravity"] = m.cell_data.pop("axial_force")
    p = d / "portal.vtu"
    meshio.write(p, m)
    study = d / "study.toml"
    study.write_text('[analysis]\nplanar = true\nmodes = 2\n[checks]\nfy = 355e6\n'
                     '[imperfection]\ncase = "gravity"\n', encoding="utf-8")
    return p, study


def test_check_passes_and_files_read_back(portal_file, tmp_path):
    p, study = portal_file
    before = p.read_bytes()
    r = run(p, "--study", study, "--min-alpha", "1.5", "--out", tmp_path)
    assert r.returncode == 0, r.stderr
    assert "pass" in r.stdout and "caution:" in r.stdout
    assert p.read_bytes() == before                      # the input is never modified
    s = json.loads((tmp_path / "portal.summary.json").read_text())
    assert s["check"]["passed"] and s["check"]["min_alpha"] == 1.5
    names = [c["name"] for c in s["cases"]]
    assert sorted(names) == ["gravity", "wind"]
    for c in s["cases"]:
        assert c["alpha_cr"] == c["load_factors"][0] and c["passed"]
        assert {v["clause"] for v in c["verdicts"]} >= {"EN 1993-1-1:2005 clause 5.2.1(3)",
                                                       "EN 1993-1-1:2005 clause 5.2.2(5)-(6)"}
        assert c["modes"][0]["type"] == "sway" and c["governing_members"]
    assert s["cautions"] and s["check"]["imperfection"]["case"] == "gravity"
    with open(tmp_path / "portal.members.csv", newline="") as fh:
        rows = list(csv.DictReader(fh))
    assert len(rows) == 2 * (2 + 1) * 3                    # cases x (modes + design) x members
    assert sum(r["row_type"] == "design" for r in rows) == 2 * 3
    assert all((r["mode"] == "") == (r["row_type"] == "design") != (r["governing_mode"] == "")
               for r in rows if r["status"] == "compression")
    g1 = [r for r in rows if r["case"] == "gravity" and r["mode"] == "1"]
    assert {r["status"] for r in g1} == {"compression", "negligible"}
    col = [r for r in g1 if r["status"] == "compression"][0]
    Ncr = float(col["N_cr"])
    # slenderness sqrt(A fy / N_cr), EN 1993-1-1:2005 Eq. (6.50)
    assert float(col["slenderness"]) == pytest.approx(math.sqrt(5e-3 * 355e6 / Ncr), rel=1e-8)
    # effective length from N_cr = pi^2 E I / L_cr^2 (Euler; Timoshenko & Gere 1961, Theory of
    # Elastic Stability, sec. 2.1, from memory)
    assert float(col["L_cr"]) == pytest.approx(math.pi * math.sqrt(F.E * 8e-6 / Ncr), rel=1e-8)
    assert sum(float(r["energy_share"]) for r in g1) == pytest.approx(1.0, abs=1e-8)
    beam = [r for r in g1 if r["status"] == "negligible"][0]
    assert beam["N_cr"] == "" and beam["L_cr"] == ""
    # per-member cell fields on the input mesh: the design values (governing mode of each member)
    v = pv.read(tmp_path / "portal.modes.vtu")
    ratio = np.asarray(v.cell_data["L_cr_ratio_y.gravity"])
    gmode = np.asarray(v.cell_data["governing_mode.gravity"])
    member = np.asarray(v.cell_data["member"])
    assert len(ratio) == 5 and np.isnan(ratio[2]) and np.isnan(gmode[2])   # the beam: no compression
    design = {int(r["member"]): r for r in rows if r["case"] == "gravity" and r["row_type"] == "design"}
    for cell in (0, 1, 3, 4):
        d = design[int(member[cell])]
        assert ratio[cell] == pytest.approx(float(d["L_cr_ratio_y"]), rel=1e-6)
        assert gmode[cell] == int(d["governing_mode"])
    assert member[0] == member[1] and member[3] == member[4] and len(set(member)) == 3
    # imperfect geometry: points moved by the scaled mode
    imp = pv.read(tmp_path / "portal.imperfect.vtu")
    moved = np.linalg.norm(imp.points - v.points, axis=1).max()
    info = s["check"]["imperfection"]
    assert moved == pytest.approx(info["largest_translation_at_input_points"], rel=1e-6)
    assert 0.9 * info["amplitude"] < moved <= info["amplitude"] * (1 + 1e-6)


def test_check_fails_with_exit_1_and_json_stdout(portal_file, tmp_path):
    p, study = portal_file
    r = run(p, "--study", study, "--min-alpha", "1e9", "--json", "--out", tmp_path)
    assert r.returncode == 1, r.stderr
    s = json.loads(r.stdout)
    assert s["check"]["passed"] is False
    assert all(not c["passed"] for c in s["cases"])
    assert s == json.loads((tmp_path / "portal.summary.json").read_text()) | {}


def test_check_default_gate_is_en1993_first_order(portal_file, tmp_path):
    p, study = portal_file
    r = run(p, "--study", study, "--json", "--out", tmp_path)
    s = json.loads(r.stdout)
    # EN 1993-1-1:2005 clause 5.2.1(3): alpha_cr >= 10 for elastic analysis
    assert s["check"]["min_alpha"] == 10
    expected = all(c["alpha_cr"] >= 10 for c in s["cases"])
    assert r.returncode == (0 if expected else 1)


def test_check_bad_input_exit_2(tmp_path):
    r = run(tmp_path / "missing.vtu", "--out", tmp_path)
    assert r.returncode == 2 and "file not found" in r.stderr and "Traceback" not in r.stderr
    p = tmp_path / "col.vtu"
    meshio.write(p, F.column(2))
    bad = tmp_path / "bad.toml"
    bad.write_text("[checks]\nmin_alfa = 3\n", encoding="utf-8")
    r = run(p, "--study", bad, "--out", tmp_path)
    assert r.returncode == 2 and "min_alfa" in r.stderr and "min_alpha" in r.stderr
    bad.write_text("[[storeys]]\nname = 'x'\nH = 1.0\n", encoding="utf-8")
    r = run(p, "--study", bad, "--out", tmp_path)
    assert r.returncode == 2 and "P_story" in r.stderr
    r = run(p, "--min-alpha", "-1", "--out", tmp_path)
    assert r.returncode == 2
    # existing outputs are not replaced without --force
    assert run(p, "--min-alpha", "1", "--out", tmp_path / "o").returncode == 0
    r = run(p, "--min-alpha", "1", "--out", tmp_path / "o")
    assert r.returncode == 2 and "--force" in r.stderr
    assert run(p, "--min-alpha", "1", "--out", tmp_path / "o", "--force").returncode == 0


SAMPLES = Path(__file__).resolve().parents[1] / "sample_meshes"


@pytest.mark.parametrize("name, study", [
    ("workshop_portal.xdmf", None), ("lattice_mast.vtu", None),
    ("footbridge.msh", "footbridge.study.toml")])
def test_check_on_samples(name, study, tmp_path):
    import framebuckle as fb
    from framebuckle.pipeline.api import _as_study
    from framebuckle.engineering.check import run_check
    from framebuckle.engineering.checkfiles import write_check
    st = _as_study(None if study is None else SAMPLES / study)
    res = fb.solve(SAMPLES / name, st, modes=2)
    rep = run_check(res, st)
    paths = write_check(res, rep, tmp_path)
    assert set(paths) == {"modes", "modes_fine", "summary", "members", "imperfect"}
    with open(paths["members"], newline="") as fh:
        rows = list(csv.DictReader(fh))
    n_cases = len(res.cases)
    assert len(rows) == n_cases * (2 + 1) * rep.members.n            # modes + design rows
    for case in res.cases:
        for mode in ("1", "2"):
            share = [float(r["energy_share"]) for r in rows if r["case"] == case.name and r["mode"] == mode]
            assert sum(share) == pytest.approx(1.0, abs=1e-9)      # identity: shares of one total
    g = pv.read(paths["modes"])
    assert "member" in g.cell_data and any(k.startswith("L_cr_ratio_y") for k in g.cell_data)
    s = json.loads(paths["summary"].read_text())
    assert all("verdicts" in c and c["modes"][0]["type"] in ("sway", "member", "torsional") for c in s["cases"])
