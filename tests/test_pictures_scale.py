"""Pictures of large models: lines instead of tubes, the curves built once per mode, progress.

No timings are asserted (they depend on the machine); what makes the large-model pictures cheap
is checked by what is drawn and how often the mode's curves are computed.
"""

import io

import numpy as np
import pytest

import framebuckle as fb
from framebuckle.engineering.check import run_check
from framebuckle.engineering.checkfiles import write_check
from framebuckle.io.progress import Progress
from framebuckle.pictures import render, report, shapes

import picture_models as pm

SMALL = (480, 360)


@pytest.fixture(scope="module")
def solved():
    return fb.solve(pm.portal_3d(), modes=2)


@pytest.fixture(scope="module")
def portal(solved):
    return shapes.from_result(solved)


def _ink(img):
    """Share of pixels that are not the white background, and of strongly coloured pixels
    (the colour map; not grey, black or white) - common practice for a picture that is not blank."""
    a = np.asarray(img, int)[..., :3]
    sat = a.max(axis=-1) - a.min(axis=-1)
    return (np.abs(a - 255).max(axis=-1) > 30).mean(), (sat > 80).mean()


def test_tubes_for_small_models_lines_with_fewer_points_for_large_ones():
    assert render.drawn_as_tubes(render.TUBE_LIMIT)
    assert not render.drawn_as_tubes(render.TUBE_LIMIT + 1)
    assert render.samples_for(10) == shapes.DEFAULT_SAMPLES            # small: the current look
    assert render.samples_for(render.TUBE_LIMIT) == shapes.DEFAULT_SAMPLES
    big = [render.samples_for(n) for n in (render.TUBE_LIMIT + 1, 20_000, 10**6)]
    assert big == sorted(big, reverse=True) and all(3 <= s <= shapes.DEFAULT_SAMPLES for s in big)
    assert render.samples_for(20_000) * 20_000 <= max(render.POINT_BUDGET, 3 * 20_000)


def test_drawn_shape_is_tubes_or_the_curve_itself(portal):
    _, curve, _ = render.shape_meshes(portal, portal.mode("gravity", 1)[1])
    tubes = render.drawn_shape(curve, portal.size, True)
    assert tubes.n_strips + tubes.n_faces > 0 and tubes.n_lines == 0 and tubes.n_points > curve.n_points
    assert render.drawn_shape(curve, portal.size, False) is curve


def _spy_curves(monkeypatch):
    calls = []
    real = shapes.ModeSet.curves

    def spy(self, mode, samples=shapes.DEFAULT_SAMPLES):
        calls.append(samples)
        return real(self, mode, samples)
    monkeypatch.setattr(shapes.ModeSet, "curves", spy)
    return calls


def _spy_shapes(monkeypatch):
    made = []
    real = render.drawn_shape

    def spy(curve, size, tubes):
        made.append(tubes)
        return real(curve, size, tubes)
    monkeypatch.setattr(render, "drawn_shape", spy)
    return made


@pytest.mark.parametrize("limit", [render.TUBE_LIMIT, 0], ids=["tubes", "lines"])
def test_curves_and_drawn_shape_built_once_per_mode_for_all_four_views(portal, monkeypatch, limit):
    monkeypatch.setattr(render, "TUBE_LIMIT", limit)
    calls, made = _spy_curves(monkeypatch), _spy_shapes(monkeypatch)
    render.render_mode(portal, "gravity", 1, window=SMALL, return_img=True)
    assert len(calls) == 1 and len(made) == 1
    assert made == [limit > 0]                     # the portal's 40 elements: tubes unless forced
    render.render_mode(portal, "gravity", 2, window=SMALL, return_img=True)
    assert len(calls) == 2 and len(made) == 2


def test_animation_computes_the_curves_once(portal, monkeypatch):
    monkeypatch.setattr(render, "TUBE_LIMIT", 0)
    calls, made = _spy_curves(monkeypatch), _spy_shapes(monkeypatch)
    gif = render.animation_bytes(portal, "gravity", 1, frames=4, window=(240, 180))
    assert len(calls) == 1 and made == [False]     # lines: one actor, moved in place
    from PIL import Image
    im = Image.open(io.BytesIO(gif))
    frames = []
    for i in (0, 2):                               # +amplitude and -amplitude
        im.seek(i)
        frames.append(np.asarray(im.convert("RGB"), int))
    assert (np.abs(frames[0] - frames[1]).max(axis=-1) > 40).mean() > 0.003   # the shape moved


def test_line_pictures_are_not_blank_are_coloured_and_differ_between_modes(portal, monkeypatch):
    monkeypatch.setattr(render, "TUBE_LIMIT", 0)   # draw the small portal the large-model way
    a = render.render_mode(portal, "gravity", 1, window=SMALL, return_img=True)
    b = render.render_mode(portal, "gravity", 2, window=SMALL, return_img=True)
    for img in (a, b):
        ink, coloured = _ink(img)
        assert 0.005 < ink < 0.6 and coloured > 0.001
    assert (np.abs(a.astype(int) - b.astype(int)).max(axis=-1) > 40).mean() > 0.003


def _steps(text):
    """(done, total, what) of every redraw of a Progress line."""
    out = []
    for part in text.split("\r"):
        part = part.strip()
        if part.startswith("report [") or part.startswith("check ["):
            head, _, rest = part.partition("] ")
            done, total = rest.split()[0].split("/")
            out.append((int(done), int(total), rest.split(None, 2)[-1] if len(rest.split()) > 2 else ""))
    return out


def test_report_shows_a_step_for_the_check_each_picture_the_plots_and_the_file(solved, tmp_path,
                                                                                 monkeypatch):
    monkeypatch.setenv("FRAMEBUCKLE_PROGRESS", "1")
    buf = io.StringIO()
    monkeypatch.setattr("sys.stderr", buf)
    path = report.make_report(solved, tmp_path, stem="p", window=(320, 240))
    steps = _steps(buf.getvalue())
    whats = [w for _, _, w in steps]
    cases = [c.name for c in solved.cases]
    for name in cases:
        assert f"picture {name}" in whats
        assert f"case {name}: members and effective lengths" in whats
        assert f"case {name}: sway search and verdicts" in whats
    assert "imperfection" in whats and "off-screen window" in whats and path.name in whats
    done, total, _ = steps[-1]
    assert done == total == 2 * len(cases) + 1 + 1 + len(cases) + 3   # every step counted


def test_report_progress_written_to_a_given_stream(solved, tmp_path):
    buf = io.StringIO()
    with Progress(0, "report", stream=buf, show=True) as bar:
        report.make_report(solved, tmp_path, stem="q", window=(320, 240), progress=bar)
    # 2 cases checked (2 steps each) + imperfection, the window probe, 2 pictures, 2 plots, the file
    assert bar.done == 5 + 1 + 2 + 2 + 1 and "picture wind" in buf.getvalue()


def test_check_progress_one_step_per_case_and_file(solved, tmp_path):
    said = []
    rep = run_check(solved, progress=said.append)
    assert said == [f"case {c.name}: {what}" for c in solved.cases for what in
                    ("members and effective lengths", "sway search and verdicts")] + ["imperfection"]
    said.clear()
    paths = write_check(solved, rep, tmp_path, progress=said.append)
    assert said == [paths[k].name for k in ("modes", "modes_fine", "members")
                    + (("imperfect",) if "imperfect" in paths else ()) + ("summary",)]
