"""Batch runs on a Dask LocalCluster (loopback only): one table, failures reported, no lost work.

Reference for the load factors: Euler's pinned column P = pi^2 E I / L^2
(Timoshenko & Gere 1961, Theory of Elastic Stability, 2nd ed., sec. 2.1).
"""

import csv
import json
import math
import os
import signal
import subprocess
import sys

import meshio
import numpy as np
import pytest

distributed = pytest.importorskip("distributed")   # in the "test" extra: always present in CI

from framebuckle.batch import expand_inputs, run_batch  # noqa: E402

E, I, L = 2.1e11, 8e-6, 5.0
PE = math.pi ** 2 * E * I / L ** 2                     # Timoshenko & Gere 1961, sec. 2.1


def column_file(path, forces, cells=6):
    """A pinned column of ``cells`` cells; one case per force (compression negative)."""
    z = np.linspace(0, L, cells + 1)
    pts = np.stack([np.zeros_like(z), np.zeros_like(z), z], 1)
    lines = np.stack([np.arange(cells), np.arange(1, cells + 1)], 1)
    r = np.zeros((cells + 1, 6))
    r[0, [0, 1, 2, 5]] = 1
    r[-1, :2] = 1
    full = lambda v: [np.full(cells, float(v))]
    cd = {"E": full(E), "G": full(8.1e10), "A": full(5e-3), "Iy": full(I), "Iz": full(2 * I),
          "J": full(2e-7), "member": [np.full(cells, 7.0)]}
    for name, f in forces.items():
        cd[f"axial_force.{name}"] = full(f)
    meshio.write(path, meshio.Mesh(pts, [("line", lines)], point_data={"restraint": r}, cell_data=cd))
    return path


@pytest.fixture(scope="module")
def cluster():
    from distributed import Client, LocalCluster
    cl = LocalCluster(n_workers=2, threads_per_worker=1, processes=True, host="127.0.0.1",
                      dashboard_address=None)
    client = Client(cl)
    yield cl, client
    client.close()
    cl.close()


def make_inputs(tmp_path, n=6):
    files = []
    for i in range(n):
        f = tmp_path / f"col{i}.vtu"
        column_file(f, {"a": -1000.0 * (i + 1), "b": -500.0 * (i + 1)})
        files.append(str(f))
    bad = tmp_path / "broken.vtu"
    bad.write_text("<VTKFile> truncated")
    return files, str(bad)


def check_rows(rows, files):
    by = {(os.path.basename(r["file"]), r["case"]): r for r in rows}
    for i, f in enumerate(files):
        name = os.path.basename(f)
        for case, p in (("a", 1000.0 * (i + 1)), ("b", 500.0 * (i + 1))):
            r = by[(name, case)]
            assert r["status"] == "ok"
            # weak axis governs (Iy = I); 6 cells x 4 sub-elements: within 1e-4 of Euler
            assert abs(r["alpha_cr"] * p / PE - 1) < 1e-4
            assert r["governing_member"] == 7
            assert r["verdict"] is not None


def test_batch_table_and_failed_file(tmp_path, cluster):
    cl, client = cluster
    files, bad = make_inputs(tmp_path, 3)
    rows = run_batch([str(tmp_path / "col*.vtu"), bad, str(tmp_path / "missing.vtu")],
                     scheduler=cl.scheduler_address, subdivide=4, modes=2)
    check_rows(rows, files)
    err = [r for r in rows if r["status"] == "error"]
    assert {os.path.basename(r["file"]) for r in err} == {"broken.vtu", "missing.vtu"}
    assert all(r["error"] and r["alpha_cr"] is None for r in err)
    # input order kept: the glob's files first, then the failures
    assert [os.path.basename(r["file"]) for r in rows][-2:] == ["broken.vtu", "missing.vtu"]


def test_killing_a_worker_loses_no_result(tmp_path, cluster):
    cl, client = cluster
    files, _ = make_inputs(tmp_path, 10)
    killed = []

    def kill_one(rows):
        if killed:
            return
        busy = {w: keys for w, keys in client.processing().items() if keys}
        if not busy:
            return                                  # try again at the next finished file
        addr, keys = sorted(busy.items())[0]
        pid = client.run(os.getpid, workers=[addr])[addr]
        os.kill(pid, signal.SIGKILL)                # a worker dies in the middle of a file
        killed.append(keys)

    rows = run_batch(files, client=client, subdivide=4, modes=2, on_row=kill_one)
    assert killed and killed[0]                     # a worker was killed while it had work
    assert len(rows) == 2 * len(files)
    check_rows(rows, files)


def test_cli_batch_writes_csv_and_json(tmp_path, cluster):
    cl, _ = cluster
    files, bad = make_inputs(tmp_path, 2)
    out = tmp_path / "out"
    p = subprocess.run([sys.executable, "-m", "framebuckle", "batch", str(tmp_path / "*.vtu"),
                        "--scheduler", cl.scheduler_address, "--out", str(out), "--modes", "1"],
                       capture_output=True, text=True, timeout=120)
    assert p.returncode == 2, p.stderr                # one file failed: reported, the rest done
    assert "Traceback" not in p.stderr
    assert "1 of 3 file(s) failed" in p.stderr
    with open(out / "batch.csv") as fh:
        table = list(csv.DictReader(fh))
    assert [r["case"] for r in table if r["status"] == "ok"] == ["a", "b", "a", "b"]
    ok = [r for r in table if r["status"] == "ok"]
    assert float(ok[0]["alpha_cr"]) * 1000 / PE == pytest.approx(1, rel=1e-4)
    assert [r["status"] for r in table].count("error") == 1
    data = json.loads((out / "batch.json").read_text())
    assert data["columns"][:5] == ["file", "case", "alpha_cr", "verdict", "governing_member"]
    assert len(data["rows"]) == 5 and data["cautions"]


def test_expand_inputs_keeps_order_and_unmatched(tmp_path):
    for n in ("b.vtu", "a.vtu"):
        (tmp_path / n).write_text("")
    got = expand_inputs([str(tmp_path / "*.vtu"), str(tmp_path / "a.vtu"), str(tmp_path / "z*.msh")])
    assert [os.path.basename(g) for g in got] == ["a.vtu", "b.vtu", "z*.msh"]
