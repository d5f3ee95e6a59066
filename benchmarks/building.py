"""Parametric 3D steel building frames for benchmarks (invented scenario, common practice sizes).

A rectangular grid of ``nx x ny`` bays and ``nz`` storeys: columns at every grid
point, beams both ways on every floor, and X-bracing (pin-ended bars) in the two
end bays of every facade.  Sections are typical European rolled shapes (section
values from memory, rounded): columns HEB 300, beams IPE 400, bracing CHS
139.7x6.3.  Column axial forces come from a uniform floor load shared by
tributary area and accumulated from the roof down (compression negative);
beams and bracing carry no axial force.  A second load case adds 10 % to the
storey loads of one half of the plan (a neighbouring combination).

Usage: ``python benchmarks/building.py DOFS OUT.vtu`` writes a mesh whose model
has about ``DOFS`` degrees of freedom after the default sub-division (8).
"""

from __future__ import annotations

import math
import sys

import meshio
import numpy as np

E, G = 210e9, 81e9
# name: A [m2], Iy (strong) [m4], Iz (weak) [m4], J [m4], Iw [m6]   (from memory, rounded)
HEB300 = (149e-4, 25170e-8, 8563e-8, 185e-8, 1688e-9)
IPE400 = (84.5e-4, 23130e-8, 1318e-8, 51.1e-8, 490e-9)
CHS140 = (26.4e-4, 589e-8, 589e-8, 1178e-8, 0.0)
BAY, STOREY, FLOOR_LOAD = 6.0, 3.5, 8e3          # m, m, N/m2


def plan(dofs: float, subdivide: int = 8) -> tuple[int, int, int]:
    """Bays (nx, ny) and storeys nz giving about ``dofs`` DOFs after sub-division."""
    # per grid point and storey: 1 column + ~2 beams, each with (subdivide-1) interior nodes
    per = 6 * (1 + 3 * (subdivide - 1))
    cells = dofs / per                            # grid points x storeys
    nz = max(2, int(round(cells ** (1 / 3) / 1.5)))
    side = math.sqrt(cells / nz)
    n = max(2, int(round(side)) - 1)
    return n, n, nz


def building(nx: int, ny: int, nz: int) -> meshio.Mesh:
    gx, gy, gz = np.meshgrid(np.arange(nx + 1), np.arange(ny + 1), np.arange(nz + 1), indexing="ij")
    pts = np.stack([gx.ravel() * BAY, gy.ravel() * BAY, gz.ravel() * STOREY], axis=1)
    nid = np.arange(pts.shape[0]).reshape(nx + 1, ny + 1, nz + 1)
    cells, kind = [], []
    col = np.stack([nid[:, :, :-1].ravel(), nid[:, :, 1:].ravel()], 1)
    bx = np.stack([nid[:-1, :, 1:].ravel(), nid[1:, :, 1:].ravel()], 1)
    by = np.stack([nid[:, :-1, 1:].ravel(), nid[:, 1:, 1:].ravel()], 1)
    br = []
    for i in (0, nx - 1):                        # facade y = 0 and y = ny: end bays along x
        for j in (0, ny):
            br.append(np.stack([nid[i, j, :-1], nid[i + 1, j, 1:]], 1))
            br.append(np.stack([nid[i + 1, j, :-1], nid[i, j, 1:]], 1))
    for j in (0, ny - 1):                        # facades x = 0 and x = nx
        for i in (0, nx):
            br.append(np.stack([nid[i, j, :-1], nid[i, j + 1, 1:]], 1))
            br.append(np.stack([nid[i, j + 1, :-1], nid[i, j, 1:]], 1))
    br = np.concatenate(br)
    lines = np.concatenate([col, bx, by, br])
    ne = len(lines)
    sec = np.array([HEB300] * len(col) + [IPE400] * (len(bx) + len(by)) + [CHS140] * len(br))
    bar = np.r_[np.zeros(len(col) + len(bx) + len(by)), np.ones(len(br))]
    orient = np.zeros((ne, 3))
    orient[: len(col)] = (1, 0, 0)
    orient[len(col):, 2] = 1.0
    # tributary area of each grid point (corner 1/4, edge 1/2, interior 1 bay)
    tx = np.where((np.arange(nx + 1) == 0) | (np.arange(nx + 1) == nx), 0.5, 1.0)
    ty = np.where((np.arange(ny + 1) == 0) | (np.arange(ny + 1) == ny), 0.5, 1.0)
    trib = np.outer(tx, ty) * BAY * BAY
    floors_above = nz - np.arange(nz)            # column in storey s carries nz - s floors
    n1 = -(trib[:, :, None] * FLOOR_LOAD * floors_above[None, None, :]).ravel()
    half = (np.arange(nx + 1) <= nx // 2)[:, None, None] * np.ones((1, ny + 1, nz))
    n2 = n1 * (1 + 0.1 * half.ravel())
    zeros = np.zeros(ne - len(col))
    restraint = np.zeros((pts.shape[0], 6))
    restraint[nid[:, :, 0].ravel()] = 1
    cd = {
        "axial_force.gravity": [np.r_[n1, zeros]],
        "axial_force.gravity_half": [np.r_[n2, zeros]],
        "E": [np.full(ne, E)], "G": [np.full(ne, G)],
        "A": [sec[:, 0]], "Iy": [sec[:, 1]], "Iz": [sec[:, 2]], "J": [sec[:, 3]], "Iw": [sec[:, 4]],
        "orientation": [orient], "bar": [bar],
    }
    return meshio.Mesh(pts, [("line", lines)], point_data={"restraint": restraint}, cell_data=cd)


def write(dofs: float, path: str, subdivide: int = 8) -> tuple[int, int, int]:
    nx, ny, nz = plan(dofs, subdivide)
    meshio.write(path, building(nx, ny, nz), binary=True, compression=None)
    return nx, ny, nz


if __name__ == "__main__":
    n = float(sys.argv[1])
    print(write(n, sys.argv[2]))
