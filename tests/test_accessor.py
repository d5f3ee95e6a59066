"""The ``grid.buckle`` PyVista accessor: solve a grid in memory, warp it by a mode."""

import math
import os
import subprocess
import sys
import tomllib
from pathlib import Path

import numpy as np
import pytest
import pyvista as pv

import framebuckle as fb
import framebuckle.pictures.accessor  # noqa: F401  (registers grid.buckle explicitly)

import picture_models as pm

ROOT = Path(__file__).resolve().parents[1]


def test_accessor_solves_a_pyvista_grid():
    grid = pv.from_meshio(pm.pinned_column(5.0, cells=4))
    lam = grid.buckle.load_factors["default"]
    # Euler load P = pi^2 E I / L^2 (Timoshenko & Gere 1961, Theory of Elastic Stability, sec. 2.1)
    pe = math.pi ** 2 * 2.1e11 * 8e-6 / 5.0 ** 2
    assert abs(lam[0] * 1000.0 / pe - 1) < 1e-3
    assert grid.buckle.alpha_cr == {"default": lam[0]}
    # the same numbers as the file-based pipeline
    ref = fb.solve(pm.pinned_column(5.0, cells=4)).load_factors["default"]
    np.testing.assert_allclose(lam, ref, rtol=1e-12)


def test_warped_grid_of_a_mode():
    grid = pv.from_meshio(pm.portal_3d())
    points = np.array(grid.points)
    res = grid.buckle.solve(modes=2)
    w = grid.buckle.warp(mode=2, case="wind", scale=0.5)
    assert isinstance(w, pv.UnstructuredGrid) and w.n_cells == grid.n_cells
    mode = res.input_mode("wind", 1)[:, :3]
    np.testing.assert_allclose(w.points, points + 0.5 * mode, atol=1e-12)
    np.testing.assert_array_equal(grid.points, points)            # the grid itself is not moved
    assert float(w.field_data["load_factor"][0]) == res.case("wind").load_factors[1]
    np.testing.assert_allclose(w.point_data["mode"], mode)
    auto = grid.buckle.warp(mode=1, case="gravity")
    # default scale: the normalised mode (largest translation 1) x 10 % of the 6 m extent
    np.testing.assert_allclose(auto.points - points, 0.6 * res.input_mode("gravity", 0)[:, :3], atol=1e-12)
    curve = grid.buckle.curve(mode=1, case="gravity")
    assert curve.n_cells == res.fine.n_elements and "|u|" in curve.point_data
    with pytest.raises(fb.InputError, match="mode 3 does not exist"):
        grid.buckle.warp(mode=3, case="wind")


def test_bad_grid_is_named():
    grid = pv.from_meshio(pm.pinned_column())
    del grid.cell_data["E"]
    with pytest.raises(fb.InputError, match="missing section or material field"):
        grid.buckle.solve()


def test_entry_point_loads_the_accessor_lazily(tmp_path):
    # pyproject declares the entry point; a distribution with that declaration on the path
    # makes PyVista import framebuckle.pictures.accessor on first use of grid.buckle, not before
    eps = tomllib.loads((ROOT / "pyproject.toml").read_text())["project"]["entry-points"]["pyvista.accessors"]
    assert eps == {"buckle": "framebuckle.pictures.accessor"}
    dist = tmp_path / "framebuckle_probe-0.0.dist-info"
    dist.mkdir()
    (dist / "METADATA").write_text("Metadata-Version: 2.1\nName: framebuckle-probe\nVersion: 0.0\n")
    (dist / "entry_points.txt").write_text("[pyvista.accessors]\nbuckle = framebuckle.pictures.accessor\n")
    code = ("import sys, pyvista as pv, meshio, numpy as np\n"
            "sys.path.insert(0, %r)\n"
            "import picture_models as pm\n"
            "g = pv.from_meshio(pm.pinned_column())\n"
            "assert 'framebuckle.pictures.accessor' not in sys.modules\n"
            "print(float(g.buckle.load_factors['default'][0]))\n"
            "assert 'framebuckle.pictures.accessor' in sys.modules\n") % str(ROOT / "tests")
    env = dict(os.environ)
    env["PYTHONPATH"] = os.pathsep.join([str(tmp_path), env["PYTHONPATH"]])
    r = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, text=True, timeout=120)
    assert r.returncode == 0, r.stderr[-2000:]
    pe = math.pi ** 2 * 2.1e11 * 8e-6 / 5.0 ** 2    # Timoshenko & Gere 1961, sec. 2.1
    assert abs(float(r.stdout.split()[-1]) * 1000.0 / pe - 1) < 1e-3
