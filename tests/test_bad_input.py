"""Catalogue of bad inputs: every one is refused through the command line with
exit code 2, no traceback, and a message that names the file and the field,
cell, point, key or folder at fault; the input files are never changed.

The requirements (exit code 2, no traceback, name the place of the fault,
inputs unchanged) are the project's contract for bad input (common practice
for command-line tools: a non-zero status and a diagnostic, no crash dump).
The models are invented (see faultkit.py).
"""

from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import meshio
import numpy as np
import pytest

from faultkit import E, mesh_from, portal, portal_arrays, run_cli, sha


def _vtu(tmp: Path, mesh, name="model.vtu") -> Path:
    p = tmp / name
    meshio.write(p, mesh, binary=False)
    return p


def _field(name, value, cell=2):
    """The portal with one cell's value of ``name`` replaced."""
    p, c, ax, r = portal_arrays()
    vals = {"axial_force": ax.copy(), "E": np.full(8, E)}
    arr = vals.get(name, None)
    if arr is None:
        from faultkit import A, G, IY, IZ, J
        arr = np.full(8, {"G": G, "A": A, "Iy": IY, "Iz": IZ, "J": J}[name])
    arr = np.asarray(arr, float).copy()
    arr[cell] = value
    return mesh_from(p, c, ax if name != "axial_force" else arr, r, **({name: arr} if name != "axial_force" else {}))


def _study(tmp: Path, text: str) -> Path:
    p = tmp / "study.toml"
    p.write_text(text)
    return p


# Each builder returns (cli arguments, substrings the message must contain, input files).

def no_file(t):
    return [t / "absent.vtu"], ["absent.vtu", "not found"], []


def directory(t):
    d = t / "adir.vtu"
    d.mkdir()
    return [d], ["adir.vtu", "not a file"], []


def empty_file(t):
    p = t / "empty.vtu"
    p.write_bytes(b"")
    return [p], ["empty.vtu", "cannot read the mesh"], [p]


def truncated_vtu(t):
    p = _vtu(t, portal())
    data = p.read_bytes()
    p.write_bytes(data[: len(data) // 2])
    return [p], ["model.vtu", "truncated"], [p]


def corrupt_vtu(t):
    p = t / "garbage.vtu"
    p.write_bytes(b"\x00\x01 this is not a mesh \xff\xfe" * 20)
    return [p], ["garbage.vtu", "corrupt"], [p]


def truncated_xdmf(t):
    p = t / "model.xdmf"
    meshio.write(p, portal())
    text = p.read_text()
    p.write_text(text[: len(text) // 2])
    return [p], ["model.xdmf", "cannot read the mesh"], [p]


def xdmf_missing_heavy_data(t):
    p = t / "model.xdmf"
    meshio.write(p, portal())
    for h5 in t.glob("*.h5"):
        h5.unlink()
    return [p], ["model.xdmf", "cannot read the mesh"], [p]


def truncated_msh(t):
    p = t / "model.msh"
    pts, c, ax, _ = portal_arrays()
    meshio.write(p, mesh_from(pts, c, ax), file_format="gmsh22", binary=False)
    text = p.read_text()
    p.write_text(text[: int(len(text) * 0.4)])
    return [p], ["model.msh", "cannot read the mesh"], [p]


def no_line_cells(t):
    m = meshio.Mesh(np.eye(3), [("triangle", np.array([[0, 1, 2]]))],
                    cell_data={"axial_force": [np.array([-1.0])]})
    return [_vtu(t, m)], ["model.vtu", "no line cells", "triangle"], []


def missing_axial(t):
    return [_vtu(t, portal(axial_force=None, N_x=np.ones(8)))], \
        ["model.vtu", "axial_force", "cell fields in the file", "N_x"], []


def missing_section(t):
    return [_vtu(t, portal(Iy=None))], ["model.vtu", "Iy", "cell fields in the file"], []


def nan_E(t):
    return [_vtu(t, _field("E", np.nan, 3))], ["model.vtu", "'E'", "NaN", "cell 3"], []


def inf_axial(t):
    return [_vtu(t, _field("axial_force", np.inf, 5))], ["model.vtu", "axial force", "cell 5"], []


def zero_E(t):
    return [_vtu(t, _field("E", 0.0, 1))], ["model.vtu", "'E'", "positive", "cell 1"], []


def negative_G(t):
    return [_vtu(t, _field("G", -8e10, 6))], ["model.vtu", "'G'", "positive", "cell 6"], []


def zero_A(t):
    return [_vtu(t, _field("A", 0.0, 0))], ["model.vtu", "'A'", "positive", "cell 0"], []


def zero_Iy(t):
    return [_vtu(t, _field("Iy", 0.0, 7))], ["model.vtu", "'Iy'", "positive", "cell 7"], []


def negative_Iz(t):
    return [_vtu(t, _field("Iz", -1e-6, 4))], ["model.vtu", "'Iz'", "positive", "cell 4"], []


def negative_J(t):
    return [_vtu(t, _field("J", -2e-7, 2))], ["model.vtu", "'J'", "positive", "cell 2"], []


def zero_length(t):
    p, c, ax, r = portal_arrays()
    p = np.vstack([p, p[5]])                     # point 8 on top of point 5
    c = np.vstack([c, [[5, 8]]])
    ax = np.r_[ax, -1.0]
    r = np.vstack([r, np.zeros(6)])
    return [_vtu(t, mesh_from(p, c, ax, r))], ["model.vtu", "cell 8", "zero length", "points 5 and 8"], []


def orientation_parallel(t):
    ori = np.tile([0.0, 0.0, 1.0], (8, 1))
    ori[:4] = [1, 0, 0]
    ori[2] = [0, 0, -3.0]                        # column 2 is vertical
    return [_vtu(t, portal(orientation=ori))], ["model.vtu", "orientation", "cell 2", "parallel"], []


def orientation_zero(t):
    ori = np.tile([0.0, 0.0, 1.0], (8, 1))
    ori[:4] = [1, 0, 0]
    ori[6] = 0
    return [_vtu(t, portal(orientation=ori))], ["model.vtu", "orientation", "cell 6"], []


def orientation_two_components(t):
    return [_vtu(t, portal(orientation=np.ones((8, 2))))], ["model.vtu", "orientation", "3 components"], []


def restraint_wrong_shape(t):
    p, c, ax, _ = portal_arrays()
    r = np.zeros((8, 3))
    r[:4] = 1
    return [_vtu(t, mesh_from(p, c, ax, r))], ["model.vtu", "restraint", "(8, 6)"], []


def restraint_wrong_value(t):
    p, c, ax, r = portal_arrays()
    r[2, 4] = 2
    return [_vtu(t, mesh_from(p, c, ax, r))], ["model.vtu", "restraint", "0 or 1", "point 2"], []


def restraint_nan(t):
    p, c, ax, r = portal_arrays()
    r[6, 0] = np.nan
    return [_vtu(t, mesh_from(p, c, ax, r))], ["model.vtu", "restraint", "point 6"], []


def cell_point_out_of_range(t):
    p, c, ax, r = portal_arrays()
    c = c.copy()
    c[3, 1] = 42
    return [_vtu(t, mesh_from(p, c, ax, r))], ["model.vtu", "cell 3", "point"], []


def no_support(t):
    p, c, ax, _ = portal_arrays()
    return [_vtu(t, mesh_from(p, c, ax, np.zeros((8, 6))))], \
        ["model.vtu", "no support", "points [0, 1, 2, 3, 4, 5, 6, 7]"], []


def unsupported_part(t):
    # a separate cantilever (points 8-9) next to the portal, not supported
    p, c, ax, r = portal_arrays()
    p = np.vstack([p, [[10, 0, 0], [10, 0, 3]]])
    c = np.vstack([c, [[8, 9]]])
    ax = np.r_[ax, -1e4]
    r = np.vstack([r, np.zeros((2, 6))])
    return [_vtu(t, mesh_from(p, c, ax, r))], ["model.vtu", "no support", "points [8, 9]"], []


def coincident_unjoined(t):
    # a column split at mid-height by two separate points at the same place
    pts = np.array([[0, 0, 0], [0, 0, 2], [0, 0, 2], [0, 0, 4]], float)
    cells = np.array([[0, 1], [2, 3]])
    r = np.zeros((4, 6))
    r[0] = 1
    return [_vtu(t, mesh_from(pts, cells, np.array([-1e5, -1e5]), r))], \
        ["model.vtu", "points [2, 3]", "coincident points not joined", "points 1 and 2"], []


def mechanism(t):
    # a column pinned at the base, free at the top: it can rotate as a rigid body
    pts = np.array([[0, 0, 0], [0, 0, 4]], float)
    r = np.zeros((2, 6))
    r[0, :3] = 1
    return [_vtu(t, mesh_from(pts, np.array([[0, 1]]), np.array([-1e5]), r))], \
        ["model.vtu", "mechanism", "Free DOFs: ", "cell 0", "Probable cause"], []


def bar_chain_mechanism(t):
    # two pin-ended bars in a straight line: the middle point is free sideways
    pts = np.array([[0, 0, 0], [2, 0, 0], [4, 0, 0]], float)
    r = np.zeros((3, 6))
    r[0, :3] = r[2, :3] = 1
    m = mesh_from(pts, np.array([[0, 1], [1, 2]]), np.array([-1e4, -1e4]), r, bar=np.ones(2))
    return [_vtu(t, m)], ["model.vtu", "mechanism", "point 1", "uy", "uz"], []


def study_unknown_key(t):
    m = _vtu(t, portal())
    s = _study(t, "[analysis]\nmodez = 3\n")
    return [m, "--study", s], ["study.toml", "analysis.modez", "did you mean 'modes'"], [m, s]


def study_unknown_table(t):
    m = _vtu(t, portal())
    s = _study(t, "[suports]\nset = 'base'\n")
    return [m, "--study", s], ["study.toml", "suports", "did you mean 'supports'"], [m, s]


def study_wrong_type(t):
    m = _vtu(t, portal())
    s = _study(t, "[analysis]\nmodes = \"four\"\n")
    return [m, "--study", s], ["study.toml", "analysis.modes", "wrong type", "int"], [m, s]


def study_bad_value(t):
    m = _vtu(t, portal())
    s = _study(t, "[analysis]\nmodes = 0\n")
    return [m, "--study", s], ["study.toml", "modes", "at least 1"], [m, s]


def study_not_toml(t):
    m = _vtu(t, portal())
    s = _study(t, "[analysis\nmodes = 3\n")
    return [m, "--study", s], ["study.toml", "not valid TOML"], [m, s]


def study_not_found(t):
    m = _vtu(t, portal())
    return [m, "--study", t / "nostudy.toml"], ["nostudy.toml", "not found"], [m]


def study_missing_set(t):
    m = _vtu(t, portal())
    s = _study(t, "[[supports]]\nset = \"base\"\nfix = \"fixed\"\n")
    return [m, "--study", s], ["study.toml", "point set 'base'", "supports"], [m, s]


def study_missing_section_id(t):
    m = _vtu(t, portal(Iy=None, Iz=None, A=None, J=None, section_id=np.r_[np.ones(4), np.full(4, 2)]))
    s = _study(t, "[sections]\nkey = \"section_id\"\n[sections.values.1]\nA = 5e-3\nIy = 8e-5\n"
                  "Iz = 6e-6\nJ = 2e-7\n")
    return [m, "--study", s], ["study.toml", "cell 4", "section_id = 2", "[sections.values]"], [m, s]


def study_unknown_case(t):
    m = _vtu(t, portal())
    s = _study(t, "[analysis]\ncases = [\"wind\"]\n")
    return [m, "--study", s], ["study.toml", "'wind'", "not a load case", "default"], [m, s]


def study_missing_key_field(t):
    m = _vtu(t, portal())
    s = _study(t, "[materials]\nkey = \"material_id\"\n[materials.values.1]\nE = 2.1e11\n")
    return [m, "--study", s], ["study.toml", "material_id", "no cell field"], [m, s]


def checks_member_share_out_of_range(t):
    m = _vtu(t, portal())
    s = _study(t, "[checks]\nmember_share = 1.5\n")
    return ["check", m, "--study", s], ["study.toml", "[checks] member_share", "(0, 1]", "1.5"], [m, s]


def study_unknown_unit(t):
    m = _vtu(t, portal())
    s = _study(t, "[units]\nforce = \"kip\"\nlength = \"m\"\n")
    return [m, "--study", s], ["study.toml", "[units] force = 'kip'", "kN"], [m, s]


def study_stress_unit_alone(t):
    m = _vtu(t, portal())
    s = _study(t, "[units]\nstress = \"MPa\"\n")
    return [m, "--study", s], ["study.toml", "[units] stress = 'MPa'", "force and length"], [m, s]


def study_bad_compression_sign(t):
    m = _vtu(t, portal())
    s = _study(t, "[analysis]\ncompression = \"up\"\n")
    return [m, "--study", s], ["study.toml", "[analysis] compression = 'up'", "positive"], [m, s]


def out_parent_is_file(t):
    m = _vtu(t, portal())
    f = t / "afile"
    f.write_text("x")
    return [m, "--out", f / "sub"], ["afile", "cannot create the output folder"], [m, f]


def out_is_file(t):
    m = _vtu(t, portal())
    f = t / "results"
    f.write_text("x")
    return [m, "--out", f], ["results", "output folder"], [m, f]


def study_unknown_solver(t):
    m = _vtu(t, portal())
    s = _study(t, '[analysis]\nsolver = "fastest"\n')
    return [m, "--study", s], ["study.toml", "[analysis] solver", "auto", "fastest"], [m, s]


CATALOGUE = [no_file, directory, empty_file, truncated_vtu, corrupt_vtu, truncated_xdmf,
             xdmf_missing_heavy_data, truncated_msh, no_line_cells, missing_axial, missing_section,
             nan_E, inf_axial, zero_E, negative_G, zero_A, zero_Iy, negative_Iz, negative_J,
             zero_length, orientation_parallel, orientation_zero, orientation_two_components,
             restraint_wrong_shape, restraint_wrong_value, restraint_nan, cell_point_out_of_range,
             no_support, unsupported_part, coincident_unjoined, mechanism, bar_chain_mechanism,
             study_unknown_key, study_unknown_table, study_wrong_type, study_bad_value,
             study_not_toml, study_not_found, study_missing_set, study_missing_section_id,
             study_unknown_case, study_missing_key_field, out_parent_is_file, out_is_file,
             checks_member_share_out_of_range,
             study_unknown_unit, study_stress_unit_alone, study_bad_compression_sign,
             study_unknown_solver]


def test_catalogue_is_large_enough():
    assert len({f.__name__ for f in CATALOGUE}) >= 25


def _run_one(build, base: Path):
    work = base / build.__name__
    (work / "w").mkdir(parents=True)
    args, expected, inputs = build(work / "w")
    if "--out" not in map(str, args):
        args = [*args, "--out", work / "out"]
    before = {p: sha(p) for p in inputs}
    r = run_cli(*args)
    after = {p: sha(p) for p in inputs}
    return r, expected, before, after, work / "out"


@pytest.fixture(scope="module")
def outcomes(tmp_path_factory):
    """Run the whole catalogue once, a few CLI processes at a time (each is mostly start-up)."""
    base = tmp_path_factory.mktemp("catalogue")
    with ThreadPoolExecutor(max_workers=3) as pool:
        futures = {b.__name__: pool.submit(_run_one, b, base) for b in CATALOGUE}
        return {name: f.result() for name, f in futures.items()}


@pytest.mark.parametrize("name", [f.__name__ for f in CATALOGUE])
def test_bad_input_is_refused_clearly(name, outcomes):
    r, expected, before, after, out = outcomes[name]
    assert r.returncode == 2, (r.stdout, r.stderr)
    assert "Traceback" not in r.stderr and "Traceback" not in r.stdout
    assert r.stderr.startswith("framebuckle: error: "), r.stderr
    for s in expected:
        assert s in r.stderr, f"{s!r} not in {r.stderr!r}"
    assert before == after, "an input file was changed"
    assert not out.exists() or not any(out.iterdir()), "a refused run must not leave outputs"
