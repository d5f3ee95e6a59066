"""Count bad inputs that end silently (exit 0, no warning), crash, warn or are refused.

Run by hand: ``PYTHONPATH=<checkout>/plugin python benchmarks/bad_inputs_probe.py``.
Each entry is one distinct bad input of issue #13 (plausibility, study schema).
Invented models (tests/faultkit.py portal: N and m).
"""

from __future__ import annotations

import contextlib
import os
import io
import sys
import tempfile
from pathlib import Path

import meshio
import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))
from faultkit import A, IY, IZ, J, mesh_from, portal, portal_arrays  # noqa: E402

import framebuckle.cli as cli  # noqa: E402


def vtu(t, mesh, name="m.vtu"):
    p = t / name
    meshio.write(p, mesh)
    return p


def study(t, text):
    p = t / "s.toml"
    p.write_text(text)
    return p


def one(name, val, cell=2):
    a = np.full(8, val if np.ndim(val) == 0 else 0.0)
    return a


def col(field, value, cell=2, base=None):
    a = np.full(8, base, float)
    a[cell] = value
    return {field: a}


CASES = {}


def case(fn):
    CASES[fn.__name__] = fn
    return fn


@case
def J_in_cm4(t):
    return ["solve", vtu(t, portal(J=J * 1e8))]


@case
def Ip_below_Iy_plus_Iz(t):
    return ["solve", vtu(t, portal(Ip=0.5 * (IY + IZ)))]


@case
def Iw_in_mm6(t):
    return ["solve", vtu(t, portal(Iw=1.25e-7 * 1e18))]


for v in (np.nan, 0.5, -1.0, 2.0):
    def _b(t, v=v):
        return ["solve", vtu(t, portal(bar=np.r_[np.zeros(7), v]))]
    _b.__name__ = f"bar_{v}"
    case(_b)


@case
def duplicate_case_names(t):
    p, c, ax, r = portal_arrays()
    m = mesh_from(p, c, ax, r, **{"axial_force.default": ax * 2})
    return ["solve", vtu(t, m)]


@case
def time_labels_alike(t):
    p, c, ax, r = portal_arrays()
    f = t / "ts.xdmf"
    import os
    here = os.getcwd()
    os.chdir(t)
    with meshio.xdmf.TimeSeriesWriter(f.name) as w:
        w.write_points_cells(p, [("line", c)])
        for tt, s in ((1.0000001, 1.0), (1.0000002, 2.0)):
            w.write_data(tt, cell_data={"axial_force": [ax * s], "E": [np.full(8, 2.1e11)],
                                        "G": [np.full(8, 8.1e10)], "A": [np.full(8, A)],
                                        "Iy": [np.full(8, IY)], "Iz": [np.full(8, IZ)], "J": [np.full(8, J)]},
                         point_data={"restraint": r})
    os.chdir(here)
    return ["solve", f]


@case
def column_out_of_plumb(t):
    p, c, ax, r = portal_arrays()
    p[4, 1] += 5e-6
    return ["solve", vtu(t, mesh_from(p, c, ax, r))]


@case
def nothing_free_compressed(t):
    p, c, ax, r = portal_arrays()
    r[:] = 1
    return ["check", vtu(t, mesh_from(p, c, ax, r, bar=np.ones(8)))]


@case
def storey_RM_zero(t):
    return ["check", vtu(t, portal()), "--study",
            study(t, "[[storeys]]\nP_story=8e5\nH=1e4\nheight=4.0\ndrift=0.01\nR_M=0.0\n")]


@case
def storey_RM_negative(t):
    return ["check", vtu(t, portal()), "--study",
            study(t, "[[storeys]]\nP_story=8e5\nH=1e4\nheight=4.0\ndrift=0.01\nR_M=-0.5\n")]


@case
def storey_Pmf_above_P(t):
    return ["check", vtu(t, portal()), "--study",
            study(t, "[[storeys]]\nP_story=8e5\nP_mf=2e7\nH=1e4\nheight=4.0\ndrift=0.01\n")]


@case
def storey_case_misspelt(t):
    return ["check", vtu(t, portal()), "--study",
            study(t, "[[storeys]]\ncase='defualt'\nP_story=8e5\nP_e_story=9e5\n")]


@case
def imperfection_fy_MPa(t):
    return ["check", vtu(t, portal()), "--study",
            study(t, "[imperfection]\nW=6.28e-4\nfy=355.0\n")]


@case
def imperfection_amplitude_mm(t):
    return ["check", vtu(t, portal()), "--study", study(t, "[imperfection]\namplitude=20.0\n")]


@case
def duplicate_cells(t):
    p, c, ax, r = portal_arrays()
    return ["solve", vtu(t, mesh_from(p, np.vstack([c, c[:1]]), np.r_[ax, ax[0]], r))]


@case
def overlapping_cells(t):
    p, c, ax, r = portal_arrays()
    p = np.vstack([p, [[0, 0, 2.0]]])
    r = np.vstack([r, np.zeros(6)])
    c = np.vstack([c, [[0, 8]]])
    return ["solve", vtu(t, mesh_from(p, c, np.r_[ax, -1e5], r))]


@case
def line3_middle_second(t):
    p, c, ax, r = portal_arrays()
    p = np.vstack([p, [[0, 0, 2.0]]])
    r = np.vstack([r, np.zeros(6)])
    m = meshio.Mesh(p, [("line", c[1:]), ("line3", np.array([[0, 8, 4]]))], point_data={"restraint": r},
                    cell_data={k: [np.full(7, v), np.full(1, v)] for k, v in
                               {"E": 2.1e11, "G": 8.1e10, "A": A, "Iy": IY, "Iz": IZ, "J": J}.items()}
                    | {"axial_force": [ax[1:], ax[:1]]})
    return ["solve", vtu(t, m)]


@case
def section_key_not_integer(t):
    m = vtu(t, portal(Iy=None, Iz=None, A=None, J=None, section_id=np.r_[np.full(4, 1.4), np.full(4, 2)]))
    s = study(t, "[sections]\nkey='section_id'\n[sections.values.1]\nA=5e-3\nIy=8e-5\nIz=6e-6\nJ=2e-7\n"
                 "[sections.values.2]\nA=5e-3\nIy=8e-5\nIz=6e-6\nJ=2e-7\n")
    return ["solve", m, "--study", s]


@case
def support_point_float(t):
    p, c, ax, r = portal_arrays()
    return ["solve", vtu(t, mesh_from(p, c, ax, np.zeros((8, 6)))), "--study",
            study(t, "[[supports]]\npoints=[0.7, 1, 2, 3]\nfix='fixed'\n")]


for key, text in {
    "supports_points_str": "[[supports]]\npoints=['a']\nfix='fixed'\n",
    "supports_points_huge": "[[supports]]\npoints=[0, 1, 2, 3, 100000000000000000000]\nfix='fixed'\n",
    "supports_points_nested": "[[supports]]\npoints=[[0, 1], [2, 3]]\nfix='fixed'\n",
    "supports_fix_str_items": "[[supports]]\npoints=[0, 1, 2, 3]\nfix=['a','b','c','d','e','f']\n",
    "supports_box_str": "[[supports]]\nbox={min=['a',0,0], max=[1,1,1]}\nfix='fixed'\n",
    "releases_cells_str": "[[releases]]\ncells=['x']\nstart='pinned'\n",
    "releases_cells_huge": "[[releases]]\ncells=[100000000000000000000]\nstart='pinned'\n",
    "releases_start_nested": "[[releases]]\ncells=[4]\nstart=[[1],[0],[0],[0],[0],[0]]\n",
    "warping_points_str": "[analysis]\nwarping='dof'\n[warping]\npoints=['a']\n",
    "analysis_cases_int": "[analysis]\ncases=[1]\n",
    "checks_codes_int": "[checks]\ncodes=[1]\n",
}.items():
    def _s(t, text=text, cmd="check" if "checks" in key else "solve"):
        m = portal(Iw=np.full(8, 1.25e-7)) if "warping" in key else portal()
        return [cmd, vtu(t, m), "--study", study(t, text)]
    _s.__name__ = key
    case(_s)


@case
def forces_1e300(t):
    p, c, ax, r = portal_arrays()
    return ["solve", vtu(t, mesh_from(p, c, ax * 1e295, r))]


@case
def coordinates_1e_110(t):
    p, c, ax, r = portal_arrays()
    return ["solve", vtu(t, mesh_from(p * 1e-110, c, ax, r))]


@case
def subdivide_absurd(t):
    if os.environ.get("PROBE_SKIP_MEMORY"):      # before the fix this exhausts the memory
        raise MemoryError("skipped: exhausts the memory")
    return ["solve", vtu(t, portal()), "--study", study(t, "[analysis]\nsubdivide=100000000\n")]


@case
def polyline_cells(t):
    p = t / "poly.vtu"
    p.write_text('<?xml version="1.0"?>\n<VTKFile type="UnstructuredGrid" version="0.1" byte_order="LittleEndian">'
                 '<UnstructuredGrid><Piece NumberOfPoints="3" NumberOfCells="1"><Points>'
                 '<DataArray type="Float64" NumberOfComponents="3" format="ascii">0 0 0 1 0 0 2 0 0</DataArray>'
                 '</Points><Cells><DataArray type="Int64" Name="connectivity" format="ascii">0 1 2</DataArray>'
                 '<DataArray type="Int64" Name="offsets" format="ascii">3</DataArray>'
                 '<DataArray type="UInt8" Name="types" format="ascii">4</DataArray></Cells>'
                 '</Piece></UnstructuredGrid></VTKFile>')
    return ["solve", p]


@case
def E_outlier_cells_mm(t):
    e = np.full(8, 2.1e11)
    e[5] = 2.1e5
    return ["solve", vtu(t, portal(E=e))]


@case
def A_outlier_cell(t):
    a = np.full(8, A)
    a[6] = A * 1e6
    return ["solve", vtu(t, portal(A=a))]


@case
def orientation_huge_perpendicular(t):
    ori = np.tile([0.0, 0.0, 1e300], (8, 1))
    ori[:4] = [1e300, 0, 0]
    return ["solve", vtu(t, portal(orientation=ori))]


@case
def unused_point_far_away(t):
    p, c, ax, r = portal_arrays()
    p = np.vstack([p, [[1e9, 0, 0]], [[0, 0, 4 + 1e-1]]])
    r = np.vstack([r, np.zeros((2, 6))])
    c = np.vstack([c, [[4, 9]]])      # a 0.1 m cell: below 1e-9 * 1e9 = 1 m tolerance
    return ["solve", vtu(t, mesh_from(p, c, np.r_[ax, -1.0], r))]


def _summary(out):
    import json
    return json.loads(next(Path(out).glob("*.summary.json")).read_text())


def _alpha(out):
    return _summary(out)["cases"][0]["load_factors"][0]


def _reference(t, mesh):
    """alpha_cr of a reference model through the same CLI."""
    p = vtu(t, mesh, "ref.vtu")
    with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(io.StringIO()):
        cli.main(["solve", str(p), "--out", str(t / "ref_out")])
    return _alpha(t / "ref_out")


def _ok_time_labels(t, out):
    names = [c["name"] for c in _summary(out)["cases"]]
    return len(set(names)) == 2


def _ok_plumb(t, out):
    return abs(_alpha(out) / _reference(t, portal()) - 1) < 1e-4


def _ok_orientation(t, out):
    ori = np.tile([0.0, 0.0, 1.0], (8, 1))
    ori[:4] = [1, 0, 0]
    return abs(_alpha(out) / _reference(t, portal(orientation=ori)) - 1) < 1e-9


#: bad inputs whose right outcome is a correct result (checked against a reference model)
CORRECT_RESULT = {"time_labels_alike": _ok_time_labels, "column_out_of_plumb": _ok_plumb,
                  "orientation_huge_perpendicular": _ok_orientation}


def run(name, fn, base):
    t = base / name
    t.mkdir()
    try:
        args = [str(a) for a in fn(t)]
    except MemoryError as e:
        return "crash", "memory", str(e)
    args = [args[0], args[1], "--out", str(t / "out"), *args[2:]]
    import subprocess
    r = subprocess.run([sys.executable, "-m", "framebuckle", *args], capture_output=True, text=True,
                       timeout=600)
    rc = r.returncode
    if "Traceback" in r.stderr:
        lines = r.stderr.strip().splitlines()
        rc = f"crash {lines[-1][:80]}"
    err = io.StringIO(r.stderr)
    e = err.getvalue()
    if isinstance(rc, str):
        kind = "crash"
    elif rc == 2:
        kind = "refused"
    elif "warning" in e.lower() or rc not in (0, 1):
        kind = "warned"
    else:
        kind = "silent"
    if kind == "silent" and name in CORRECT_RESULT:
        try:
            kind = "correct" if CORRECT_RESULT[name](t, t / "out") else "silent"
        except Exception:  # noqa: BLE001 - a failed comparison counts as silent
            kind = "silent"
    return kind, rc, (e.strip().splitlines() or [""])[-1][:160]


if __name__ == "__main__":
    import warnings
    warnings.simplefilter("ignore")
    counts = {}
    with tempfile.TemporaryDirectory() as d:
        for name, fn in CASES.items():
            kind, rc, msg = run(name, fn, Path(d))
            counts[kind] = counts.get(kind, 0) + 1
            print(f"{kind:8s} {name:32s} rc={rc} {msg}")
    print(f"{len(CASES)} bad inputs:", counts)
