"""Opening what the picture commands draw, and the interactive viewer.

:func:`load_modes` takes a ``<stem>.modes_fine.vtu`` (or ``.modes.vtu``) written
by ``solve`` and draws from it without solving again; any other input mesh is
solved first.  :func:`build_viewer` makes the PyVista window of ``framebuckle
view``: the mode drawn as in the pictures, with sliders for the load case, the
mode and the shape scale (a multiple of the automatic scale).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ..errors import InputError

RESULT_SUFFIXES = (".modes_fine.vtu", ".modes.vtu")
SLIDER = {"style": "modern", "title_height": 0.018, "slider_width": 0.015, "tube_width": 0.004,
          "color": "black"}


def result_stem(path) -> str:
    from ..io.write import output_stem
    name = Path(path).name
    for suf in RESULT_SUFFIXES:
        if name.endswith(suf):
            return name[: -len(suf)]
    return output_stem(str(path))


def load_modes(path, study=None, modes=None, subdivide=None, progress=None):
    """``(ModeSet, Result or None)`` of a result VTU (no solve) or of an input mesh (solved)."""
    from .shapes import from_grid, from_result, is_result_grid
    p = Path(path)
    if not p.exists():
        raise InputError("file not found", source=str(p))
    if p.suffix.lower() == ".vtu" and p.is_file():
        import pyvista as pv
        try:
            grid = pv.read(str(p))
        except Exception as exc:
            raise InputError(f"cannot read the mesh ({type(exc).__name__}: {exc})", source=str(p)) from None
        if is_result_grid(grid):
            return from_grid(grid, str(p)), None
    from ..pipeline.api import solve
    result = solve(str(p), study, modes=modes, subdivide=subdivide, progress=progress)
    return from_result(result), result


def build_viewer(ms, case=None, k: int = 1, off_screen: bool = False, window=(1200, 850)):
    """The interactive plotter and its ``update(case_index=, mode=, factor=)`` function."""
    import pyvista as pv

    from . import render
    names = [c.name for c in ms.cases if len(c.load_factors)]
    if not names:
        raise InputError("no load case has a buckling mode to show", source=ms.source)
    first = ms.case(case).name if case is not None else names[0]
    ms.mode(first, k)
    state = {"case": names.index(first), "mode": k, "factor": 1.0}
    if off_screen:
        render.prepare_offscreen()
    p = pv.Plotter(off_screen=off_screen, window_size=list(window), title="framebuckle view")
    p.set_background("white")

    def update(case_index=None, mode=None, factor=None):
        if case_index is not None:
            state["case"] = int(round(case_index))
        if mode is not None:
            state["mode"] = int(round(mode))
        if factor is not None:
            state["factor"] = float(factor)
        c = ms.case(names[state["case"]])
        state["mode"] = int(np.clip(state["mode"], 1, len(c.load_factors)))
        _, m = ms.mode(c.name, state["mode"])
        pts, disp = ms.curves(m, render.samples_for(len(ms.elements)))
        s = render.auto_scale(ms.size, disp)
        base = render.polylines(pts[:, [0, -1], :])
        curve = render.polylines(pts + state["factor"] * s * disp)
        curve.point_data["|u|"] = np.linalg.norm(disp, axis=-1).reshape(-1)
        clim = [0.0, max(float(curve.point_data["|u|"].max()), 1e-12)]
        render._draw(p, base, curve, ms.size, clim, scalar_bar=True,
                     tubes=render.drawn_as_tubes(len(ms.elements)))
        p.add_text(render.title(c, state["mode"]) + f"\nscale {state['factor'] * s:.3g} "
                   f"({state['factor']:.2g} x automatic)", position="upper_left", font_size=11,
                   color="black", name="title")
        return state

    update()
    render._camera(p, "iso")
    kmax = max(len(ms.case(n).load_factors) for n in names)
    p.add_slider_widget(lambda v: update(factor=v), [0.0, 5.0], value=1.0, title="scale (x automatic)",
                        pointa=(0.03, 0.84), pointb=(0.25, 0.84), fmt="%.2f", **SLIDER)
    if kmax > 1:
        p.add_slider_widget(lambda v: update(mode=v), [1, kmax], value=k, title="mode",
                            pointa=(0.03, 0.72), pointb=(0.25, 0.72), fmt="%.0f", **SLIDER)
    if len(names) > 1:
        p.add_slider_widget(lambda v: update(case_index=v), [0, len(names) - 1], value=state["case"],
                            title="case (" + ", ".join(names[:6]) + (" ..." if len(names) > 6 else "") + ")",
                            pointa=(0.03, 0.60), pointb=(0.25, 0.60), fmt="%.0f", **SLIDER)
    return p, update
