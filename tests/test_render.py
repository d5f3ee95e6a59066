"""Mode pictures off-screen, the render and view commands, the viewer, the progress bar."""

import io
import os
import subprocess
import sys

import meshio
import numpy as np
import pytest
from PIL import Image

import framebuckle as fb
from framebuckle.pictures import render, shapes
from framebuckle.io.progress import Progress
from framebuckle.pictures.viewer import build_viewer
from framebuckle.io.write import write_result

import picture_models as pm

SMALL = (480, 360)


@pytest.fixture(scope="module")
def portal():
    return shapes.from_result(fb.solve(pm.portal_3d(), modes=2))


def _stats(img):
    """Share of pixels that are not the white background, and the pixel spread (common practice)."""
    a = np.asarray(img, float)[..., :3]
    ink = (np.abs(a - 255).max(axis=-1) > 30).mean()
    return ink, a.std()


def _read(path):
    return np.asarray(Image.open(path).convert("RGB"))


def test_pictures_are_written_not_blank_and_differ_between_modes(portal, tmp_path):
    p1 = render.render_mode(portal, "gravity", 1, tmp_path / "m1.png", window=SMALL)
    p2 = render.render_mode(portal, "gravity", 2, tmp_path / "m2.png", window=SMALL)
    a, b = _read(p1), _read(p2)
    assert a.shape == (SMALL[1], SMALL[0], 3)
    for img in (a, b):
        ink, spread = _stats(img)
        assert 0.01 < ink < 0.6 and spread > 10
        # the colour map is drawn: some pixels are strongly coloured (not grey, black or white)
        sat = img.max(axis=-1).astype(int) - img.min(axis=-1)
        assert (sat > 80).mean() > 0.002
    diff = np.abs(a.astype(int) - b.astype(int)).max(axis=-1) > 40
    assert diff.mean() > 0.005


def test_explicit_scale_changes_the_drawing(portal):
    small = render.render_mode(portal, "wind", 1, scale=0.01, window=SMALL, return_img=True)
    big = render.render_mode(portal, "wind", 1, scale=1.5, window=SMALL, return_img=True)
    assert (np.abs(small.astype(int) - big.astype(int)).max(axis=-1) > 40).mean() > 0.005


def test_auto_scale_is_a_tenth_of_the_model_size(portal):
    _, mode = portal.mode("gravity", 1)
    _, curve, s = render.shape_meshes(portal, mode)
    pts, disp = portal.curves(mode)
    drawn = np.linalg.norm(s * disp, axis=-1).max()
    assert abs(drawn - 0.1 * portal.size) < 1e-12 * portal.size
    assert portal.size == 6.0                                  # the model spans 6 x 5 x 4


def test_animation_is_a_looping_gif_of_moving_frames(portal, tmp_path):
    p = render.animate_mode(portal, "gravity", 1, tmp_path / "a.gif", frames=6, window=(240, 180))
    im = Image.open(p)
    assert im.format == "GIF" and im.n_frames == 6 and im.info.get("loop") == 0
    frames = []
    for i in (0, 3):               # +amplitude and -amplitude
        im.seek(i)
        frames.append(np.asarray(im.convert("RGB"), int))
    assert (np.abs(frames[0] - frames[1]).max(axis=-1) > 40).mean() > 0.003


def _cli(*args, cwd, env=None):
    if args[0] == "render":
        args = args + ("--window", "320x240")
    e = dict(os.environ)
    e.pop("DISPLAY", None)
    e.pop("WAYLAND_DISPLAY", None)
    e.update(env or {})
    return subprocess.run([sys.executable, "-m", "framebuckle", *args], cwd=cwd, env=e,
                          capture_output=True, text=True, timeout=300)


def _main(*args):
    from framebuckle.cli import main
    if args[0] == "render":
        args = args + ("--window", "320x240")
    return main(list(args))


def test_render_command_from_result_file_and_from_input(tmp_path, capsys, monkeypatch):
    meshio.write(tmp_path / "frame.vtu", pm.portal_3d())
    paths = write_result(fb.solve(pm.portal_3d(), modes=2), tmp_path / "out")
    before = (tmp_path / "frame.vtu").read_bytes()
    r = _cli("render", str(paths["modes_fine"]), "--case", "wind", "--mode", "2", "--out", "pics",
             cwd=tmp_path)
    assert r.returncode == 0, r.stderr
    png = tmp_path / "pics" / "model.wind.mode2.png"
    assert png.is_file() and _stats(_read(png))[0] > 0.01
    assert "caution" in r.stdout and r.stderr == ""          # no progress bar in a pipe
    monkeypatch.chdir(tmp_path)
    assert _main("render", "frame.vtu", "--out", "pics", "--modes", "2") == 0
    for case in ("gravity", "wind"):
        assert _stats(_read(tmp_path / "pics" / f"frame.{case}.mode1.png"))[0] > 0.01
    assert (tmp_path / "frame.vtu").read_bytes() == before
    capsys.readouterr()
    # existing pictures are not replaced without --force; a missing mode is named; exit 2
    assert _main("render", "frame.vtu", "--out", "pics") == 2
    assert "--force" in capsys.readouterr().err
    assert _main("render", str(paths["modes_fine"]), "--mode", "7", "--out", "pics") == 2
    assert "mode 7 does not exist" in capsys.readouterr().err
    assert _main("render", str(paths["modes_fine"]), "--scale", "nan", "--out", "pics") == 2
    assert "--scale" in capsys.readouterr().err


def test_view_without_display_points_to_render(tmp_path):
    paths = write_result(fb.solve(pm.pinned_column(), modes=1), tmp_path)
    r = _cli("view", str(paths["modes_fine"]), cwd=tmp_path)
    assert r.returncode == 2
    assert "no display" in r.stderr and "framebuckle render" in r.stderr


def test_viewer_sliders_change_case_mode_and_scale(portal):
    p, update = build_viewer(portal, "gravity", 1, off_screen=True, window=SMALL)
    try:
        first = p.screenshot(return_img=True).copy()
        assert _stats(first)[0] > 0.01
        widgets = p.widgets.slider_widgets if hasattr(p, "widgets") else p.slider_widgets
        assert len(widgets) == 3           # scale, mode, case
        state = update(mode=2)
        assert state["mode"] == 2
        second = p.screenshot(return_img=True).copy()
        state = update(case_index=1, factor=3.0)
        assert state == {"case": 1, "mode": 2, "factor": 3.0}
        third = p.screenshot(return_img=True)
        for a, b in ((first, second), (second, third)):
            assert (np.abs(a.astype(int) - b.astype(int)).max(axis=-1) > 40).mean() > 0.003
    finally:
        p.close()


def test_progress_bar_only_on_a_terminal(monkeypatch):
    class Tty(io.StringIO):
        def isatty(self):
            return True
    monkeypatch.delenv("CI", raising=False)
    monkeypatch.delenv("FRAMEBUCKLE_PROGRESS", raising=False)
    pipe, tty = io.StringIO(), Tty()
    for stream in (pipe, tty):
        with Progress(3, "render", stream=stream) as bar:
            for i in range(3):
                bar.step(f"case {i}")
    assert pipe.getvalue() == ""
    out = tty.getvalue()
    assert "render [########################] 3/3" in out and "\r" in out
    monkeypatch.setenv("CI", "true")             # CI: quiet even on a terminal
    quiet = Tty()
    with Progress(2, "x", stream=quiet) as bar:
        bar.step()
    assert quiet.getvalue() == ""
