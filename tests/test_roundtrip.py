"""VTU, XDMF and Gmsh MSH round trips through the command line on the shipped samples.

The same model stored in two formats must give the same load factors (the file format is
only a container; common practice), every run writes its three outputs, and the input files
are left byte-for-byte unchanged.
"""

import hashlib
import json
import subprocess
import sys
from pathlib import Path

import meshio
import numpy as np
import pytest

from framebuckle.io.read import point_sets

ROOT = Path(__file__).resolve().parents[1]
SAMPLES = ROOT / "sample_meshes"

# run id -> (input, further input files that must stay unchanged, study file)
RUNS = {
    "portal_vtu": ("workshop_portal.vtu", [], None),
    "portal_xdmf": ("workshop_portal.xdmf", ["workshop_portal.h5"], None),
    "footbridge_vtu": ("footbridge.vtu", [], None),
    "footbridge_msh": ("footbridge.msh", [], "footbridge.study.toml"),
    "mast_vtu": ("lattice_mast.vtu", [], None),
}


def digest(paths):
    return {p.name: hashlib.sha256(p.read_bytes()).hexdigest() for p in paths}


def run_cli(name, out: Path):
    inp, extra, study = RUNS[name]
    files = [SAMPLES / inp] + [SAMPLES / e for e in extra] + ([SAMPLES / study] if study else [])
    before = digest(files)
    cmd = [sys.executable, "-m", "framebuckle", "solve", str(SAMPLES / inp), "--out", str(out)]
    if study:
        cmd += ["--study", str(SAMPLES / study)]
    proc = subprocess.run(cmd, capture_output=True, text=True, timeout=300)
    assert proc.returncode == 0, proc.stderr
    assert "Traceback" not in proc.stderr
    assert digest(files) == before, "an input file was changed"
    stem = Path(inp).stem
    paths = [out / f"{stem}.modes.vtu", out / f"{stem}.modes_fine.vtu", out / f"{stem}.summary.json"]
    for p in paths:
        assert p.is_file() and p.stat().st_size > 0, p
    summary = json.loads(paths[2].read_text())
    return summary, proc.stdout, out


@pytest.fixture(scope="module")
def solved(tmp_path_factory):
    out = {}
    for name in RUNS:
        out[name] = run_cli(name, tmp_path_factory.mktemp(name))
    return out


def factors(summary):
    return [np.array(c["load_factors"]) for c in summary["cases"]]


@pytest.mark.parametrize("a,b", [("portal_vtu", "portal_xdmf"), ("footbridge_vtu", "footbridge_msh")])
def test_same_model_same_load_factors_in_every_format(solved, a, b):
    fa, fb = factors(solved[a][0]), factors(solved[b][0])
    assert len(fa) == len(fb) >= 2
    for x, y in zip(fa, fb):
        assert len(x) == len(y) == 4
        np.testing.assert_allclose(x, y, rtol=1e-10, atol=0)
    ma, mb = solved[a][0]["model"], solved[b][0]["model"]
    assert (ma["nodes"], ma["elements"], ma["dofs"]) == (mb["nodes"], mb["elements"], mb["dofs"])


def test_xdmf_steps_are_the_cases(solved):
    # each time step of the XDMF series is one load case, in the order of the VTU's cases
    names = [c["name"] for c in solved["portal_xdmf"][0]["cases"]]
    assert len(names) == 2 and names[0].startswith("t=1") and names[1].startswith("t=2")
    assert [c["name"] for c in solved["portal_vtu"][0]["cases"]] == ["gravity", "gravity_wind"]


def test_msh_supports_come_from_physical_groups(solved):
    s = solved["footbridge_msh"][0]
    assert s["units"] == {"force": "N", "length": "m", "stress": None}
    mesh = meshio.read(SAMPLES / "footbridge.msh")
    sets = point_sets(mesh)
    for name in ("bearing_fixed", "bearing_guided", "bearing_sliding", "bearing_free"):
        assert len(sets[name]) == 1
    # the MSH file itself has no restraint field: without the study file nothing is supported
    assert "restraint" not in mesh.point_data
    before = digest([SAMPLES / "footbridge.msh"])
    proc = subprocess.run([sys.executable, "-m", "framebuckle", "solve", str(SAMPLES / "footbridge.msh"),
                           "--out", str(solved["footbridge_msh"][2] / "unused")], capture_output=True, text=True)
    assert digest([SAMPLES / "footbridge.msh"]) == before
    assert proc.returncode == 2 and "no support" in proc.stderr and "Traceback" not in proc.stderr


@pytest.mark.parametrize("name,lo,hi", [("portal_vtu", 5, 15), ("footbridge_vtu", 2, 10), ("mast_vtu", 3, 50)])
def test_main_case_alpha_cr_is_plausible(solved, name, lo, hi):
    # the samples are scenarios in which buckling matters: alpha_cr of the governing case in
    # the usual range of such structures (common practice; 10 is the first-order limit for
    # elastic analysis in EN 1993-1-1:2005, 5.2.1(3))
    summary, stdout, _ = solved[name]
    alpha = min(c["load_factors"][0] for c in summary["cases"] if c["status"] == "ok")
    assert lo <= alpha <= hi
    assert all(c["status"] == "ok" for c in summary["cases"])
    assert "caution" in stdout


def test_modes_vtu_is_the_input_mesh_with_modes(solved):
    # the written modes file is the input mesh plus mode fields and the load factors
    import pyvista as pv
    out = solved["footbridge_msh"][2]
    grid = pv.read(out / "footbridge.modes.vtu")
    src = meshio.read(SAMPLES / "footbridge.vtu")
    assert grid.n_points == len(src.points)
    assert "mode_1.crowd_full" in grid.point_data
    np.testing.assert_allclose(np.asarray(grid.field_data["load_factors.crowd_full"]),
                               solved["footbridge_msh"][0]["cases"][0]["load_factors"], rtol=1e-12)


def test_gmsh_physical_tags_are_per_dimension(tmp_path):
    # Gmsh numbers physical groups per dimension (Gmsh reference manual, sec. "MSH file
    # format", $PhysicalNames: dimension, tag, name), so a point group and a curve group may
    # share a tag; a point set must take only the points of its own dimension.
    pts = np.array([[0, 0, 0], [1, 0, 0], [2, 0, 0], [3, 0, 0]], float)
    cells = [("line", np.array([[0, 1], [1, 2], [2, 3]])), ("vertex", np.array([[0]]))]
    mesh = meshio.Mesh(pts, cells, point_data={"gmsh:dim_tags": np.array([[0, 1], [1, 1], [1, 1], [1, 1]])},
                       cell_data={"gmsh:physical": [np.array([1, 1, 1]), np.array([1])],
                                  "gmsh:geometrical": [np.array([1, 1, 1]), np.array([1])]},
                       field_data={"members": np.array([1, 1]), "base": np.array([1, 0])})
    meshio.write(tmp_path / "t.msh", mesh, file_format="gmsh", binary=True)
    sets = point_sets(meshio.read(tmp_path / "t.msh"))
    assert sets["base"].tolist() == [0]
    assert sets["members"].tolist() == [0, 1, 2, 3]
    assert not any(k.startswith("gmsh:") for k in sets)


def test_msh_point_fields_follow_their_points():
    """meshio reads MSH 4.1 points in node-block order but node data in tag order; the
    reader must put point fields back on their points (checked against the VTU of the
    same model, matched by coordinates; common practice)."""
    import meshio
    import numpy as np
    from scipy.spatial import cKDTree

    from framebuckle.io.meshfile import read_mesh

    here = Path(__file__).resolve().parents[1] / "sample_meshes"
    vtu = meshio.read(here / "footbridge.vtu")
    msh, _ = read_mesh(here / "footbridge.msh")
    dist, idx = cKDTree(vtu.points).query(msh.points)
    assert dist.max() == 0.0
    assert not np.array_equal(idx, np.arange(len(idx)))      # the file really is reordered
    fields = [k for k in msh.point_data if k.startswith("displacement")]
    assert fields
    for k in fields:
        np.testing.assert_array_equal(np.asarray(vtu.point_data[k])[idx], msh.point_data[k])
