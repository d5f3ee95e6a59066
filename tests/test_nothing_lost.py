"""Nothing is lost: inputs are never changed, outputs are replaced atomically,
existing outputs are kept without --force, and a run killed while writing
leaves every output either old and intact or new and complete.

The process is stopped at a known point through the documented test hook
``framebuckle.io.write.PAUSE_ENV`` (the run waits between writing a temporary
file and renaming it into place); the kill itself is a real SIGKILL / SIGTERM
of the real CLI process.  Atomic replacement by rename within one folder is
POSIX ``rename(2)`` semantics (common practice).
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest
import meshio
import pyvista as pv

from faultkit import mesh_from, portal_arrays, run_cli, sha

OUTPUTS = ("model.modes.vtu", "model.modes_fine.vtu", "model.summary.json")


def _input(path: Path, scale: float = 1.0) -> Path:
    p, c, ax, r = portal_arrays()
    meshio.write(path, mesh_from(p, c, ax * scale, r), binary=False)
    return path


def _wait_for(path: Path, proc, limit=300.0):
    """Wait until ``path`` exists (the run reached the pause); a guard, not a timing check."""
    t0 = time.monotonic()
    while not path.exists():
        if proc.poll() is not None:
            raise AssertionError(f"the run ended before pausing: {proc.communicate()}")
        if time.monotonic() - t0 > limit:
            proc.kill()
            raise AssertionError("the run did not reach the pause")
        time.sleep(0.02)
    while True:  # the hook writes two lines; wait until both are there
        parts = path.read_text().splitlines()
        if len(parts) == 2:
            return Path(parts[0]), Path(parts[1])
        time.sleep(0.01)


def _start(args, flag: Path):
    env = dict(os.environ, **{"FRAMEBUCKLE_TEST_PAUSE_FILE": str(flag)})
    return subprocess.Popen([sys.executable, "-m", "framebuckle", "solve", *map(str, args)],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env)


@pytest.fixture
def first_run(tmp_path):
    """An input and the outputs of a first, complete run."""
    inp = _input(tmp_path / "model.vtu")
    out = tmp_path / "out"
    r = run_cli(inp, "--out", out)
    assert r.returncode == 0, r.stderr
    old = {n: sha(out / n) for n in OUTPUTS}
    return inp, out, old


def _load_factor(vtu: Path) -> float:
    return float(np.asarray(pv.read(vtu).field_data["load_factors.default"])[0])


def test_kill_mid_write_leaves_old_or_complete_new_files(first_run, tmp_path):
    inp, out, old = first_run
    inp_hash = sha(inp)
    old_lam = _load_factor(out / "model.modes.vtu")
    (tmp_path / "doubled").mkdir()
    new_inp = _input(tmp_path / "doubled" / "model.vtu", scale=2.0)
    new_hash = sha(new_inp)
    flag = tmp_path / "pause.flag"
    proc = _start([new_inp, "--out", out, "--force"], flag)
    try:
        tmp1, target1 = _wait_for(flag, proc)
        assert target1.name == "model.modes.vtu" and tmp1.exists()
        assert tmp1.name.startswith(".") and ".part" in tmp1.name
        flag.unlink()                                 # let the first file be renamed into place
        tmp2, target2 = _wait_for(flag, proc)
        assert target2.name == "model.modes_fine.vtu"
        proc.send_signal(signal.SIGKILL)              # killed between write and rename
        proc.communicate()
    finally:
        if proc.poll() is None:
            proc.kill()
    # first output: the complete new file (twice the forces -> half the load factor);
    # Timoshenko & Gere 1961, sec. 2.1: the critical load is independent of the applied load,
    # so alpha_cr scales as 1 / load
    assert _load_factor(out / "model.modes.vtu") == pytest.approx(old_lam / 2, rel=1e-9)
    # the others: the old files, untouched
    assert sha(out / "model.modes_fine.vtu") == old["model.modes_fine.vtu"]
    assert sha(out / "model.summary.json") == old["model.summary.json"]
    # what the kill left behind is hidden (the lock, the backup of the replaced file, the
    # temporary files not yet renamed), never under an output's name
    left = sorted(p.name for p in out.iterdir() if p.name not in OUTPUTS)
    assert tmp2.name in left and all(n.startswith(".") for n in left)
    assert ".framebuckle.lock" in left and any(n.endswith(".old") for n in left)
    assert sha(inp) == inp_hash and sha(new_inp) == new_hash
    # the next run finds the lock of a dead process, takes it over and clears that debris
    r = run_cli(new_inp, "--out", out, "--force")
    assert r.returncode == 0, r.stderr
    assert sorted(p.name for p in out.iterdir()) == sorted(OUTPUTS)
    assert _load_factor(out / "model.modes.vtu") == pytest.approx(old_lam / 2, rel=1e-9)


def test_interrupt_mid_write_removes_temporary_file(first_run, tmp_path):
    inp, out, old = first_run
    flag = tmp_path / "pause.flag"
    proc = _start([inp, "--out", out, "--force"], flag)
    try:
        tmp1, _ = _wait_for(flag, proc)
        proc.send_signal(signal.SIGTERM)              # like Ctrl-C: the run unwinds
        flag.unlink()
        _, err = proc.communicate(timeout=120)
    finally:
        if proc.poll() is None:
            proc.kill()
    assert proc.returncode == 130, err
    assert "Traceback" not in err and "interrupted" in err
    assert not tmp1.exists()
    assert sorted(p.name for p in out.iterdir()) == sorted(OUTPUTS)
    assert {n: sha(out / n) for n in OUTPUTS} == old


def test_existing_outputs_kept_without_force(first_run):
    inp, out, old = first_run
    r = run_cli(inp, "--out", out)
    assert r.returncode == 2 and "Traceback" not in r.stderr
    assert "--force" in r.stderr and "model.modes.vtu" in r.stderr
    assert {n: sha(out / n) for n in OUTPUTS} == old


def test_force_replaces_outputs_and_input_is_untouched(first_run):
    inp, out, old = first_run
    h = sha(inp)
    mtime = os.stat(inp).st_mtime_ns
    r = run_cli(inp, "--out", out, "--force")
    assert r.returncode == 0, r.stderr
    assert sha(inp) == h and os.stat(inp).st_mtime_ns == mtime
    assert sorted(p.name for p in out.iterdir()) == sorted(OUTPUTS)
