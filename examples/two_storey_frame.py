"""Write the invented worked example of the README: a two-storey, two-bay steel frame.

Plane frame in the X-Z plane, bays 6 m, storeys 3.5 m, fixed column bases.  Member
axial forces (N, tension positive) are those a linear run would give for two invented
load cases: ``gravity`` (floor 40 kN/m, roof 25 kN/m carried to the columns by
tributary width) and ``wind`` (gravity plus +-30 kN of overturning in the outer
columns).  Every column cell is split in two so that the imperfect geometry can show
the bow of a column.

    python examples/two_storey_frame.py OUTDIR
    framebuckle check OUTDIR/two_storey_frame.vtu --study OUTDIR/two_storey_frame.toml
"""

import sys
from pathlib import Path

import meshio
import numpy as np

BAY, STOREY = 6.0, 3.5
COLUMN = dict(A=4.5e-3, Iy=1.8e-5, Iz=6.7e-6, J=1.5e-7)     # strong axis y (in plane)
BEAM = dict(A=5.4e-3, Iy=8.4e-5, Iz=6.0e-6, J=2.0e-7)


def build():
    pts, cells, kind, N_g, N_w = [], [], [], [], []

    def point(x, z):
        for i, p in enumerate(pts):
            if abs(p[0] - x) < 1e-9 and abs(p[2] - z) < 1e-9:
                return i
        pts.append((x, 0.0, z))
        return len(pts) - 1

    # column forces per storey (N): exterior, interior; wind adds -+30 kN to the outer columns
    col = {0: (-240e3, -480e3), 1: (-95e3, -190e3)}
    for s in range(2):
        for c in range(3):
            x = c * BAY
            a, m, b = point(x, s * STOREY), point(x, (s + 0.5) * STOREY), point(x, (s + 1) * STOREY)
            ng = col[s][1] if c == 1 else col[s][0]
            nw = ng + (-30e3 if c == 2 else 30e3 if c == 0 else 0.0) * (2 - s) / 2
            for p, q in ((a, m), (m, b)):
                cells.append((p, q)); kind.append("column"); N_g.append(ng); N_w.append(nw)
        for c in range(2):
            cells.append((point(c * BAY, (s + 1) * STOREY), point((c + 1) * BAY, (s + 1) * STOREY)))
            kind.append("beam"); N_g.append(0.0); N_w.append(-12e3 if s == 0 else -6e3)
    pts = np.array(pts)
    restraint = np.zeros((len(pts), 6))
    restraint[pts[:, 2] == 0.0] = 1
    sec = lambda k: np.array([(COLUMN if t == "column" else BEAM)[k] for t in kind])
    cd = {"axial_force.gravity": N_g, "axial_force.wind": N_w, "E": [2.1e11] * len(cells),
          "G": [8.1e10] * len(cells), "A": sec("A"), "Iy": sec("Iy"), "Iz": sec("Iz"), "J": sec("J")}
    return meshio.Mesh(pts, [("line", np.array(cells))], point_data={"restraint": restraint},
                       cell_data={k: [np.asarray(v, float)] for k, v in cd.items()})


STUDY = """\
[analysis]
planar = true          # a plane frame: analyse it in its plane
modes = 4

[units]
force = "N"
length = "m"

[checks]
fy = 355e6             # yield strength for the slenderness (S355)
analysis = "elastic"   # EN 1993-1-1 5.2.1(3): alpha_cr >= 10

[[storeys]]            # AISC 360-16 Appendix 8 B2, ground storey, from the linear run
name = "ground"
case = "wind"
P_story = 960e3        # total vertical load on the storey
P_mf = 960e3           # all of it in moment-frame columns
H = 40e3               # storey shear of the wind case
height = 3.5
drift = 0.0105         # first-order inter-storey drift under H

[imperfection]
case = "gravity"
curve = "b"            # EN 1993-1-1 Table 6.1
W = 3.25e-4            # plastic section modulus of the column, for M_Rk = W fy
"""


if __name__ == "__main__":
    out = Path(sys.argv[1] if len(sys.argv) > 1 else ".")
    out.mkdir(parents=True, exist_ok=True)
    meshio.write(out / "two_storey_frame.vtu", build())
    (out / "two_storey_frame.toml").write_text(STUDY, encoding="utf-8")
    print(f"wrote {out / 'two_storey_frame.vtu'} and {out / 'two_storey_frame.toml'}")
