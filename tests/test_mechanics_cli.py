"""The mechanics options through a study file and the command line."""

import json
import math
import subprocess
import sys

import numpy as np

from mech_models import E, G, column_mesh

STUDY = """
[analysis]
subdivide = 4
mesh_check = true
moment_terms = "auto"
warping = "dof"

[warping]
supports = "free"
points = []

[preload]
case = "dead"
factor = 1.0

[[releases]]
cells = [0]
start = "pinned"
"""


def test_study_with_every_mechanics_key(tmp_path):
    L, I = 4.0, 6e-6
    m = column_mesh(L=L, ncell=2, base="fixed", Iy=I, Iz=I, J=1e-4, cell_data={"Iw": 1e-9})
    del m.cell_data["axial_force"]
    pe = math.pi ** 2 * E * I / L ** 2
    m.cell_data["axial_force.dead"] = [np.full(2, -0.25 * pe)]
    m.cell_data["axial_force.live"] = [np.full(2, -0.25 * pe)]
    f = tmp_path / "col.vtu"
    m.write(f)
    st = tmp_path / "study.toml"
    st.write_text(STUDY)
    p = subprocess.run([sys.executable, "-m", "framebuckle", "solve", str(f), "--study", str(st),
                        "--out", str(tmp_path / "out")], capture_output=True, text=True)
    assert p.returncode == 0, p.stderr
    s = json.loads((tmp_path / "out" / "col.summary.json").read_text())
    live = next(c for c in s["cases"] if c["name"] == "live")
    # released base -> pinned-pinned Euler load (Timoshenko & Gere 1961, sec. 2.1); a quarter of it
    # is constant, so lambda_live * pe/4 + pe/4 = pe, lambda_live = 3
    assert abs(live["mesh_check"]["richardson"] / 3.0 - 1) < 1e-4
    assert s["settings"]["warping"] == "dof" and s["settings"]["preload"]["case"] == "dead"
    assert "caution" in p.stdout
