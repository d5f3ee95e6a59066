"""Small invented models for the picture, report and accessor tests (fast to solve and draw)."""

import meshio
import numpy as np

STEEL = {"E": 2.1e11, "G": 8.1e10}


def pinned_column(L=5.0, cells=1):
    """A pinned-pinned column along Z, ``cells`` cells, 1 kN compression."""
    z = np.linspace(0.0, L, cells + 1)
    pts = np.column_stack([np.zeros_like(z), np.zeros_like(z), z])
    r = np.zeros((cells + 1, 6))
    r[0, :3] = 1
    r[0, 5] = 1
    r[-1, :2] = 1
    conn = np.column_stack([np.arange(cells), np.arange(1, cells + 1)])
    c = lambda v: [np.full(cells, float(v))]
    return meshio.Mesh(pts, [("line", conn)], point_data={"restraint": r},
                       cell_data={"axial_force": c(-1000.0), "E": c(2.1e11), "G": c(8.1e10),
                                  "A": c(5e-3), "Iy": c(8e-6), "Iz": c(8e-6), "J": c(2e-7)})


def portal_3d():
    """A one-bay, one-storey 3D frame (4 fixed columns, 4 beams, one brace bar), two cases."""
    h, a, b = 4.0, 6.0, 5.0
    pts = np.array([[0, 0, 0], [a, 0, 0], [a, b, 0], [0, b, 0],
                    [0, 0, h], [a, 0, h], [a, b, h], [0, b, h]], float)
    cols = [[0, 4], [1, 5], [2, 6], [3, 7]]
    beams = [[4, 5], [5, 6], [6, 7], [7, 4]]
    brace = [[0, 5]]
    conn = np.array(cols + beams + brace)
    n = len(conn)
    r = np.zeros((8, 6))
    r[:4] = 1
    bar = np.zeros(n); bar[-1] = 1
    gravity = np.array([-300e3, -400e3, -350e3, -250e3, -10e3, -10e3, -10e3, -10e3, 0.0])
    wind = np.array([-100e3, -500e3, -200e3, -50e3, -30e3, 5e3, -20e3, 2e3, -40e3])
    full = lambda v: np.full(n, float(v))
    cd = {"axial_force.gravity": [gravity], "axial_force.wind": [wind],
          "E": [full(2.1e11)], "G": [full(8.1e10)], "A": [full(5.4e-3)],
          "Iy": [full(8.4e-5)], "Iz": [full(3.0e-5)], "J": [full(5.0e-5)], "bar": [bar]}
    return meshio.Mesh(pts, [("line", conn)], point_data={"restraint": r}, cell_data=cd)
