"""Pictures of buckling modes with PyVista, rendered off-screen (no display needed).

One picture per mode holds four views (isometric, plan X-Y, elevations X-Z
and Y-Z; Z is up).  The undeformed structure is drawn thin and grey; the
buckled shape as tubes along the cubic Hermite curve of every element
(:mod:`framebuckle.pictures.shapes`), coloured by the displacement magnitude of the
normalised mode (largest node translation = 1) with the colour-blind-safe
``viridis`` map and a labelled colour bar.  The shape is scaled so that its
largest displacement is :data:`AUTO_SCALE` of the model size (largest extent
of the bounding box) unless a scale is given; the picture states the case,
the mode number, its load factor and alpha_cr (the case's lowest).

Without a display, VTK's EGL (or OSMesa) window is chosen before the first
window is made (:func:`prepare_offscreen`), which needs only the system's
GL libraries (Debian: ``libegl1``, ``libgl1-mesa-dri``); no X server.
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


def shape_meshes(ms, mode: np.ndarray, scale: float | None = None, samples: int | None = None):
    """Undeformed lines, deformed curve (PolyData with ``|u|``) and the scale used."""
    from .shapes import DEFAULT_SAMPLES
    pts, disp = ms.curves(mode, samples or DEFAULT_SAMPLES)
    s = auto_scale(ms.size, disp) if scale is None else float(scale)
    base = polylines(pts[:, [0, -1], :])
    curve = polylines(pts + s * disp)
    curve.point_data["|u|"] = np.linalg.norm(disp, axis=-1).reshape(-1)
    return base, curve, s


def tube_radius(size: float) -> float:
    return 0.004 * size


# ---------------------------------------------------------------- pictures


def title(case, k: int) -> str:
    lam = case.load_factors
    t = f"case {case.name}   mode {k}   alpha_cr = {lam[0]:.4g}"
    if k > 1:
        t += f"   (this mode: load factor {lam[k - 1]:.4g})"
    return t


def _plotter(shape=(1, 1), window=WINDOW):
    prepare_offscreen()
    import pyvista as pv
    try:
        return pv.Plotter(off_screen=True, shape=shape, window_size=list(window), border=True)
    except Exception as exc:  # no GL at all
        raise OutputError(f"cannot open an off-screen render window ({exc}); install the system "
                          f"GL libraries (Debian: apt-get install libegl1 libgl1-mesa-dri)",
                          source="render") from None


def _draw(p, base, curve, size, clim, scalar_bar=False):
    r = tube_radius(size)
    p.add_mesh(base, color=GREY, line_width=1.5, name="base")
    tubes = curve.tube(radius=r, n_sides=10, capping=True)
    kw = {}
    if scalar_bar:
        kw["scalar_bar_args"] = {"title": " ", "n_labels": 5,
                                 "fmt": "%.2f", "vertical": False, "position_x": 0.2,
                                 "position_y": 0.015, "width": 0.6, "height": 0.1,
                                 "title_font_size": 14, "label_font_size": 12, "color": "black"}
    p.add_mesh(tubes, scalars="|u|", cmap=CMAP, clim=clim, show_scalar_bar=scalar_bar,
               name="shape", smooth_shading=True, **kw)
    if scalar_bar:      # the bar's own title collides with its labels: a text above it instead
        p.add_text(BAR_TITLE, position=(0.2, 0.125), viewport=True, font_size=7, color="black",
                   name="bar_title")


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
    base, curve, s = shape_meshes(ms, mode, scale)
    clim = [0.0, max(float(curve.point_data["|u|"].max()), 1e-12)]
    p = _plotter((2, 2), window)
    try:
        p.set_background("white")
        for i, (label, view) in enumerate(VIEWS):
            p.subplot(i // 2, i % 2)
            _draw(p, base, curve, ms.size, clim, scalar_bar=(i == 3))
            p.add_text(label, position="upper_right", font_size=8, color="black")
            if i == 0:
                note = f"\nshape scale {s:.3g}"
                if float(curve.point_data["|u|"].max()) < TWIST_ONLY:
                    note = "\nthe member axes hardly move: a twist of members (see the notes)"
                p.add_text(title(c, k) + note, position="upper_left", font_size=11, color="black")
            _camera(p, view)
        if return_img:
            return p.screenshot(return_img=True)
        path = Path(path)
        with atomic_path(path) as tmp:
            p.screenshot(str(tmp))
        return path
    finally:
        p.close()


def animate_mode(ms, case=None, k: int = 1, path=None, scale=None, frames: int = 16,
                 window=(480, 360)) -> Path:
    """Write a looping GIF of mode ``k`` swinging between +/- its scaled shape (Pillow)."""
    from PIL import Image
    c, mode = ms.mode(case, k)
    base, curve, s = shape_meshes(ms, mode, scale)
    pts0, disp = ms.curves(mode)
    clim = [0.0, max(float(curve.point_data["|u|"].max()), 1e-12)]
    p = _plotter((1, 1), window)
    images = []
    try:
        p.set_background("white")
        p.add_text(title(c, k), position="upper_left", font_size=8, color="black")
        for i, phase in enumerate(np.cos(2 * np.pi * np.arange(frames) / frames)):
            cur = polylines(pts0 + phase * s * disp)
            cur.point_data["|u|"] = curve.point_data["|u|"]
            _draw(p, base, cur, ms.size, clim)
            if i == 0:
                _camera(p, "iso")
                p.reset_camera(bounds=_bounds(pts0, s * disp))
            images.append(Image.fromarray(p.screenshot(return_img=True)))
    finally:
        p.close()
    path = Path(path)
    with atomic_path(path) as tmp:
        images[0].save(tmp, format="GIF", save_all=True, append_images=images[1:],
                       duration=80, loop=0)
    return path


def _bounds(pts, d):
    allp = np.concatenate([(pts + d).reshape(-1, 3), (pts - d).reshape(-1, 3)])
    lo, hi = allp.min(axis=0), allp.max(axis=0)
    return [lo[0], hi[0], lo[1], hi[1], lo[2], hi[2]]


def safe_name(text: str) -> str:
    return "".join(ch if ch.isalnum() or ch in "-_=" else "_" for ch in str(text))


def picture_name(stem: str, case: str, k: int, ext: str = "png") -> str:
    return f"{stem}.{safe_name(case)}.mode{k}.{ext}"


def render_all(ms, out_dir, stem, cases=None, modes=(1,), scale=None, animate=False,
               window=WINDOW, progress=None) -> list[Path]:
    """Pictures (and GIFs) of ``modes`` of every case in ``cases`` (default all with modes)."""
    from ..io.progress import Progress
    out = Path(out_dir)
    chosen = [ms.case(n) for n in cases] if cases else [c for c in ms.cases if len(c.load_factors)]
    jobs = [(c, k) for c in chosen for k in (modes or range(1, len(c.load_factors) + 1))]
    for c, k in jobs:    # validate everything before writing anything
        ms.mode(c.name, k)
    paths = []
    with (progress or Progress(len(jobs) * (2 if animate else 1), "render")) as bar:
        for c, k in jobs:
            paths.append(render_mode(ms, c.name, k, out / picture_name(stem, c.name, k), scale, window))
            bar.step(f"{c.name} mode {k}")
            if animate:
                paths.append(animate_mode(ms, c.name, k, out / picture_name(stem, c.name, k, "gif"), scale))
                bar.step(f"{c.name} mode {k} animation")
    return paths
