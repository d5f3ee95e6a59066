"""Small invented test structures as meshio meshes (shared by the check tests)."""

import numpy as np
import meshio

E, G = 2.1e11, 8.1e10
FIXED = [1, 1, 1, 1, 1, 1]
PINNED = [1, 1, 1, 0, 0, 1]          # pinned, twist restrained
FREE = [0, 0, 0, 0, 0, 0]
ROLLER = [1, 1, 0, 0, 0, 0]          # slides along the column axis
GUIDED = [1, 1, 0, 1, 1, 1]          # slides along the axis, no rotation


def mesh(points, cells, restraint, fields, point_data=None):
    pd = {"restraint": np.asarray(restraint, float)}
    pd.update(point_data or {})
    return meshio.Mesh(np.asarray(points, float), [("line", np.asarray(cells))], point_data=pd,
                       cell_data={k: [np.asarray(v, float)] for k, v in fields.items()})


def column(ncell=1, bottom=PINNED, top=ROLLER, L=4.0, I=8e-6, A=5e-3, J=2e-5, N=-1000.0,
           Iz_factor=1.5, member=None, Iy=None):
    """Vertical column along Z with ``ncell`` equal cells."""
    pts = np.column_stack([np.zeros(ncell + 1), np.zeros(ncell + 1), np.linspace(0, L, ncell + 1)])
    cells = np.column_stack([np.arange(ncell), np.arange(1, ncell + 1)])
    r = np.zeros((ncell + 1, 6))
    r[0] = bottom
    r[-1] = top
    f = lambda v: np.full(ncell, v, float)
    Iy = f(I) if Iy is None else np.asarray(Iy, float)
    fields = {"axial_force": f(N), "E": f(E), "G": f(G), "A": f(A), "Iy": Iy, "Iz": Iy * Iz_factor,
              "J": f(J), "Ip": f(I * (1 + Iz_factor))}
    if member is not None:
        fields["member"] = member
    return mesh(pts, cells, r, fields)


def portal(h=4.0, b=6.0, Ic=8e-6, Ib=1.2e-5, P=(-1000.0, -1000.0), A=5e-3, ncol=1, Ic2=None):
    """Fixed-base single-bay portal in the X-Z plane; columns carry P, the beam nothing.

    Cells: left column (``ncol`` cells, from the base up), beam, right column (``ncol`` cells).
    """
    zl = np.linspace(0, h, ncol + 1)
    left = np.column_stack([np.zeros(ncol + 1), np.zeros(ncol + 1), zl])
    right = np.column_stack([np.full(ncol + 1, b), np.zeros(ncol + 1), zl])
    pts = np.concatenate([left, right])
    o = ncol + 1
    cells = ([[i, i + 1] for i in range(ncol)] + [[ncol, o + ncol]] +
             [[o + i, o + i + 1] for i in range(ncol)])
    r = np.zeros((len(pts), 6))
    r[0] = FIXED
    r[o] = FIXED
    Ic2 = Ic if Ic2 is None else Ic2
    I = [Ic] * ncol + [Ib] + [Ic2] * ncol
    N = [P[0]] * ncol + [0.0] + [P[1]] * ncol
    n = len(cells)
    fields = {"axial_force": N, "E": [E] * n, "G": [G] * n, "A": [A] * n, "Iy": I, "Iz": I,
              "J": [2e-7] * n}
    return mesh(pts, cells, r, fields)


def cruciform(L=1.0, b=0.1, t=0.01, N=-1000.0, ncell=2):
    """Pinned cruciform column (four outstands b x t) with twist restrained at both ends."""
    A = 4 * b * t
    I = t * (2 * b) ** 3 / 12
    J = 4 * b * t ** 3 / 3
    m = column(ncell, PINNED, [1, 1, 0, 1, 0, 0], L=L, I=I, A=A, J=J, N=N, Iz_factor=1.0)
    return m, {"A": A, "I": I, "J": J, "Ip": 2 * I}


def two_storey(h=(4.0, 3.5), b=(6.0,), Ic=1e-5, Ib=8e-5, Ac=7.8e-3, Ab=5e-3, P=400e3, cut=None):
    """Unbraced fixed-base frame of two storeys in the X-Z plane (3D model: not planar).

    Columns carry ``P`` per storey above them, the beams nothing.  ``cut``: heights at which
    the first column is split (two close heights: a very short cell between long ones).
    """
    xs = np.concatenate([[0.0], np.cumsum(b)])
    zs = np.concatenate([[0.0], np.cumsum(h)])
    pts, idx = [], {}
    for s, z in enumerate(zs):
        for i, x in enumerate(xs):
            idx[i, s] = len(pts)
            pts.append([x, 0.0, z])
    cells, N, I, A = [], [], [], []
    for s in range(1, len(zs)):
        for i in range(len(xs)):
            lo, hi = idx[i, s - 1], idx[i, s]
            if cut is not None and (i, s) == (0, 1):
                chain = [lo]
                for z in cut:
                    pts.append([xs[0], 0.0, z])
                    chain.append(len(pts) - 1)
                chain.append(hi)
                cells += [[p, q] for p, q in zip(chain[:-1], chain[1:])]
                N += [-P * (len(zs) - s)] * (len(chain) - 1)
                I += [Ic] * (len(chain) - 1)
                A += [Ac] * (len(chain) - 1)
                continue
            cells.append([lo, hi])
            N.append(-P * (len(zs) - s))
            I.append(Ic)
            A.append(Ac)
        for i in range(len(xs) - 1):
            cells.append([idx[i, s], idx[i + 1, s]])
            N.append(0.0)
            I.append(Ib)
            A.append(Ab)
    r = np.zeros((len(pts), 6))
    r[[idx[i, 0] for i in range(len(xs))]] = FIXED
    n = len(cells)
    fields = {"axial_force": N, "E": [E] * n, "G": [G] * n, "A": A, "Iy": I, "Iz": I, "J": [2e-7] * n}
    return mesh(pts, cells, r, fields)
