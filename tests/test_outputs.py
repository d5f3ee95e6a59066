"""Safe outputs under every fault, and files that read back.

* All or nothing: every output target is checked before the first is written, a full disk (a
  file-size limit, ``setrlimit(RLIMIT_FSIZE)`` with SIGXFSZ ignored so ``write(2)`` fails with
  EFBIG: POSIX setrlimit(2), write(2)) leaves no output and no temporary file, a failed rename
  puts back what was renamed.
* The output folder is locked: a second run is refused while the first holds it; a lock of a
  process that has ended is taken over.
* SIGHUP (the terminal closed) unwinds like SIGTERM.
* Every output reads back with meshio (the tool's input library) and PyVista (VTK's XML
  reader), independent readers of the VTK XML format; result files given as input are named.
* Pictures: names unique after cleaning; a damaged result (NaN) is refused, not drawn; without
  working GL, ``render`` exits 2 with the documented message and ``report`` still writes the
  report without pictures.
"""

from __future__ import annotations

import csv
import json
import os
import resource
import signal
import subprocess
import sys
from dataclasses import replace
from pathlib import Path

import meshio
import numpy as np
import pytest
import pyvista as pv

import framebuckle as fb
from framebuckle.io import outputs
from framebuckle.pictures import render, shapes
from framebuckle.errors import InputError, OutputError
from framebuckle.io.write import case_names, write_result

import picture_models as pm
from faultkit import mesh_from, portal_arrays, run_cli, sha

OUTPUTS = ("model.modes.vtu", "model.modes_fine.vtu", "model.summary.json")


def _input(path: Path) -> Path:
    p, c, ax, r = portal_arrays()
    meshio.write(path, mesh_from(p, c, ax, r))
    return path


def _cli(*args, env=None, preexec_fn=None, cwd=None):
    return subprocess.run([sys.executable, "-m", "framebuckle", *map(str, args)], capture_output=True,
                          text=True, env=env, preexec_fn=preexec_fn, cwd=cwd, timeout=600)


def _file_limit(nbytes):
    def apply():
        signal.signal(signal.SIGXFSZ, signal.SIG_IGN)      # write() then fails with EFBIG
        resource.setrlimit(resource.RLIMIT_FSIZE, (nbytes, nbytes))
    return apply


@pytest.fixture(scope="module")
def solved(tmp_path_factory):
    """An input and the complete outputs of one run (sizes decide the file-size limits)."""
    d = tmp_path_factory.mktemp("solved")
    inp = _input(d / "model.vtu")
    r = run_cli(inp, "--out", d / "out")
    assert r.returncode == 0, r.stderr
    return inp, d / "out"


# ---------------------------------------------------------------- all or nothing


@pytest.mark.parametrize("command", ["solve", "check"])
def test_full_disk_leaves_no_output_at_all(solved, tmp_path, command):
    inp, done = solved
    # the first VTU fits under the limit, the refined one does not: before, the first was left
    limit = (done / "model.modes.vtu").stat().st_size + 1
    assert limit < (done / "model.modes_fine.vtu").stat().st_size
    out = tmp_path / "out"
    r = _cli(command, inp, "--out", out, preexec_fn=_file_limit(limit))
    assert r.returncode == 2, (r.returncode, r.stderr)            # not SIGABRT (-6) in VTK
    assert "Traceback" not in r.stderr and r.stderr.startswith("framebuckle: error: ")
    assert "file too large" in r.stderr and ".vtu: cannot write the output" in r.stderr
    assert not out.exists(), sorted(p.name for p in out.iterdir())  # no output, no .part, no lock


def test_full_disk_keeps_the_old_outputs(solved, tmp_path):
    inp, done = solved
    out = tmp_path / "out"
    assert run_cli(inp, "--out", out).returncode == 0
    old = {n: sha(out / n) for n in OUTPUTS}
    r = _cli("solve", inp, "--out", out, "--force",
             preexec_fn=_file_limit((done / "model.modes.vtu").stat().st_size + 1))
    assert r.returncode == 2 and "file too large" in r.stderr
    assert sorted(p.name for p in out.iterdir()) == sorted(OUTPUTS)
    assert {n: sha(out / n) for n in OUTPUTS} == old


def test_every_target_is_checked_before_the_first_is_written(tmp_path):
    res = fb.solve(pm.pinned_column(), modes=1)
    (tmp_path / "model.summary.json").mkdir()                # the last output's name is a folder
    with pytest.raises(OutputError, match="taken by a folder"):
        write_result(res, tmp_path)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["model.summary.json"]


def test_output_that_links_to_the_input_is_refused_before_writing(tmp_path):
    inp = _input(tmp_path / "model.vtu")
    h = sha(inp)
    out = tmp_path / "out"
    out.mkdir()
    (out / "model.summary.json").symlink_to(inp)
    r = run_cli(inp, "--out", out, "--force")
    assert r.returncode == 2 and "refusing to overwrite the input file" in r.stderr
    assert sorted(p.name for p in out.iterdir()) == ["model.summary.json"] and sha(inp) == h


def test_too_long_output_name_is_refused_before_writing(tmp_path):
    limit = outputs.name_max(tmp_path) - 16
    stem = "m" * (limit - len(".summary.json"))             # modes.vtu and summary fit, fine does not
    inp = _input(tmp_path / f"{stem}.vtu")
    out = tmp_path / "out"
    r = run_cli(inp, "--out", out)
    assert r.returncode == 2 and "file name is" in r.stderr and "modes_fine.vtu" in r.stderr
    assert not out.exists()


def test_a_failed_rename_puts_back_what_was_renamed(tmp_path, monkeypatch):
    a, b, c = (tmp_path / n for n in ("a.txt", "b.txt", "c.txt"))
    a.write_text("old a")
    real = os.replace
    calls = []

    def failing(src, dst):
        calls.append(dst)
        if len(calls) == 3:
            raise OSError(28, "No space left on device")
        return real(src, dst)

    monkeypatch.setattr(outputs.os, "replace", failing)
    with pytest.raises(OutputError, match="no space left"):
        with outputs.OutputSet(force=True) as outs:
            for t in (a, b, c):
                outs.write_text(t, f"new {t.name}")
            outs.commit()
    # a: the old content is back; b: new, removed again; c never renamed; no temporary file
    assert sorted(p.name for p in tmp_path.iterdir()) == ["a.txt"] and a.read_text() == "old a"


def test_picture_names_stay_unique_after_cleaning(tmp_path):
    names = render.picture_names("m", ["a/b", "a_b", "A_B", "wind"], 1)
    assert len(set(names.values())) == 4 and len({n.lower() for n in names.values()}) == 4
    assert names["wind"] == "m.wind.mode1.png"
    assert names == render.picture_names("m", ["a/b", "a_b", "A_B", "wind"], 1)   # stable
    ms = shapes.from_result(fb.solve(pm.portal_3d(), modes=1))
    ms = replace(ms, cases=(replace(ms.cases[0], name="g/1"), replace(ms.cases[1], name="g_1")))
    paths = render.render_all(ms, tmp_path, "m", window=(160, 120))
    assert len(paths) == 2 and len({p.name for p in paths}) == 2 and all(p.is_file() for p in paths)


# ---------------------------------------------------------------- lock and signals


def _pause_env(flag):
    return dict(os.environ, FRAMEBUCKLE_TEST_PAUSE_FILE=str(flag))


def _wait(flag, proc):
    import time
    while not flag.exists():                  # a guard on the run reaching its pause, not a timing check
        assert proc.poll() is None, proc.communicate()
        time.sleep(0.02)


def test_second_run_is_refused_while_the_first_holds_the_folder(tmp_path):
    inp = _input(tmp_path / "model.vtu")
    out = tmp_path / "out"
    flag = tmp_path / "pause.flag"
    first = subprocess.Popen([sys.executable, "-m", "framebuckle", "solve", str(inp), "--out", str(out)],
                             stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                             env=_pause_env(flag))
    try:
        _wait(flag, first)                       # the first run is writing (lock held)
        second = run_cli(inp, "--out", out)
        assert second.returncode == 2 and "another framebuckle run" in second.stderr
        assert f"pid {first.pid}" in second.stderr
        import time
        while first.poll() is None:              # let the first run finish, one pause per rename
            if flag.exists():
                flag.unlink()
            time.sleep(0.02)
        assert first.returncode == 0, first.communicate()
    finally:
        if first.poll() is None:
            first.kill()
    assert sorted(p.name for p in out.iterdir()) == sorted(OUTPUTS)   # the lock is gone too


def test_stale_lock_of_an_ended_process_is_taken_over(tmp_path):
    inp = _input(tmp_path / "model.vtu")
    out = tmp_path / "out"
    out.mkdir()
    dead = subprocess.Popen([sys.executable, "-c", "pass"])
    dead.wait()
    import socket
    (out / outputs.LOCK_NAME).write_text(f"{dead.pid} {socket.gethostname()} 1\n")
    (out / ".model.modes.vtu.abcd1234.part.vtu").write_text("left by a killed run")
    r = run_cli(inp, "--out", out)
    assert r.returncode == 0, r.stderr
    assert sorted(p.name for p in out.iterdir()) == sorted(OUTPUTS)


def test_sighup_unwinds_and_removes_temporary_files(solved, tmp_path):
    inp, _ = solved
    out = tmp_path / "out"
    assert run_cli(inp, "--out", out).returncode == 0
    old = {n: sha(out / n) for n in OUTPUTS}
    flag = tmp_path / "pause.flag"
    proc = subprocess.Popen([sys.executable, "-m", "framebuckle", "solve", str(inp), "--out", str(out),
                             "--force"], stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                            env=_pause_env(flag))
    try:
        _wait(flag, proc)
        proc.send_signal(signal.SIGHUP)
        flag.unlink()
        _, err = proc.communicate(timeout=300)
    finally:
        if proc.poll() is None:
            proc.kill()
    assert proc.returncode == 130 and "Traceback" not in err
    assert sorted(p.name for p in out.iterdir()) == sorted(OUTPUTS)
    assert {n: sha(out / n) for n in OUTPUTS} == old


# ---------------------------------------------------------------- files that read back


def test_every_output_reads_back_with_meshio_and_pyvista(tmp_path):
    """check writes the most files: modes, fine modes, imperfect mesh, members CSV, summary."""
    inp = tmp_path / "frame.vtu"
    meshio.write(inp, pm.portal_3d())
    r = _cli("check", inp, "--out", tmp_path / "out")
    assert r.returncode in (0, 1), r.stderr
    out = tmp_path / "out"
    vtus = sorted(out.glob("*.vtu"))
    assert {p.name for p in vtus} >= {"frame.modes.vtu", "frame.modes_fine.vtu", "frame.imperfect.vtu"}
    summary = json.loads((out / "frame.summary.json").read_text())
    for p in vtus:
        m = meshio.read(p)
        g = pv.read(p)
        assert len(m.points) == g.n_points and np.allclose(m.points, g.points)
        for name in g.point_data.keys():
            assert np.allclose(np.asarray(m.point_data[name]).reshape(g.n_points, -1),
                               np.asarray(g.point_data[name]).reshape(g.n_points, -1))
        if p.name != "frame.imperfect.vtu":
            assert case_names(m.field_data) == case_names(g.field_data) == ["gravity", "wind"]
            for c in summary["cases"]:
                assert np.allclose(m.field_data[f"load_factors.{c['name']}"], c["load_factors"])
    with open(out / "frame.members.csv", newline="") as f:
        assert len(list(csv.DictReader(f))) > 0


def test_older_result_with_string_case_names_still_opens(tmp_path):
    res = fb.solve(pm.portal_3d(), modes=1)
    paths = write_result(res, tmp_path)
    g = pv.read(paths["modes_fine"])
    for k in ("case_names_utf8", "framebuckle_result"):
        g.field_data.remove(k)
    g.field_data["case_names"] = np.array(["wind", "gravity"])    # the old form, another order
    g.save(tmp_path / "old.vtu")
    assert [c.name for c in shapes.load(tmp_path / "old.vtu").cases] == ["wind", "gravity"]


def test_result_file_given_as_input_is_named(tmp_path):
    res = fb.solve(pm.portal_3d(), modes=1)
    paths = write_result(res, tmp_path)
    for p in (paths["modes"], paths["modes_fine"]):
        with pytest.raises(InputError, match="framebuckle result file"):
            fb.solve(str(p))
    r = run_cli(paths["modes"], "--out", tmp_path / "again")
    assert r.returncode == 2 and "framebuckle result file" in r.stderr and "truncated" not in r.stderr


def test_result_with_nan_is_refused_when_drawn(tmp_path):
    paths = write_result(fb.solve(pm.portal_3d(), modes=1), tmp_path)
    g = pv.read(paths["modes_fine"])
    m = np.array(g.point_data["mode_1.wind"])
    m[5, 1] = np.nan
    g.point_data["mode_1.wind"] = m
    g.save(tmp_path / "damaged.vtu")
    r = _cli("render", tmp_path / "damaged.vtu", "--out", tmp_path / "pics")
    assert r.returncode == 2 and "mode_1.wind" in r.stderr and "NaN" in r.stderr
    assert "point 5" in r.stderr and not (tmp_path / "pics").exists()


# ---------------------------------------------------------------- pictures without GL


def test_no_gl_render_exits_2_and_report_keeps_the_results(tmp_path):
    """A window class that cannot load makes VTK crash (SIGSEGV); the probe child takes it."""
    inp = tmp_path / "frame.vtu"
    meshio.write(inp, pm.portal_3d())
    env = dict(os.environ, VTK_DEFAULT_OPENGL_WINDOW="vtkNoSuchWindow")
    r = _cli("render", inp, "--out", tmp_path / "pics", env=env)
    assert r.returncode == 2, (r.returncode, r.stderr)
    assert "cannot open an off-screen render window" in r.stderr and "libegl1" in r.stderr
    assert not (tmp_path / "pics").exists()
    r = _cli("report", inp, "--out", tmp_path / "rep", env=env)
    assert r.returncode == 0, r.stderr
    assert "written without pictures" in r.stderr and "alpha_cr" not in r.stderr
    html = (tmp_path / "rep" / "frame.report.html").read_text()
    assert 'id="no-pictures"' in html and "cannot open an off-screen render window" in html
    assert "data:image/png;base64" in html            # the plots are still there (matplotlib)
    assert "gravity" in html and "wind" in html and "Cautions" in html
