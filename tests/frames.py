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


def mezzanine(pinned_beams=True, scale=None):
    """Invented braced two-storey mezzanine, 2 x 1 bays (10 m x 4 m), storeys of 3.5 m.

    Columns pinned at the base (twist held) and continuous through the first floor; floor
    beams pinned to the columns at both ends (releases My, Mz) when ``pinned_beams``; single
    diagonal bars brace the four outer walls of bay 1 / the end walls in every storey and bay 1
    of both floors.  Columns carry the floor loads (interior lines 2 and 1.5 times the edge lines), beams
    and bars carry no axial force.  ``scale`` = {cell: factor} multiplies Iy and Iz of cells.

    Cells: 0-11 columns (line by line: lower, upper), 12-25 beams (level 1, then level 2:
    x-beams y = 0, y = 4, then y-beams x = 0, 5, 10), 26-35 bars.  Explicit member labels:
    column line ``c`` storey ``s`` -> ``10 c + s + 1``, beam ``j`` -> ``100 + j``, bar ``j`` -> ``200 + j``.
    """
    xs, ys, zs = (0.0, 5.0, 10.0), (0.0, 4.0), (0.0, 3.5, 7.0)
    pts = [(x, y, z) for z in zs for y in ys for x in xs]
    idx = {p: i for i, p in enumerate(pts)}
    P = lambda x, y, z: idx[(x, y, z)]
    cols, beams, bars = [], [], []
    for y in ys:
        for x in xs:
            cols += [[P(x, y, zs[0]), P(x, y, zs[1])], [P(x, y, zs[1]), P(x, y, zs[2])]]
    for z in zs[1:]:
        for y in ys:
            beams += [[P(xs[0], y, z), P(xs[1], y, z)], [P(xs[1], y, z), P(xs[2], y, z)]]
        for x in xs:
            beams.append([P(x, ys[0], z), P(x, ys[1], z)])
    for s in range(2):
        z0, z1 = zs[s], zs[s + 1]
        for y in ys:                                          # walls y = 0, 4: bay 1
            bars.append([P(xs[0], y, z0), P(xs[1], y, z1)])
        for x in (xs[0], xs[2]):                              # end walls x = 0, 10
            bars.append([P(x, ys[0], z0), P(x, ys[1], z1)])
        bars.append([P(xs[0], ys[0], z1), P(xs[1], ys[1], z1)])   # floor, bay 1
    cells = cols + beams + bars
    nc, nb, nr = len(cols), len(beams), len(bars)
    n = len(cells)
    r = np.zeros((len(pts), 6))
    r[[i for i, p in enumerate(pts) if p[2] == 0.0]] = [1, 1, 1, 0, 0, 1]
    # columns: about 2 x HEB 160-like section; beams IPE 300-like; bars 30 mm rods (invented)
    A = np.r_[np.full(nc, 5.4e-3), np.full(nb, 5.4e-3), np.full(nr, 7.1e-4)]
    Iy = np.r_[np.full(nc, 2.5e-5), np.full(nb, 8.4e-5), np.full(nr, 4e-8)]
    Iz = np.r_[np.full(nc, 8.9e-6), np.full(nb, 6.0e-6), np.full(nr, 4e-8)]
    J = np.r_[np.full(nc, 3.1e-7), np.full(nb, 2.0e-7), np.full(nr, 8e-8)]
    for c, f in (scale or {}).items():
        Iy[c] *= f
        Iz[c] *= f
    Ncol = []
    for y in ys:
        for x in xs:
            w = (2.0 if y == ys[0] else 1.5) if x == xs[1] else 1.0
            Ncol += [-300e3 * w, -150e3 * w]
    N = np.r_[Ncol, np.zeros(nb + nr)]
    orient = np.zeros((n, 3))
    orient[:nc] = [1.0, 0.0, 0.0]
    orient[nc:] = [0.0, 0.0, 1.0]
    orient[nc + nb:] = [0.0, 0.0, 1.0]
    for j in range(nc + nb, n):                               # bars: any vector off their axis
        d = np.subtract(pts[cells[j][1]], pts[cells[j][0]])
        orient[j] = [0.0, 1.0, 0.0] if abs(d[1]) < 1e-9 else [1.0, 0.0, 0.0] if abs(d[0]) < 1e-9 else [0, 0, 1.0]
    member = np.r_[[10 * (i // 2) + i % 2 + 1 for i in range(nc)], 100 + np.arange(nb), 200 + np.arange(nr)]
    fields = {"axial_force": N, "E": np.full(n, E), "G": np.full(n, G), "A": A, "Iy": Iy, "Iz": Iz,
              "J": J, "orientation": orient, "bar": np.r_[np.zeros(nc + nb), np.ones(nr)], "member": member}
    if pinned_beams:
        rel = np.zeros((n, 6))
        rel[nc:nc + nb] = [0, 0, 0, 0, 1, 1]
        fields["release_start"] = rel
        fields["release_end"] = rel
    return mesh(pts, cells, r, fields)


def sway_frame(storeys=3, bays=2, h=3.5, b=6.0, Ic=2.0e-5, Ib=4.0e-5, P=-2.0e5, brace_A=None,
               base=FIXED, ncol=1, beam_I=None, A=1e-2):
    """Multi-storey, multi-bay plane frame in the X-Z plane, rigid joints, bases ``base``.

    Every column carries ``P`` per storey above it (gravity only: beams and braces carry no axial
    force); ``A``: area of columns and beams. ``brace_A``: X-bracing bars (area) in the first bay of every storey, making the frame
    braced. ``ncol``: cells per column (the column is still one member). Cells: columns storey by
    storey (left to right, ``ncol`` cells each), then beams, then braces.
    """
    xs = np.arange(bays + 1) * b
    pts, idx = [], {}
    for s in range(storeys + 1):
        for i, x in enumerate(xs):
            idx[i, s] = len(pts)
            pts.append([x, 0.0, s * h])
    cells, N, I, area, bar = [], [], [], [], []
    for s in range(1, storeys + 1):
        for i in range(bays + 1):
            lo, hi = idx[i, s - 1], idx[i, s]
            chain = [lo]
            for j in range(1, ncol):
                chain.append(len(pts))
                pts.append([xs[i], 0.0, (s - 1 + j / ncol) * h])
            chain.append(hi)
            for a, c in zip(chain, chain[1:]):
                cells.append([a, c])
                N.append(P * (storeys - s + 1))
                I.append(Ic)
                area.append(A)
                bar.append(0)
    for s in range(1, storeys + 1):
        for i in range(bays):
            cells.append([idx[i, s], idx[i + 1, s]])
            N.append(0.0)
            I.append(Ib if beam_I is None else beam_I)
            area.append(A)
            bar.append(0)
    if brace_A is not None:
        for s in range(1, storeys + 1):
            for a, c in (((0, s - 1), (1, s)), ((1, s - 1), (0, s))):
                cells.append([idx[a], idx[c]])
                N.append(0.0)
                I.append(1e-8)
                area.append(brace_A)
                bar.append(1)
    r = np.zeros((len(pts), 6))
    for i in range(bays + 1):
        r[idx[i, 0]] = base
    n = len(cells)
    fields = {"axial_force": N, "E": [E] * n, "G": [G] * n, "A": area, "Iy": I, "Iz": I,
              "J": [1e-6] * n, "bar": bar}
    return mesh(pts, cells, r, fields)


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
