"""Constant preload: (K + Kg(N_const) + lambda Kg(N_var)) phi = 0 (framebuckle.solver.preload).

Reference: Timoshenko & Gere 1961 (Euler load); the preload expectation is derived in the test (common practice).
"""

import math
import subprocess
import sys

import numpy as np
import pytest

import framebuckle as fb
from framebuckle.errors import InputError, ModelError
from mech_models import E, column_mesh

L, I = 4.0, 6e-6
PE = math.pi ** 2 * E * I / L ** 2          # Timoshenko & Gere 1961, Theory of Elastic Stability, sec. 2.1


def _mesh(const, var, full):
    m = column_mesh(L=L, ncell=2, Iy=I, Iz=I)
    del m.cell_data["axial_force"]
    for name, p in (("const", const), ("var", var), ("full", full)):
        m.cell_data[f"axial_force.{name}"] = [np.full(2, p)]
    return m


def test_half_constant_gives_two_lambda_minus_one():
    # Derivation: the case "full" carries P; "const" and "var" carry P/2 each.  The buckling load
    # P_cr of the column is reached when lambda * P = P_cr for "full" alone, and when
    # P/2 + lambda_var * P/2 = P_cr with "const" held constant, so lambda_var = 2 lambda - 1.
    P = -0.4 * PE
    lam = fb.solve(_mesh(P / 2, P / 2, P), subdivide=8).case("full").alpha_cr
    res = fb.solve(_mesh(P / 2, P / 2, P), {"preload": {"case": "const"}}, subdivide=8)
    lam_var = res.case("var").alpha_cr
    assert lam == pytest.approx(PE / abs(P), rel=1e-3)     # Euler load, sec. 2.1
    assert lam_var == pytest.approx(2 * lam - 1, rel=1e-9)
    assert any("constant preload" in n for n in res.case("var").notes)
    # every other case is scaled on top of the preload too: P/2 + lambda_full' P = P_cr
    assert res.case("full").alpha_cr == pytest.approx(lam - 0.5, rel=1e-9)
    assert res.case("const").alpha_cr == pytest.approx(2 * lam, rel=1e-9)   # alone, unchanged
    # the same through the keyword, with a factor: const/2 x 2 is the same preload
    res2 = fb.solve(_mesh(P / 4, P / 2, P), preload={"case": "const", "factor": 2.0}, subdivide=8)
    assert res2.case("var").alpha_cr == pytest.approx(lam_var, rel=1e-9)
    assert res2.settings["preload"] == {"case": "const", "factor": 2.0}


def test_unstable_constant_part_is_refused():
    P = -1.2 * PE                               # above the Euler load: unstable on its own
    with pytest.raises(ModelError, match="the constant part alone is unstable.*'const'"):
        fb.solve(_mesh(P, P / 2, P), preload="const", subdivide=8)


def test_unknown_preload_case(tmp_path):
    with pytest.raises(InputError, match="preload.*'dead' is not a load case.*const, var, full"):
        fb.solve(_mesh(-1.0, -1.0, -2.0), {"preload": {"case": "dead"}})
    mesh = _mesh(-1.2 * PE, -1.0, -2.0)
    f = tmp_path / "col.vtu"
    mesh.write(f)
    st = tmp_path / "s.toml"
    st.write_text('[preload]\ncase = "const"\n')
    p = subprocess.run([sys.executable, "-m", "framebuckle", "solve", str(f), "--study", str(st),
                        "--out", str(tmp_path / "o")], capture_output=True, text=True)
    assert p.returncode == 2 and "constant part alone is unstable" in p.stderr
    assert "Traceback" not in p.stderr
