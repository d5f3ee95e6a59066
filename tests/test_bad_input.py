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
from faultkit import IY as IY_PORTAL
from faultkit import IZ as IZ_PORTAL
from faultkit import J as J_PORTAL


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


def study_section_dimension(t):
    m = _vtu(t, portal(Iy=None, Iz=None, A=None, J=None, section_id=np.ones(8)))
    s = _study(t, "[sections]\nkey = \"section_id\"\n[sections.values.1]\nshape = \"I\"\nh = 0.3\n"
                  "b = 0.15\ntw = 0.0071\ntf = 0.2\n")
    return [m, "--study", s], ["study.toml", "[sections.values.1]", "tf = 0.2", "h/2"], [m, s]


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


def result_file_as_input(t):
    import pyvista as pv
    g = pv.from_meshio(portal())
    g.point_data["mode_1"] = np.zeros((g.n_points, 3))
    g.field_data["framebuckle_result"] = np.array([1], np.int32)
    g.field_data["load_factors.default"] = np.array([3.0])
    p = t / "model.modes.vtu"
    g.save(p)
    return [p], ["model.modes.vtu", "framebuckle result file", "not the mesh of a linear run"], [p]


def output_name_is_folder(t):
    m = _vtu(t, portal())
    (t / "res" / "model.summary.json").mkdir(parents=True)
    return [m, "--out", t / "res"], ["model.summary.json", "taken by a folder"], [m]


def output_links_to_input(t):
    m = _vtu(t, portal())
    (t / "res").mkdir()
    (t / "res" / "model.modes_fine.vtu").symlink_to(m)
    return [m, "--out", t / "res", "--force"], ["model.modes_fine.vtu", "refusing to overwrite the input"], [m]


def output_name_too_long(t):
    m = _vtu(t, portal(), name="m" * 236 + ".vtu")
    return [m], ["modes.vtu", "file name is"], [m]


# --- plausibility rules (framebuckle.model.plausible) and the typed study schema

def torsion_constant_in_cm4(t):
    # J in cm^4 beside m: J > Iy + Iz is impossible (Saint-Venant's inequality J <= Ip)
    return [_vtu(t, portal(J=J_PORTAL * 1e8))], ["model.vtu", "'J'", "cell 0", "torsion-polar"], []


def polar_below_sum(t):
    return [_vtu(t, portal(Ip=0.5 * (IY_PORTAL + IZ_PORTAL)))], ["model.vtu", "'Ip'", "cell 0", "polar-sum"], []


def warping_constant_in_mm6(t):
    return [_vtu(t, portal(Iw=1.25e-7 * 1e18))], ["model.vtu", "'Iw'", "cell 0", "warping-depth"], []


def bar_half(t):
    return [_vtu(t, portal(bar=np.r_[np.zeros(7), 0.5]))], ["model.vtu", "'bar'", "0 or 1", "cell 7"], []


def bar_nan(t):
    return [_vtu(t, portal(bar=np.r_[np.nan, np.zeros(7)]))], ["model.vtu", "'bar'", "cell 0"], []


def duplicate_case_name(t):
    p, c, ax, r = portal_arrays()
    m = mesh_from(p, c, ax, r, **{"axial_force.default": 2 * ax})
    return [_vtu(t, m)], ["model.vtu", "'default'", "'axial_force'", "'axial_force.default'", "unique"], []


def rigid_model_compressed(t):
    # every point fixed and only bars (never sub-divided): nothing can move
    p, c, ax, r = portal_arrays()
    return [_vtu(t, mesh_from(p, c, ax, np.ones((8, 6)), bar=np.ones(8)))], \
        ["model.vtu", "every degree of freedom is restrained", "cell 0"], []


def duplicate_cell(t):
    p, c, ax, r = portal_arrays()
    return [_vtu(t, mesh_from(p, np.vstack([c, c[2, ::-1]]), np.r_[ax, ax[2]], r))], \
        ["model.vtu", "cell 8 duplicates cell 2", "duplicate-cell"], []


def line3_middle_stored_second(t):
    p, c, ax, r = portal_arrays()
    p = np.vstack([p, [[0, 0, 2.0]]])
    r = np.vstack([r, np.zeros(6)])
    props = {"E": E, "G": 8.1e10, "A": 5.38e-3, "Iy": IY_PORTAL, "Iz": IZ_PORTAL, "J": J_PORTAL}
    cd = {k: [np.full(7, v), np.full(1, v)] for k, v in props.items()}
    cd["axial_force"] = [ax[1:], ax[:1]]
    m = meshio.Mesh(p, [("line", c[1:]), ("line3", np.array([[0, 8, 4]]))], point_data={"restraint": r},
                    cell_data=cd)
    return [_vtu(t, m)], ["model.vtu", "line3 cell 7", "[0, 8, 4]", "line3-order"], []


def section_key_fraction(t):
    m = _vtu(t, portal(Iy=None, Iz=None, A=None, J=None, section_id=np.r_[np.full(4, 1.4), np.full(4, 1)]))
    s = _study(t, "[sections]\nkey = \"section_id\"\n[sections.values.1]\nA = 5e-3\nIy = 8e-5\n"
                  "Iz = 6e-6\nJ = 2e-7\n")
    return [m, "--study", s], ["model.vtu", "section_id", "whole numbers", "cell 0", "1.4"], [m, s]


def study_support_point_float(t):
    m = _vtu(t, portal())
    s = _study(t, "[[supports]]\npoints = [0.7, 1]\nfix = \"fixed\"\n")
    return [m, "--study", s], ["study.toml", "supports[0].points", "item 0", "float"], [m, s]


def study_support_point_string(t):
    m = _vtu(t, portal())
    s = _study(t, "[[supports]]\npoints = [0, \"a\"]\nfix = \"fixed\"\n")
    return [m, "--study", s], ["study.toml", "supports[0].points", "item 1", "str"], [m, s]


def study_support_point_huge(t):
    m = _vtu(t, portal())
    s = _study(t, "[[supports]]\npoints = [100000000000000000000]\nfix = \"fixed\"\n")
    return [m, "--study", s], ["study.toml", "supports[0].points", "item 0", "out of range"], [m, s]


def study_support_points_nested(t):
    m = _vtu(t, portal())
    s = _study(t, "[[supports]]\npoints = [[0, 1], [2, 3]]\nfix = \"fixed\"\n")
    return [m, "--study", s], ["study.toml", "supports[0].points", "item 0", "list"], [m, s]


def study_box_string(t):
    m = _vtu(t, portal())
    s = _study(t, "[[supports]]\nbox = { min = [\"a\", 0, 0], max = [1, 1, 1] }\nfix = \"fixed\"\n")
    return [m, "--study", s], ["study.toml", "supports[0].box.min", "item 0"], [m, s]


def study_release_cells_string(t):
    m = _vtu(t, portal())
    s = _study(t, "[[releases]]\ncells = [\"x\"]\nstart = \"pinned\"\n")
    return [m, "--study", s], ["study.toml", "releases[0].cells", "item 0", "str"], [m, s]


def study_warping_points_string(t):
    m = _vtu(t, portal(Iw=np.full(8, 1.25e-7)))
    s = _study(t, "[analysis]\nwarping = \"dof\"\n[warping]\npoints = [\"a\"]\n")
    return [m, "--study", s], ["study.toml", "warping.points", "item 0"], [m, s]


def absurd_force(t):
    p, c, ax, r = portal_arrays()
    return [_vtu(t, mesh_from(p, c, ax * 1e295, r))], ["model.vtu", "axial force", "cell 0", "1e+30"], []


def absurd_coordinates(t):
    p, c, ax, r = portal_arrays()
    return [_vtu(t, mesh_from(p * 1e-110, c, ax, r))], ["model.vtu", "cell 0", "1e-30"], []


def absurd_subdivision(t):
    m = _vtu(t, portal())
    s = _study(t, "[analysis]\nsubdivide = 100000000\n")
    return [m, "--study", s], ["study.toml", "sub-division 100000000", "smaller"], [m, s]


def polyline_cells(t):
    p = t / "poly.vtu"
    p.write_text('<?xml version="1.0"?>\n<VTKFile type="UnstructuredGrid" version="0.1" '
                 'byte_order="LittleEndian"><UnstructuredGrid><Piece NumberOfPoints="3" NumberOfCells="1">'
                 '<Points><DataArray type="Float64" NumberOfComponents="3" format="ascii">0 0 0 1 0 0 2 0 0'
                 '</DataArray></Points><Cells><DataArray type="Int64" Name="connectivity" format="ascii">'
                 '0 1 2</DataArray><DataArray type="Int64" Name="offsets" format="ascii">3</DataArray>'
                 '<DataArray type="UInt8" Name="types" format="ascii">4</DataArray></Cells></Piece>'
                 '</UnstructuredGrid></VTKFile>')
    return [p], ["poly.vtu", "no line cells", "VTK poly-line (type 4)"], [p]


def combination_unknown_case(t):
    m = _vtu(t, portal())
    s = _study(t, "[combinations]\nULS-1 = { default = 1.35, Wind = 1.5 }\n")
    return [m, "--study", s], ["study.toml", "[combinations] ULS-1", "'Wind'", "not a basic load case"], [m, s]


def combination_factor_not_a_number(t):
    m = _vtu(t, portal())
    c = t / "combos.csv"
    c.write_text("name,default\nULS-1,1.35\nULS-2,one\n")
    return [m, "--combinations", c], ["combos.csv", "row 3", "ULS-2", "'one' is not a number"], [m, c]


def combination_without_compression(t):
    m = _vtu(t, portal())
    s = _study(t, "[combinations]\nUPLIFT = { default = -1.0 }\n")
    return [m, "--study", s], ["study.toml", "UPLIFT", "no member in compression", "signs"], [m, s]


def study_unknown_solver(t):
    m = _vtu(t, portal())
    s = _study(t, '[analysis]\nsolver = "fastest"\n')
    return [m, "--study", s], ["study.toml", "[analysis] solver", "auto", "fastest"], [m, s]


def duplicate_array_name(t):
    # a case field renamed onto another: two CellData arrays of one name (meshio keeps the last)
    p, c, ax, r = portal_arrays()
    f = _vtu(t, mesh_from(p, c, ax, r, **{"axial_force.B": 2 * ax}))
    f.write_text(f.read_text().replace('Name="axial_force.B"', 'Name="axial_force"'))
    return [f], ["model.vtu", "CellData", "2 arrays named 'axial_force'", "duplicate-array"], [f]


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
             result_file_as_input, output_name_is_folder, output_links_to_input, output_name_too_long,
             study_section_dimension,
             torsion_constant_in_cm4, polar_below_sum, warping_constant_in_mm6, bar_half, bar_nan,
             duplicate_case_name, rigid_model_compressed, duplicate_cell, line3_middle_stored_second,
             section_key_fraction, study_support_point_float, study_support_point_string,
             study_support_point_huge, study_support_points_nested, study_box_string,
             study_release_cells_string, study_warping_points_string, absurd_force, absurd_coordinates,
             absurd_subdivision, polyline_cells,
             combination_unknown_case, combination_factor_not_a_number, combination_without_compression,
             study_unknown_solver, duplicate_array_name]


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
