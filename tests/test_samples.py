"""The shipped sample meshes: reproducible from the generator and in static equilibrium."""

import importlib.util
import sys
from pathlib import Path

import meshio
import numpy as np
import pytest

from framebuckle.mechanics.assemble import Assembler
from framebuckle.mechanics.elements import element_dofs
from framebuckle.io.meshfile import read_mesh
from framebuckle.solver.static import member_forces

ROOT = Path(__file__).resolve().parents[1]
SAMPLES = ROOT / "sample_meshes"


def load_generator():
    spec = importlib.util.spec_from_file_location("fb_sample_generator", SAMPLES / "generate.py")
    mod = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = mod          # dataclasses look their module up while defining
    spec.loader.exec_module(mod)
    return mod


@pytest.fixture(scope="module")
def gen():
    return load_generator()


@pytest.fixture(scope="module")
def scenarios(gen):
    return {sc.name: sc for sc in gen.build_scenarios()}


def axial_forces(path: Path) -> dict:
    """case -> axial force per line cell, from a VTU/MSH (named fields) or XDMF time series."""
    mesh, steps = read_mesh(path)
    line = [i for i, b in enumerate(mesh.cells) if b.type == "line"]
    if steps:
        return {f"step{k}": np.asarray(cd["axial_force"][line[0]]).ravel() for k, (_t, _pd, cd) in enumerate(steps)}
    return {k.split(".", 1)[1]: np.asarray(v[line[0]]).ravel()
            for k, v in mesh.cell_data.items() if k.startswith("axial_force.")}


SAMPLE_FILES = ["workshop_portal.vtu", "workshop_portal.xdmf", "footbridge.vtu", "footbridge.msh",
                "lattice_mast.vtu", "storage_building.vtu"]


def test_generator_reproduces_committed_axial_forces(gen, tmp_path):
    # deterministic generator: a fresh run gives the committed forces (common practice)
    assert gen.main(["--out", str(tmp_path)]) == 0
    for name in SAMPLE_FILES:
        old, new = axial_forces(SAMPLES / name), axial_forces(tmp_path / name)
        assert list(old) == list(new), name
        assert len(old) >= 2, name
        for case in old:
            scale = np.abs(new[case]).max()
            np.testing.assert_allclose(old[case], new[case], rtol=1e-9, atol=1e-9 * scale,
                                       err_msg=f"{name} {case}")
    for name in ("footbridge.study.toml", "storage_building.study.toml", "storage_building.combinations.csv"):
        assert (tmp_path / name).read_text() == (SAMPLES / name).read_text(), name


def test_sample_files_are_small():
    # the samples stay small enough to solve in about a second (common practice)
    for name in SAMPLE_FILES + ["workshop_portal.h5"]:
        assert (SAMPLES / name).stat().st_size < 1_000_000, name
    for name in ("workshop_portal.vtu", "footbridge.vtu", "lattice_mast.vtu", "storage_building.vtu"):
        mesh = meshio.read(SAMPLES / name)
        assert 50 <= sum(len(b.data) for b in mesh.cells) <= 400


def committed_state(sc, path: Path):
    """The committed file's geometry, sections, restraint and static displacements per case."""
    mesh = meshio.read(path)
    assert mesh.cells[0].type == "line"
    np.testing.assert_array_equal(mesh.points, sc.nodes)
    np.testing.assert_array_equal(mesh.cells[0].data, sc.cells)
    for k in ("E", "G", "A", "Iy", "Iz", "J"):
        np.testing.assert_array_equal(mesh.cell_data[k][0], sc.props[k])
    np.testing.assert_array_equal(mesh.cell_data["bar"][0].astype(bool), sc.props["bar"])
    np.testing.assert_array_equal(mesh.point_data["restraint"].astype(bool), sc.restraint)
    out = {}
    for case in sc.cases:
        u = np.hstack([mesh.point_data[f"displacement.{case}"], mesh.point_data[f"rotation.{case}"]])
        out[case] = (u, np.asarray(mesh.cell_data[f"axial_force.{case}"][0]).ravel())
    return out


@pytest.mark.parametrize("name", ["workshop_portal", "footbridge", "lattice_mast", "storage_building"])
def test_committed_forces_are_in_equilibrium(scenarios, name):
    # Joint equilibrium of the member end forces recovered from the committed displacements
    # with the applied loads, and overall equilibrium of reactions and loads (force and moment);
    # the committed axial forces are those end forces' axial parts (common practice of matrix
    # structural analysis: equilibrium of every joint and of the whole structure).
    sc = scenarios[name]
    fr = sc.frame()
    asm = Assembler.build(fr)
    dofs = element_dofs(fr)
    L = fr.lengths()
    mid = 0.5 * (fr.nodes[fr.elements[:, 0]] + fr.nodes[fr.elements[:, 1]])
    for case, (u, axial) in committed_state(sc, SAMPLES / f"{name}.vtu").items():
        P, q = sc.cases[case]
        forces = member_forces(fr, u, q, asm)
        scale = np.abs(axial).max()
        np.testing.assert_allclose(axial, forces.N, rtol=1e-9, atol=1e-9 * scale, err_msg=case)
        # joint equilibrium: member end forces (global) + applied nodal loads balance at every
        # free DOF; at restrained DOFs the imbalance is the reaction
        fg = np.einsum("eji,ej->ei", asm.T, forces.local)
        joint = np.bincount(dofs.ravel(), weights=fg.ravel(), minlength=fr.n_dofs).reshape(-1, 6)
        R = joint - P
        free = ~fr.restraint
        assert np.abs(R[free]).max() <= 1e-6 * scale, case
        # overall: reactions + nodal loads + member loads = 0
        W = q * L[:, None]
        total = P[:, :3].sum(0) + W.sum(0)
        np.testing.assert_allclose(R[:, :3].sum(0), -total, rtol=1e-9, atol=1e-6 * scale)
        m_app = np.cross(fr.nodes, P[:, :3]).sum(0) + P[:, 3:].sum(0) + np.cross(mid, W).sum(0)
        m_rea = np.cross(fr.nodes, R[:, :3]).sum(0) + R[:, 3:].sum(0)
        np.testing.assert_allclose(m_rea, -m_app, rtol=1e-9, atol=1e-6 * scale * np.ptp(fr.nodes))
        if name == "storage_building" and case.startswith("W_"):
            # wind alone: horizontal loads only, carried by horizontal reactions
            axis = {"W_x": 0, "W_y": 1}[case]
            assert total[2] == 0 and total[axis] > 0 and total[1 - axis] == 0
            assert R[:, axis].sum() == pytest.approx(-total[axis], rel=1e-9)
        else:
            # gravity loads push down: the vertical reactions carry the whole weight
            assert total[2] < 0 and R[:, 2].sum() == pytest.approx(-total[2], rel=1e-9)
        # something is in compression, or there would be nothing to buckle
        assert axial.min() < -0.01 * scale


def test_sample_physics_is_what_the_scenarios_say(scenarios):
    # plain checks of the load paths (common practice): the footbridge's top chords are in
    # compression and bottom chords in tension under crowd load; the mast's windward legs are
    # in tension and leeward legs in compression under face wind; portal columns compress
    # under gravity
    import meshio as m
    fb = scenarios["footbridge"]
    mesh = m.read(SAMPLES / "footbridge.vtu")
    N = mesh.cell_data["axial_force.crowd_full"][0]
    assert (N[fb.groups == "top_chord"] < 0).all()
    assert (N[fb.groups == "bottom_chord"] > 0).all()
    mast = scenarios["lattice_mast"]
    mesh = m.read(SAMPLES / "lattice_mast.vtu")
    N = mesh.cell_data["axial_force.wind_face"][0]
    legs = np.flatnonzero(mast.groups == "leg")
    x = mast.nodes[mast.cells[legs, 0], 0]
    assert (N[legs[x > 0]] < 0).all() and (N[legs[x < 0]] > 0).any()
    portal = scenarios["workshop_portal"]
    mesh = m.read(SAMPLES / "workshop_portal.vtu")
    N = mesh.cell_data["axial_force.gravity"][0]
    assert (N[portal.groups == "column"] < 0).all()


def test_storage_building_combinations_and_envelope_through_the_cli(tmp_path):
    # The shipped combination sample: basic cases G, Q, W_x, W_y, a CSV of EN 1990-style
    # combinations and a study file with factor ranges, run through `check` as the README's
    # quick path does.  Vertex theorem: 1/alpha_cr is convex in the factors (Kg linear in them,
    # K fixed; B. N. Parlett, The Symmetric Eigenvalue Problem, 1980, ch. 10, Courant-Fischer),
    # and a convex function on a polytope is largest at an extreme point (R. T. Rockafellar,
    # Convex Analysis, 1970, Thm 32.2): the governing vertex's alpha_cr is <= that of every
    # listed combination inside the factor box, and the convex-hull bound never exceeds the
    # solved value (Jensen's inequality, the same convexity).
    import csv
    import json
    from faultkit import run_cli
    table = list(csv.DictReader((SAMPLES / "storage_building.combinations.csv").open()))
    assert len(table) >= 5 and set(table[0]) == {"name", "G", "Q", "W_x", "W_y"}
    r = run_cli("check", SAMPLES / "storage_building.vtu", "--study", SAMPLES / "storage_building.study.toml",
                "--combinations", SAMPLES / "storage_building.combinations.csv", "--out", tmp_path,
                "--modes", "1")
    assert r.returncode in (0, 1), r.stderr
    assert "envelope: governing envelope-" in r.stdout and "Traceback" not in r.stderr
    s = json.loads((tmp_path / "storage_building.summary.json").read_text())
    cases = {c["name"]: c for c in s["cases"]}
    env = s["envelope"]
    # the factors of every listed combination are recorded as the CSV gives them
    for row in table:
        want = {k: float(v) for k, v in row.items() if k != "name" and v.strip()}
        assert cases[row["name"]]["factors"] == want, row["name"]
    # the vertices: every corner of G x Q x (W_x or W_y) is solved, the governing is the lowest
    vert = {n: c for n, c in cases.items() if n.startswith("envelope-")}
    assert len(vert) == env["vertices"] == 2 * 2 * (2 + 2)
    lo, hi = {k: v[0] for k, v in env["ranges"].items()}, {k: v[1] for k, v in env["ranges"].items()}
    for c in vert.values():
        assert sum(c["factors"][k] != 0 for k in ("W_x", "W_y")) == 1
        assert all(c["factors"][k] in (lo[k], hi[k]) for k in ("G", "Q"))
    gov = env["governing"]["alpha_cr"]
    assert gov == min(c["alpha_cr"] for c in vert.values())
    # vertex theorem and hull bound against the solved listed combinations
    listed = {e["name"]: e for e in env["listed"]}
    assert set(listed) == {row["name"] for row in table}
    for name, e in listed.items():
        f = e["factors"]
        inside = all(lo[k] <= f.get(k, 0.0) <= hi[k] for k in lo) and \
            sum(f.get(k, 0.0) != 0 for k in ("W_x", "W_y")) <= 1
        assert e["inside_envelope"] == inside, name
        a = cases[name]["alpha_cr"]
        assert a is not None and a == e["alpha_cr"], name
        if inside:
            assert gov <= a * (1 + 1e-6), name
        if e["alpha_bound"] is not None:
            assert e["alpha_bound"] <= a * (1 + 1e-6), name
    assert any(e["inside_envelope"] for e in listed.values())
    assert all(e["alpha_bound"] is not None for e in listed.values() if e["inside_envelope"])
