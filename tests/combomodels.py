"""An invented small 3D frame with basic load cases from the linear static solution
(framebuckle.solver.static), for the combination and envelope tests.

One storey, 2 x 1 bays (6 m x 5 m plan, 4 m high), fixed bases, steel-like sections in N, m.
Basic cases: G (vertical point loads at the tops), Q (vertical loads on one side only),
W_x and W_y (horizontal loads at the tops, each direction reversible with a negative factor).
"""

from __future__ import annotations

import meshio
import numpy as np

from framebuckle.model.model import make_frame
from framebuckle.solver.static import solve_static

E, G = 2.1e11, 8.1e10
A, IY, IZ, J = 5.38e-3, 8.36e-5, 6.04e-6, 2.0e-7
CASES = ("G", "Q", "W_x", "W_y")


def arrays():
    xs, ys, h = (0.0, 6.0, 12.0), (0.0, 5.0), 4.0
    base = [(x, y, 0.0) for y in ys for x in xs]
    top = [(x, y, h) for (x, y, _) in base]
    pts = np.array(base + top, float)
    nb = len(base)
    cols = [(i, i + nb) for i in range(nb)]
    beams = [(nb + 0, nb + 1), (nb + 1, nb + 2), (nb + 3, nb + 4), (nb + 4, nb + 5),
             (nb + 0, nb + 3), (nb + 1, nb + 4), (nb + 2, nb + 5)]
    cells = np.array(cols + beams, np.int64)
    orient = np.array([(1.0, 0.0, 0.0)] * len(cols) + [(0.0, 0.0, 1.0)] * len(beams))
    r = np.zeros((len(pts), 6), bool)
    r[:nb] = True
    return pts, cells, orient, r, nb


def loads():
    pts, cells, orient, r, nb = arrays()
    n = len(pts)
    out = {k: np.zeros((n, 6)) for k in CASES}
    tops = np.arange(nb, n)
    out["G"][tops, 2] = -6.0e4
    out["Q"][tops[pts[tops, 0] < 7.0], 2] = -8.0e4
    out["W_x"][tops, 0] = 2.0e4
    out["W_y"][tops, 1] = 1.5e4
    return out


def frame():
    pts, cells, orient, r, nb = arrays()
    return make_frame(pts, cells, E, G, A, IY, IZ, J, orientation=orient, restraint=r)


def static_results(load_sets=None):
    fr = frame()
    return {k: solve_static(fr, P) for k, P in (load_sets or loads()).items()}


def mesh(with_displacements=False) -> meshio.Mesh:
    pts, cells, orient, r, nb = arrays()
    res = static_results()
    ne = len(cells)
    cd = {"E": np.full(ne, E), "G": np.full(ne, G), "A": np.full(ne, A), "Iy": np.full(ne, IY),
          "Iz": np.full(ne, IZ), "J": np.full(ne, J), "orientation": orient}
    for k, s in res.items():
        cd[f"axial_force.{k}"] = np.array(s.axial, float)
    pd = {"restraint": r.astype(float)}
    if with_displacements:
        for k, s in res.items():
            pd[f"displacement.{k}"] = np.ascontiguousarray(s.displacements[:, :3])
            pd[f"rotation.{k}"] = np.ascontiguousarray(s.displacements[:, 3:])
    return meshio.Mesh(pts, [("line", cells)], point_data=pd, cell_data={k: [v] for k, v in cd.items()})
