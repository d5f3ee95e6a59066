"""Load combinations, the envelope over factor ranges and its convex-hull bound.

References: convexity of the largest eigenvalue of a symmetric pencil as a maximum of
Rayleigh quotients linear in the factors (B. N. Parlett, The Symmetric Eigenvalue Problem,
1980, ch. 10 / 15, Courant-Fischer); a convex function on a polytope attains its maximum at
an extreme point (R. T. Rockafellar, Convex Analysis, 1970, Thm 32.2); superposition of a
linear static solution (common practice).  The small frame is invented (combomodels.py).
"""

from __future__ import annotations

import json

import numpy as np
import pytest

import combomodels as cm
import framebuckle as fb
from framebuckle.model import envelope as envmod
from framebuckle.io.combinations import Combination, build
from framebuckle.io.read import read_input
from framebuckle.solver.static import solve_static
from framebuckle.io.study import study_from_dict
from faultkit import run_cli

ENV = {"G": [1.0, 1.35], "Q": [0.0, 1.5], "W_x": [-1.5, 1.5], "W_y": [-1.5, 1.5],
       "exclusive": [["W_x", "W_y"]], "screen": False}


@pytest.fixture(scope="module")
def mesh():
    return cm.mesh(with_displacements=True)


def test_factored_sums_equal_the_static_solution_of_the_combined_loads(mesh):
    # superposition (linear static solution, common practice): the combination's axial forces
    # and end moments equal those of one static solve under the factored loads
    f = {"G": 1.35, "Q": 1.05, "W_x": -1.5}
    loads = cm.loads()
    P = sum(v * loads[k] for k, v in f.items())
    comb = solve_static(cm.frame(), P)
    m2 = cm.mesh(with_displacements=True)
    m2.cell_data["axial_force.C"] = [np.array(comb.axial, float)]
    m2.point_data["displacement.C"] = np.ascontiguousarray(comb.displacements[:, :3])
    m2.point_data["rotation.C"] = np.ascontiguousarray(comb.displacements[:, 3:])
    im = read_input(m2, study_from_dict({"combinations": {"ULS": f}}))
    byname = {c.name: c for c in im.cases}
    scale = np.abs(comb.axial).max()
    assert np.allclose(byname["ULS"].axial, byname["C"].axial, atol=1e-9 * scale, rtol=0)
    Mu, Mc = byname["ULS"].extra["moments"], byname["C"].extra["moments"]
    assert np.allclose(Mu, Mc, atol=1e-9 * np.abs(Mc).max(), rtol=0)
    assert byname["ULS"].extra["combination"]["factors"] == f


def test_factored_geometric_stiffness_equals_direct_assembly(mesh):
    st = {"combinations": {"ULS": {"G": 1.35, "Q": 1.5, "W_y": -0.9}}, "analysis": {"moment_terms": True}}
    r = fb.solve(mesh, st, modes=1, mesh_check=False)
    p = r.pencil
    case = next(c for c in r.input.cases if c.name == "ULS")
    direct = p.gff._one(case)                 # assembled from the combined forces, element by element
    summed = p.gff(case)                      # sum f_i Kg_i of the basic cases
    d = (direct - summed).tocsr()
    assert abs(d).max() <= 1e-10 * abs(direct).max()


def test_vertex_minimum_is_never_beaten_by_a_grid_of_factors(mesh):
    r = fb.solve(mesh, {"envelope": ENV}, modes=1, mesh_check=False)
    env = r.envelope
    a_min = env["governing"]["alpha_cr"]
    assert env["vertices"] == 2 * 2 * 2 * 2          # two boxes of 2^3 vertices (W_x or W_y)
    # every vertex's alpha_cr against scipy's dense generalized eigensolver (independent of the pipeline's)
    import scipy.linalg as sla
    fac, Kff, Gff = r.pencil(env["governing"]["case"])
    mu = sla.eigh(-Gff.toarray(), Kff.toarray(), eigvals_only=True)
    assert a_min == pytest.approx(1.0 / mu.max(), rel=1e-8)
    grid = {}
    i = 0
    for g in (1.0, 1.175, 1.35):
        for q in (0.0, 0.5, 1.0, 1.5):
            for w in (-1.5, -0.75, 0.0, 0.75, 1.5):
                for wk in ("W_x", "W_y"):
                    grid[f"g{i}"] = {"G": g, "Q": q, wk: w}
                    i += 1
    rg = fb.solve(mesh, {"combinations": grid}, modes=1, mesh_check=False)
    alphas = [c.alpha_cr for c in rg.cases if c.name in grid]
    assert len(alphas) == len(grid)
    assert min(alphas) >= a_min * (1 - 1e-9)
    # the grid contains the governing vertex: the minimum is reached, not only bounded
    assert min(alphas) == pytest.approx(a_min, rel=1e-8)


def test_hull_bound_never_exceeds_the_solved_value(mesh):
    rng = np.random.default_rng(14)
    V = envmod.vertices(envmod.parse(ENV, list(cm.CASES), "<t>"), list(cm.CASES))
    combos = {}
    for j in range(12):
        box = V[:8] if j % 2 else V[8:]           # a point inside one box (W_x or W_y)
        t = rng.dirichlet(np.ones(len(box)))
        f = t @ box
        combos[f"r{j}"] = dict(zip(cm.CASES, map(float, f)))
    r = fb.solve(mesh, {"envelope": ENV, "combinations": combos}, modes=1, mesh_check=False)
    listed = {e["name"]: e for e in r.envelope["listed"]}
    for name in combos:
        e = listed[name]
        assert e["inside_envelope"] and not e["screened"]
        assert e["alpha_bound"] is not None
        assert e["alpha_bound"] <= e["alpha_cr"] * (1 + 1e-9), name
        assert e["alpha_bound"] >= r.envelope["governing"]["alpha_cr"] * (1 - 1e-9)


def test_screening_skips_only_combinations_certified_above_the_limit(mesh):
    combos = {"mild": {"G": 1.0, "W_x": 0.3}, "heavy": {"G": 1.35, "Q": 1.5}, "out": {"G": 2.0}}
    env = dict(ENV, screen=True, limit=8.0)
    r = fb.solve(mesh, {"envelope": env, "combinations": combos}, modes=1, mesh_check=False)
    listed = {e["name"]: e for e in r.envelope["listed"]}
    solved = {c.name for c in r.cases}
    assert listed["mild"]["screened"] and "mild" not in solved
    assert listed["mild"]["alpha_bound"] >= 8.0
    assert not listed["heavy"]["screened"] and "heavy" in solved
    assert listed["out"]["alpha_bound"] is None and "out" in solved      # outside the hull
    # the certified bound really is below the solved value (solved separately)
    alone = fb.solve(mesh, {"combinations": {"mild": combos["mild"]}}, modes=1, mesh_check=False)
    assert listed["mild"]["alpha_bound"] <= alone.case("mild").alpha_cr * (1 + 1e-9)


def test_hull_bound_arrays():
    F = np.array([[0.0, 0.0], [1.0, 0.0], [0.0, 1.0], [1.0, 1.0]])
    g = np.array([0.0, 0.5, 0.25, 1.0])            # g of an invented convex function g = f1/2 + f2/4 + ...
    b, t = envmod.hull_bound(F, g, np.array([0.5, 0.5]))
    assert t.sum() == pytest.approx(1.0) and (t >= 0).all()
    assert 1.0 / b == pytest.approx(0.375)          # min over weights: (0.5 + 0.25) / 2 via F1, F2
    assert envmod.hull_bound(F, g, np.array([2.0, 0.0])) == (None, None)
    assert envmod.hull_bound(F[:1], g[:1], np.zeros(2))[0] == np.inf     # a point that does not buckle


def test_vertex_enumeration_counts_and_refusal():
    names = [f"A{i}" for i in range(12)]
    env = envmod.parse({n: [0.0, 1.0] for n in names[:3]} | {"A3": [1.0, 1.0]}, names, "<t>")
    V = envmod.vertices(env, names)
    assert V.shape == (8, 12) and (V[:, 3] == 1.0).all() and (V[:, 4:] == 0).all()
    with pytest.raises(fb.InputError, match="at most 10"):
        envmod.parse({n: [0.0, 1.0] for n in names[:11]}, names, "<t>")
    with pytest.raises(fb.InputError, match="not a basic load case"):
        envmod.parse({"X": [0.0, 1.0]}, names, "<t>")


def test_no_compression_vertex_counts_as_not_buckling(mesh):
    # W_x alone at the box's G = 0 vertex: some vertices have little compression; with G in
    # [-1, 0] (uplift-like) a vertex puts every column in tension: g = max(mu, 0) = 0 there
    r = fb.solve(mesh, {"envelope": {"G": [-1.0, 1.0], "screen": False}}, modes=1, mesh_check=False)
    st = {c.name: c for c in r.cases}
    assert st["envelope-001"].status in ("no_compression", "no_positive")
    assert r.envelope["governing"]["case"] == "envelope-002"
    assert r.envelope["runner_up"]["alpha_cr"] is None


def test_cli_combinations_from_study_and_csv(tmp_path, mesh):
    import meshio
    m = tmp_path / "frame.vtu"
    meshio.write(m, mesh)
    (tmp_path / "combos.csv").write_text("name,G,Q,W_x,W_y\nULS-A,1.35,1.5,,\nULS-B,1.35,1.05,1.5,\n")
    (tmp_path / "s.toml").write_text('[combinations]\nSLS = { G = 1.0, Q = 1.0 }\n'
                                     '[analysis]\ncases = ["SLS", "ULS-A", "ULS-B"]\n'
                                     '[envelope]\nG = [1.0, 1.35]\nQ = [0.0, 1.5]\n')
    r = run_cli(m, "--study", tmp_path / "s.toml", "--combinations", tmp_path / "combos.csv",
                "--out", tmp_path / "out", "--modes", "1")
    assert r.returncode == 0, r.stderr
    assert "envelope: governing envelope-004 (G=1.35, Q=1.5)" in r.stdout
    s = json.loads((tmp_path / "out" / "frame.summary.json").read_text())
    names = [c["name"] for c in s["cases"]]
    assert names == ["envelope-001", "envelope-002", "envelope-003", "envelope-004", "SLS", "ULS-A", "ULS-B"]
    assert next(c for c in s["cases"] if c["name"] == "ULS-B")["factors"] == {"G": 1.35, "Q": 1.05, "W_x": 1.5}
    r = run_cli("check", m, "--study", tmp_path / "s.toml", "--combinations", tmp_path / "combos.csv",
                "--out", tmp_path / "chk", "--modes", "1")
    assert r.returncode in (0, 1), r.stderr
    import csv
    rows = list(csv.DictReader((tmp_path / "chk" / "frame.members.csv").open()))
    assert {row["factors"] for row in rows if row["case"] == "ULS-A"} == {"G=1.35;Q=1.5"}
