"""Pictures of buckling modes with PyVista, rendered off-screen (no display needed).

One picture per mode holds four views (isometric, plan X-Y, elevations X-Z
and Y-Z; Z is up).  The undeformed structure is drawn thin and grey; the
buckled shape as tubes along the cubic Hermite curve of every element
(:mod:`framebuckle.pictures.shapes`); above :data:`TUBE_LIMIT` drawn elements as wide lines
with fewer points per element (:func:`samples_for`), which draw in a fraction of the time and
memory and look the same at picture size.  The curve is built once per mode, and the four views
share one actor in one render window.  It is coloured by the displacement magnitude of the
normalised mode (largest node translation = 1) with the colour-blind-safe
``viridis`` map and a labelled colour bar.  The shape is scaled so that its
largest displacement is :data:`AUTO_SCALE` of the model size (largest extent
of the bounding box) unless a scale is given; the picture states the case,
the mode number, its load factor and alpha_cr (the case's lowest).

Without a display, VTK's EGL (or OSMesa) window is chosen before the first
window is made (:func:`prepare_offscreen`), which needs only the system's
GL libraries (Debian: ``libegl1``, ``libgl1-mesa-dri``); no X server.  Before the
first window of a process, :func:`gl_probe` makes one off-screen window and
draws one frame in a child process: without working GL (or with a window class
that cannot load) VTK crashes the process, so the crash happens in the child
and the command ends with a clear :class:`OutputError` instead.
"""

from __future__ import annotations

import ctypes.util
import os
import sys
from pathlib import Path

import numpy as np

from ..errors import OutputError
from ..io.write import atomic_path

#: drawn amplitude of the largest displacement as a share of the model size
AUTO_SCALE = 0.10
CMAP = "viridis"
VIEWS = (("isometric", "iso"), ("plan X-Y", "xy"), ("elevation X-Z", "xz"), ("elevation Y-Z", "yz"))
WINDOW = (1200, 900)
GREY = "#8c8c8c"
#: largest drawn translation of a normalised mode below which it is a twist only
TWIST_ONLY = 1e-6
BAR_TITLE = "displacement magnitude (largest node = 1)"
#: drawn elements above which the buckled shape is drawn as wide lines instead of tubes
TUBE_LIMIT = 3000
#: points along the drawn curves of a model drawn with lines (fewer samples per element)
POINT_BUDGET = 60_000
#: width of the buckled shape drawn as lines [pixels]
LINE_WIDTH = 3.0


def has_display() -> bool:
    """True when an interactive window can open (a display server, or not Linux)."""
    if not sys.platform.startswith("linux"):
        return True
    return bool(os.environ.get("DISPLAY") or os.environ.get("WAYLAND_DISPLAY"))


def prepare_offscreen() -> str | None:
    """Choose VTK's off-screen window when there is no display; return its name.

    Must run before the first render window is made.  Respects a
    ``VTK_DEFAULT_OPENGL_WINDOW`` set by the user.
    """
    if has_display() or os.environ.get("VTK_DEFAULT_OPENGL_WINDOW"):
        return os.environ.get("VTK_DEFAULT_OPENGL_WINDOW")
    for lib, window in (("EGL", "vtkEGLRenderWindow"), ("OSMesa", "vtkOSOpenGLRenderWindow")):
        if ctypes.util.find_library(lib):
            os.environ["VTK_DEFAULT_OPENGL_WINDOW"] = window
            return window
    return None


# ---------------------------------------------------------------- geometry


def auto_scale(size: float, disp: np.ndarray) -> float:
    """Factor that draws the largest displacement at AUTO_SCALE x model size."""
    peak = float(np.linalg.norm(disp, axis=-1).max()) if disp.size else 0.0
    return AUTO_SCALE * size / peak if peak > 0 else 0.0


def polylines(points: np.ndarray):
    """PolyData of one polyline per element from (e, s, 3) points."""
    import pyvista as pv
    e, s, _ = points.shape
    ids = np.arange(e * s).reshape(e, s)
    lines = np.column_stack([np.full(e, s), ids]).ravel()
    return pv.PolyData(points.reshape(-1, 3), lines=lines)


def drawn_as_tubes(n_elements: int) -> bool:
    """True when the buckled shape is drawn as tubes (small models), False for wide lines."""
    return int(n_elements) <= TUBE_LIMIT


def samples_for(n_elements: int) -> int:
    """Points per element along the drawn curve: all of DEFAULT_SAMPLES on a model drawn with
    tubes, fewer (at least 3, a mid-point) on a large one, about POINT_BUDGET points in all."""
    from .shapes import DEFAULT_SAMPLES
    if drawn_as_tubes(n_elements):
        return DEFAULT_SAMPLES
    return int(min(DEFAULT_SAMPLES, max(3, POINT_BUDGET // max(int(n_elements), 1))))


def shape_meshes(ms, mode: np.ndarray, scale: float | None = None, samples: int | None = None):
    """Undeformed lines, deformed curve (PolyData with ``|u|``) and the scale used."""
    base, curve, s, _ = mode_meshes(ms, mode, scale, samples)
    return base, curve, s


def mode_meshes(ms, mode: np.ndarray, scale: float | None = None, samples: int | None = None):
    """Undeformed lines, deformed curve, scale and the (points, displacements) they came from
    (the mode's curves are computed once here)."""
    from .shapes import DEFAULT_SAMPLES
    pts, disp = ms.curves(mode, samples or DEFAULT_SAMPLES)
    s = auto_scale(ms.size, disp) if scale is None else float(scale)
    base = polylines(pts[:, [0, -1], :])
    curve = polylines(pts + s * disp)
    curve.point_data["|u|"] = np.linalg.norm(disp, axis=-1).reshape(-1)
    return base, curve, s, (pts, disp)


def tube_radius(size: float) -> float:
    return 0.004 * size


def drawn_shape(curve, size: float, tubes: bool):
    """The mesh drawn for the buckled shape: tubes around the curve, or the curve itself."""
    return curve.tube(radius=tube_radius(size), n_sides=10, capping=True) if tubes else curve


# ---------------------------------------------------------------- pictures


def title(case, k: int) -> str:
    lam = case.load_factors
    t = f"case {case.name}   mode {k}   alpha_cr = {lam[0]:.4g}"
    if k > 1:
        t += f"   (this mode: load factor {lam[k - 1]:.4g})"
    return t


#: a child process that makes an off-screen window and draws one frame (exit 0 = GL works)
PROBE = """
import sys
import pyvista as pv
p = pv.Plotter(off_screen=True, window_size=[64, 64])
p.add_mesh(pv.Sphere())
img = p.screenshot(return_img=True)
p.close()
sys.exit(0 if img is not None and tuple(img.shape[:2]) == (64, 64) else 3)
"""
#: longest wait for the probe [s] (it imports VTK and starts the renderer)
PROBE_TIMEOUT = 180.0
_PROBED: dict = {}
GL_HINT = ("install the system GL libraries (Debian/Ubuntu: apt-get install libegl1 libegl-mesa0 "
           "libgl1-mesa-dri), or unset VTK_DEFAULT_OPENGL_WINDOW if it names a window class that "
           "cannot load")


def gl_probe() -> None:
    """Raise OutputError unless an off-screen window can be made and drawn (checked once per
    process, in a child process, with the window class :func:`prepare_offscreen` chose)."""
    import signal
    import subprocess
    window = prepare_offscreen()
    key = window or ""
    if key not in _PROBED:
        why = None
        try:
            r = subprocess.run([sys.executable, "-c", PROBE], capture_output=True, text=True,
                               timeout=PROBE_TIMEOUT, env=dict(os.environ))
            if r.returncode < 0:
                why = f"a test window crashed with {signal.Signals(-r.returncode).name}"
            elif r.returncode:
                tail = [ln for ln in r.stderr.splitlines() if ln.strip()][-1:]
                why = f"a test window failed (exit {r.returncode}{': ' + tail[0][:200] if tail else ''})"
        except subprocess.TimeoutExpired:
            why = f"a test window did not draw within {PROBE_TIMEOUT:.0f} s"
        except OSError as exc:
            why = f"cannot start the test window process ({exc})"
        _PROBED[key] = why
    if _PROBED[key]:
        raise OutputError(f"cannot open an off-screen render window ({_PROBED[key]}"
                          f"{', window class ' + window if window else ''}); {GL_HINT}",
                          source="render")


def _plotter(shape=(1, 1), window=WINDOW):
    gl_probe()
    import pyvista as pv
    try:
        return pv.Plotter(off_screen=True, shape=shape, window_size=list(window), border=True)
    except Exception as exc:  # no GL at all
        raise OutputError(f"cannot open an off-screen render window ({exc}); install the system "
                          f"GL libraries (Debian: apt-get install libegl1 libgl1-mesa-dri)",
                          source="render") from None


BAR_ARGS = {"title": " ", "n_labels": 5, "fmt": "%.2f", "vertical": False, "position_x": 0.2,
            "position_y": 0.015, "width": 0.6, "height": 0.1, "title_font_size": 14,
            "label_font_size": 12, "color": "black"}


def _draw(p, base, curve, size, clim, scalar_bar=False, shape=None, tubes=True, share=None):
    """Add the grey structure and the buckled shape to the active view; return their actors.

    ``shape``: the mesh to draw (default: tubes around ``curve``, built here); ``tubes``: False
    draws ``shape`` as wide lines; ``share``: actors of another view of the same window, reused
    (one mapper and one copy of the data for all views).
    """
    if share is not None:
        acts = tuple(p.add_actor(a, reset_camera=False, name=n) for a, n in zip(share, ("base", "shape")))
        acts = tuple(a[0] if isinstance(a, tuple) else a for a in acts)
    else:
        if shape is None:
            shape = drawn_shape(curve, size, tubes)
        b = p.add_mesh(base, color=GREY, line_width=1.5 if tubes else 1.0, name="base")
        kw = {"smooth_shading": True} if tubes else {"line_width": LINE_WIDTH}
        a = p.add_mesh(shape, scalars="|u|", cmap=CMAP, clim=clim, show_scalar_bar=False,
                       name="shape", **kw)
        acts = (b, a)
    if scalar_bar:
        p.add_scalar_bar(mapper=acts[1].mapper, **BAR_ARGS)
        # the bar's own title collides with its labels: a text above it instead
        p.add_text(BAR_TITLE, position=(0.2, 0.125), viewport=True, font_size=7, color="black",
                   name="bar_title")
    return acts


def _camera(p, view):
    {"iso": p.view_isometric, "xy": p.view_xy, "xz": p.view_xz, "yz": p.view_yz}[view]()
    if view != "iso":
        p.enable_parallel_projection()
    p.reset_camera()
    p.camera.zoom(0.85)


def render_mode(ms, case=None, k: int = 1, path=None, scale=None, window=WINDOW,
                return_img: bool = False):
    """Write a four-view PNG of mode ``k`` (1-based) of ``case``; return its path (or the image)."""
    c, mode = ms.mode(case, k)
    tubes = drawn_as_tubes(len(ms.elements))
    base, curve, s, _ = mode_meshes(ms, mode, scale, samples_for(len(ms.elements)))
    shape = drawn_shape(curve, ms.size, tubes)            # once, for all four views
    clim = [0.0, max(float(curve.point_data["|u|"].max()), 1e-12)]
    p = _plotter((2, 2), window)
    try:
        p.set_background("white")
        acts = None
        for i, (label, view) in enumerate(VIEWS):
            p.subplot(i // 2, i % 2)
            acts = _draw(p, base, curve, ms.size, clim, scalar_bar=(i == 3), shape=shape, tubes=tubes,
                         share=acts)
            p.add_text(label, position="upper_right", font_size=8, color="black")
            if i == 0:
                note = f"\nshape scale {s:.3g}"
                if float(curve.point_data["|u|"].max()) < TWIST_ONLY:
                    note = "\nthe member axes hardly move: a twist of members (see the notes)"
                p.add_text(title(c, k) + note, position="upper_left", font_size=11, color="black")
            _camera(p, view)
        if return_img:
            return p.screenshot(return_img=True)
        img = p.screenshot(return_img=True)
    finally:
        p.close()
    path = Path(path)
    data = png_bytes(img)
    with atomic_path(path) as tmp:
        tmp.write_bytes(data)
    return path


def png_bytes(img: np.ndarray) -> bytes:
    import io

    from PIL import Image
    buf = io.BytesIO()
    Image.fromarray(img).save(buf, format="PNG", optimize=True)
    return buf.getvalue()


def animate_mode(ms, case=None, k: int = 1, path=None, scale=None, frames: int = 16,
                 window=(480, 360)) -> Path:
    """Write a looping GIF of mode ``k`` swinging between +/- its scaled shape (Pillow)."""
    data = animation_bytes(ms, case, k, scale, frames, window)
    path = Path(path)
    with atomic_path(path) as tmp:
        tmp.write_bytes(data)
    return path


def animation_bytes(ms, case=None, k: int = 1, scale=None, frames: int = 16,
                    window=(480, 360)) -> bytes:
    """A looping GIF (bytes) of mode ``k`` swinging between +/- its scaled shape (Pillow)."""
    import io

    from PIL import Image
    c, mode = ms.mode(case, k)
    tubes = drawn_as_tubes(len(ms.elements))
    base, curve, s, (pts0, disp) = mode_meshes(ms, mode, scale, samples_for(len(ms.elements)))
    clim = [0.0, max(float(curve.point_data["|u|"].max()), 1e-12)]
    p = _plotter((1, 1), window)
    images = []
    try:
        p.set_background("white")
        p.add_text(title(c, k), position="upper_left", font_size=8, color="black")
        flat = pts0.reshape(-1, 3)
        move = (s * disp).reshape(-1, 3)
        acts = None
        for i, phase in enumerate(np.cos(2 * np.pi * np.arange(frames) / frames)):
            if acts is None or tubes:
                curve.points = flat + phase * move
                acts = _draw(p, base, curve, ms.size, clim, tubes=tubes)
            else:                                           # lines: the drawn curve, moved
                acts[1].mapper.dataset.points = flat + phase * move
                p.render()
            if i == 0:
                _camera(p, "iso")
                p.reset_camera(bounds=_bounds(pts0, s * disp))
            images.append(Image.fromarray(p.screenshot(return_img=True)))
    finally:
        p.close()
    buf = io.BytesIO()
    images[0].save(buf, format="GIF", save_all=True, append_images=images[1:], duration=80, loop=0)
    return buf.getvalue()


def _bounds(pts, d):
    allp = np.concatenate([(pts + d).reshape(-1, 3), (pts - d).reshape(-1, 3)])
    lo, hi = allp.min(axis=0), allp.max(axis=0)
    return [lo[0], hi[0], lo[1], hi[1], lo[2], hi[2]]


def safe_name(text: str) -> str:
    return "".join(ch if ch.isalnum() or ch in "-_=" else "_" for ch in str(text))


def picture_name(stem: str, case: str, k: int, ext: str = "png") -> str:
    return f"{stem}.{safe_name(case)}.mode{k}.{ext}"


def picture_names(stem: str, cases, k: int, ext: str = "png") -> dict:
    """Case -> picture name, unique even where cleaned names collide.

    Case names that clean to the same text (``a/b`` and ``a_b``; also ``A`` and ``a``, one file on
    a case-insensitive file system) get ``~`` and 8 hex digits of the SHA-1 of the case name
    appended to the cleaned name, so every picture keeps its own file and the name stays the
    same from run to run.
    """
    import hashlib
    cases = list(dict.fromkeys(cases))
    clean = {c: safe_name(c) for c in cases}
    seen: dict = {}
    for c in cases:
        seen.setdefault(clean[c].lower(), []).append(c)
    out = {}
    for c in cases:
        name = clean[c]
        if len(seen[name.lower()]) > 1:
            name += "~" + hashlib.sha1(str(c).encode("utf-8")).hexdigest()[:8]
        out[c] = f"{stem}.{name}.mode{k}.{ext}"
    return out


def render_all(ms, out_dir, stem, cases=None, modes=(1,), scale=None, animate=False,
               window=WINDOW, progress=None, force: bool = True, protect=()) -> list[Path]:
    """Pictures (and GIFs) of ``modes`` of every case in ``cases`` (default all with modes).

    All or nothing: every target is checked (and the GL probe run) before the first picture is
    drawn, and the files are renamed into place together at the end.
    """
    from ..io.outputs import OutputSet
    from ..io.progress import Progress
    out = Path(out_dir)
    chosen = [ms.case(n) for n in cases] if cases else [c for c in ms.cases if len(c.load_factors)]
    jobs = [(c, k) for c in chosen for k in (modes or range(1, len(c.load_factors) + 1))]
    for c, k in jobs:    # validate everything before writing anything
        ms.mode(c.name, k)
    names = {}
    for k in {k for _, k in jobs}:
        for ext in ("png", "gif") if animate else ("png",):
            for c, name in picture_names(stem, [c.name for c, kk in jobs if kk == k], k, ext).items():
                names[(c, k, ext)] = out / name
    paths = []
    with OutputSet(force, protect) as outs:
        for c, k in jobs:
            outs.add(names[(c.name, k, "png")])
            if animate:
                outs.add(names[(c.name, k, "gif")])
        gl_probe()
        with (progress or Progress(len(jobs) * (2 if animate else 1), "render")) as bar:
            for c, k in jobs:
                img = render_mode(ms, c.name, k, scale=scale, window=window, return_img=True)
                paths.append(outs.write_bytes(names[(c.name, k, "png")], png_bytes(img)))
                bar.step(f"{c.name} mode {k}")
                if animate:
                    paths.append(outs.write_bytes(names[(c.name, k, "gif")],
                                                  animation_bytes(ms, c.name, k, scale)))
                    bar.step(f"{c.name} mode {k} animation")
        outs.commit()
    return paths
