"""Generate the sample meshes of framebuckle from a real first-order static solution.

Run by hand from the project root::

    python sample_meshes/generate.py            # writes into sample_meshes/
    python sample_meshes/generate.py --out DIR  # somewhere else

Three invented scenarios, SI units (N, m, Pa, kg/m^3), ultimate-limit-state load
combinations with the usual partial factors (1.35 permanent, 1.5 variable,
combination factor 0.6 for wind accompanying snow):

* ``workshop_portal``: a two-bay steel workshop (2 x 15 m span, 30 m long, frames at
  6 m), pinned bases, timber purlins and steel eaves struts as bars, roof and wall
  bracing in the end bays; cases ``gravity`` and ``gravity_wind``.
  -> ``workshop_portal.vtu`` and ``workshop_portal.xdmf`` (+ ``.h5``, a time series
  whose step k is the k-th load case: t = 1 gravity, t = 2 gravity_wind).
* ``footbridge``: a 24 m half-through Pratt truss footbridge, 3 m wide; the top chords
  are braced sideways only by the U-frames of verticals and cross girders; cases
  ``crowd_full`` and ``crowd_half``.
  -> ``footbridge.vtu`` (supports as point field ``restraint``) and ``footbridge.msh``
  (Gmsh MSH 4.1 binary; supports as physical groups of vertex cells, used by
  ``footbridge.study.toml``).
* ``lattice_mast``: a 30 m free-standing square lattice mast, tapered, tubular legs as
  beams, bracing as bars, antenna head; cases ``dead``, ``wind_face``, ``wind_diagonal``.
  -> ``lattice_mast.vtu``.

Section properties are computed from nominal dimensions (root and corner radii
neglected; thin-walled torsion constants), so they are reproducible here.  The
member axial forces ``axial_force.<case>`` are the mid-length axial forces of the
static solution (:mod:`framebuckle.solver.static`), together with the point fields
``displacement.<case>`` and ``rotation.<case>`` of that solution.  The generator is
deterministic.
"""

from __future__ import annotations

import argparse
import math
import os
import sys
from contextlib import contextmanager
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent / "plugin"))

import meshio  # noqa: E402

from framebuckle.model.model import Frame, make_frame  # noqa: E402
from framebuckle.solver.static import self_weight, solve_static  # noqa: E402

GAMMA_G, GAMMA_Q, PSI0_WIND = 1.35, 1.5, 0.6

# ------------------------------------------------------------------ materials and sections

STEEL = {"E": 210e9, "G": 81e9, "rho": 7850.0}
GLULAM = {"E": 11.5e9, "G": 0.65e9, "rho": 420.0}     # softwood glulam, mean values


def i_section(h, b, tw, tf):
    """Doubly symmetric I-section from plate dimensions in mm (root radii neglected).

    Iy is the major axis (bending in the web plane), Iz the minor axis.
    """
    h, b, tw, tf = (v / 1000 for v in (h, b, tw, tf))
    hw = h - 2 * tf
    A = 2 * b * tf + hw * tw
    Iy = (b * h ** 3 - (b - tw) * hw ** 3) / 12
    Iz = 2 * tf * b ** 3 / 12 + hw * tw ** 3 / 12
    J = (2 * b * tf ** 3 + (h - tf) * tw ** 3) / 3
    Iw = tf * b ** 3 / 12 * (h - tf) ** 2 / 2
    return {"A": A, "Iy": Iy, "Iz": Iz, "J": J, "Iw": Iw}


def rhs(h, b, t):
    """Rectangular hollow section h x b x t in mm; Iy bends the h side (depth h)."""
    h, b, t = (v / 1000 for v in (h, b, t))
    A = h * b - (h - 2 * t) * (b - 2 * t)
    Iy = (b * h ** 3 - (b - 2 * t) * (h - 2 * t) ** 3) / 12
    Iz = (h * b ** 3 - (h - 2 * t) * (b - 2 * t) ** 3) / 12
    hm, bm = h - t, b - t
    J = 4 * (hm * bm) ** 2 * t / (2 * (hm + bm))      # Bredt
    return {"A": A, "Iy": Iy, "Iz": Iz, "J": J, "Iw": 0.0}


def chs(d, t):
    """Circular hollow section, outside diameter d and wall t in mm."""
    d, t = d / 1000, t / 1000
    di = d - 2 * t
    A = math.pi / 4 * (d ** 2 - di ** 2)
    I = math.pi / 64 * (d ** 4 - di ** 4)
    return {"A": A, "Iy": I, "Iz": I, "J": 2 * I, "Iw": 0.0}


def rectangle(h, b):
    """Solid rectangle h x b in mm (h >= b); the usual approximate torsion constant."""
    h, b = h / 1000, b / 1000
    J = h * b ** 3 * (1 / 3 - 0.21 * b / h * (1 - b ** 4 / (12 * h ** 4)))
    return {"A": h * b, "Iy": b * h ** 3 / 12, "Iz": h * b ** 3 / 12, "J": J, "Iw": 0.0}


# ------------------------------------------------------------------ model builder

PROPS = ("E", "G", "A", "Iy", "Iz", "J", "Iw", "rho")


class Builder:
    """Collects nodes and line cells with their section, material and member id."""

    def __init__(self):
        self.nodes: list = []
        self.key: dict = {}
        self.cells: list = []
        self.rows: list = []          # per cell: dict of props, orientation, bar, member, group
        self.n_members = 0

    def node(self, key, xyz) -> int:
        if key not in self.key:
            self.key[key] = len(self.nodes)
            self.nodes.append(tuple(float(v) for v in xyz))
        return self.key[key]

    def member(self, chain, section, material, group, orientation=(0.0, 0.0, 1.0), bar=False):
        """One physical member through the node ids of ``chain`` (one cell per segment)."""
        mid = self.n_members
        self.n_members += 1
        for a, b in zip(chain[:-1], chain[1:]):
            self.cells.append((a, b))
            self.rows.append({**section, **material, "orientation": tuple(orientation),
                              "bar": bool(bar), "member": mid, "group": group})
        return mid

    def arrays(self):
        nodes = np.array(self.nodes, float)
        cells = np.array(self.cells, np.int64)
        props = {p: np.array([r[p] for r in self.rows], float) for p in PROPS}
        props["orientation"] = np.array([r["orientation"] for r in self.rows], float)
        props["bar"] = np.array([r["bar"] for r in self.rows], bool)
        props["member"] = np.array([r["member"] for r in self.rows], np.int64)
        groups = np.array([r["group"] for r in self.rows])
        return nodes, cells, props, groups


@dataclass
class Scenario:
    name: str
    nodes: np.ndarray
    cells: np.ndarray
    props: dict
    groups: np.ndarray                      # member group name per cell (documentation)
    restraint: np.ndarray                   # (n, 6) bool
    cases: dict                             # name -> (nodal loads (n, 6), member loads (e, 3))
    supports: dict = field(default_factory=dict)   # set name -> (node ids, fix list)
    formats: tuple = ("vtu",)

    def frame(self) -> Frame:
        p = self.props
        return make_frame(self.nodes, self.cells, p["E"], p["G"], p["A"], p["Iy"], p["Iz"], p["J"],
                          orientation=p["orientation"], bar=p["bar"], restraint=self.restraint,
                          source=self.name)

    def self_weight(self, factor=1.0) -> np.ndarray:
        return factor * self_weight(self.frame(), self.props["rho"])


def analyse(sc: Scenario) -> dict:
    """First-order static solution of every case: name -> StaticResult."""
    fr = sc.frame()
    return {name: solve_static(fr, P, q) for name, (P, q) in sc.cases.items()}


# ------------------------------------------------------------------ scenario 1: portal frame

def workshop_portal() -> Scenario:
    """Two-bay workshop: spans 2 x 15 m, eaves 6 m, roof pitch 6 deg, 6 frames at 6 m."""
    span, bays, eaves, pitch = 15.0, 2, 6.0, math.radians(6.0)
    spacing, n_frames = 6.0, 6
    n_raf = 8                                   # rafter cells per bay (purlins at 1.875 m)
    xs = np.linspace(0.0, bays * span, bays * n_raf + 1)

    def roof_z(x):
        xb = x % span if x < bays * span else span
        return eaves + min(xb, span - xb) * math.tan(pitch)

    col_outer = i_section(453.4, 189.9, 8.5, 12.7)     # rolled I about 457 x 191 x 67 kg/m
    col_inner = i_section(254.1, 254.6, 8.6, 14.2)     # rolled H about 254 x 254 x 73 kg/m
    rafter = i_section(402.6, 177.7, 7.7, 10.9)        # rolled I about 406 x 178 x 54 kg/m
    purlin = rectangle(270, 90)                        # glulam purlin 90 x 270
    strut = chs(114.3, 5.0)                            # eaves / valley struts
    roof_brace = chs(60.3, 3.2)
    wall_brace = chs(76.1, 4.0)

    B = Builder()
    ys = [j * spacing for j in range(n_frames)]
    for j, y in enumerate(ys):
        top = [B.node(("roof", i, j), (x, y, roof_z(x))) for i, x in enumerate(xs)]
        for c in range(bays + 1):
            i = c * n_raf
            base = B.node(("base", c, j), (xs[i], y, 0.0))
            sec = col_inner if 0 < c < bays else col_outer
            # columns: local z = global X, so Iy (major) bends in the frame's plane
            B.member([base, top[i]], sec, STEEL, "column", orientation=(1.0, 0.0, 0.0))
        for b in range(bays):
            B.member(top[b * n_raf:(b + 1) * n_raf + 1], rafter, STEEL, "rafter")
    # purlins (timber) and eaves / valley struts (steel), bars between frames
    for i in range(len(xs)):
        for j in range(n_frames - 1):
            a, b = B.key[("roof", i, j)], B.key[("roof", i, j + 1)]
            if i % n_raf == 0:
                B.member([a, b], strut, STEEL, "eaves_strut", bar=True)
            else:
                B.member([a, b], purlin, GLULAM, "purlin", bar=True)
    # roof bracing in both end bays: crosses over two purlin spaces
    for j in (0, n_frames - 2):
        for i in range(0, len(xs) - 1, 2):
            B.member([B.key[("roof", i, j)], B.key[("roof", i + 2, j + 1)]], roof_brace, STEEL,
                     "roof_bracing", bar=True)
            B.member([B.key[("roof", i + 2, j)], B.key[("roof", i, j + 1)]], roof_brace, STEEL,
                     "roof_bracing", bar=True)
    # wall bracing in both end bays of both side walls
    for c in (0, bays):
        i = c * n_raf
        for j in (0, n_frames - 2):
            B.member([B.key[("base", c, j)], B.key[("roof", i, j + 1)]], wall_brace, STEEL,
                     "wall_bracing", bar=True)
            B.member([B.key[("base", c, j + 1)], B.key[("roof", i, j)]], wall_brace, STEEL,
                     "wall_bracing", bar=True)

    nodes, cells, props, groups = B.arrays()
    n = len(nodes)
    restraint = np.zeros((n, 6), bool)
    bases = [B.key[k] for k in B.key if k[0] == "base"]
    restraint[bases, :3] = True                         # nominally pinned bases
    sc = Scenario("workshop_portal", nodes, cells, props, groups, restraint, {},
                  formats=("vtu", "xdmf"))

    # loads (Pa on plan): roof finishes, services and purlins 0.40 kPa; snow 0.60 kPa;
    # wind: peak pressure 0.75 kPa, walls cpe +0.7 windward / -0.3 leeward, roof -0.6
    g_roof, s_roof, q_wind = 0.40e3, 0.60e3, 0.75e3
    dx = np.diff(xs)
    trib_x = np.zeros(len(xs))
    trib_x[:-1] += dx / 2
    trib_x[1:] += dx / 2
    trib_y = np.full(n_frames, spacing)
    trib_y[[0, -1]] = spacing / 2

    def roof_loads(pressure):
        P = np.zeros((n, 6))
        for i in range(len(xs)):
            for j in range(n_frames):
                P[B.key[("roof", i, j)], 2] -= pressure * trib_x[i] * trib_y[j]
        return P

    sw = sc.self_weight(GAMMA_G)
    grav = roof_loads(GAMMA_G * g_roof + GAMMA_Q * s_roof)
    sc.cases["gravity"] = (grav, sw)

    # snow leading, wind accompanying (combination factor 0.6), wind across the frames (+X)
    fw = GAMMA_Q * PSI0_WIND
    P = roof_loads(GAMMA_G * g_roof + GAMMA_Q * s_roof - fw * 0.6 * q_wind)
    q = sw.copy()
    col = np.flatnonzero(groups == "column")
    xcol = nodes[cells[col, 0], 0]
    ycol = nodes[cells[col, 0], 1]
    width = trib_y[np.rint(ycol / spacing).astype(int)]
    q[col[xcol == 0.0], 0] += fw * 0.7 * q_wind * width[xcol == 0.0]          # windward, pressure
    q[col[xcol == xs[-1]], 0] += fw * 0.3 * q_wind * width[xcol == xs[-1]]    # leeward, suction
    sc.cases["gravity_wind"] = (P, q)
    return sc


# ------------------------------------------------------------------ scenario 2: footbridge

def footbridge() -> Scenario:
    """24 m half-through Pratt truss footbridge, 8 panels of 3 m, trusses 3 m apart, 2.2 m deep."""
    n_pan, a, width, depth = 8, 3.0, 3.0, 2.2
    xs = np.arange(n_pan + 1) * a
    top_chord = rhs(150, 150, 8.0)
    bottom_chord = rhs(150, 150, 6.3)
    end_post = rhs(150, 150, 10.0)
    vertical = rhs(120, 80, 6.0)          # deep side across the bridge (U-frame bending)
    diagonal = chs(88.9, 5.0)
    cross_girder = i_section(251.4, 146.1, 6.0, 8.6)    # rolled I about 254 x 146 x 31 kg/m
    plan_brace = chs(48.3, 3.2)

    B = Builder()
    for s, y in enumerate((0.0, width)):
        bot = [B.node(("bot", i, s), (x, y, 0.0)) for i, x in enumerate(xs)]
        top = [B.node(("top", i, s), (x, y, depth)) for i, x in enumerate(xs)]
        B.member(bot, bottom_chord, STEEL, "bottom_chord")
        B.member(top, top_chord, STEEL, "top_chord")
        for i in range(n_pan + 1):
            sec = end_post if i in (0, n_pan) else vertical
            # local z = global Y: Iy (the 120 mm depth) bends across the bridge
            B.member([bot[i], top[i]], sec, STEEL, "end_post" if i in (0, n_pan) else "vertical",
                     orientation=(0.0, 1.0, 0.0))
        for i in range(n_pan):                    # Pratt: diagonals fall towards midspan
            if i < n_pan // 2:
                B.member([top[i], bot[i + 1]], diagonal, STEEL, "diagonal", bar=True)
            else:
                B.member([bot[i], top[i + 1]], diagonal, STEEL, "diagonal", bar=True)
    for i in range(n_pan + 1):
        B.member([B.key[("bot", i, 0)], B.key[("bot", i, 1)]], cross_girder, STEEL, "cross_girder")
    for i in range(n_pan):                        # plan bracing under the deck
        B.member([B.key[("bot", i, 0)], B.key[("bot", i + 1, 1)]], plan_brace, STEEL, "plan_bracing",
                 bar=True)
        B.member([B.key[("bot", i, 1)], B.key[("bot", i + 1, 0)]], plan_brace, STEEL, "plan_bracing",
                 bar=True)

    nodes, cells, props, groups = B.arrays()
    n = len(nodes)
    supports = {
        "bearing_fixed": ([B.key[("bot", 0, 0)]], [1, 1, 1, 0, 0, 0]),
        "bearing_guided": ([B.key[("bot", 0, 1)]], [1, 0, 1, 0, 0, 0]),
        "bearing_sliding": ([B.key[("bot", n_pan, 0)]], [0, 1, 1, 0, 0, 0]),
        "bearing_free": ([B.key[("bot", n_pan, 1)]], [0, 0, 1, 0, 0, 0]),
    }
    restraint = np.zeros((n, 6), bool)
    for ids, fix in supports.values():
        restraint[ids] |= np.array(fix, bool)
    sc = Scenario("footbridge", nodes, cells, props, groups, restraint, {}, supports,
                  formats=("vtu", "msh"))

    # deck (timber boards on stringers, railing) 1.2 kPa; crowd 5.0 kPa
    g_deck, q_crowd = 1.2e3, 5.0e3
    cg = np.flatnonzero(groups == "cross_girder")
    xg = nodes[cells[cg, 0], 0]
    trib = np.where((xg == 0) | (xg == xs[-1]), a / 2, a)
    sw = sc.self_weight(GAMMA_G)
    for name, loaded in (("crowd_full", np.ones(len(cg), bool)), ("crowd_half", xg <= xs[-1] / 2)):
        q = sw.copy()
        q[cg, 2] -= (GAMMA_G * g_deck + GAMMA_Q * q_crowd * loaded) * trib
        sc.cases[name] = (np.zeros((n, 6)), q)
    return sc


# ------------------------------------------------------------------ scenario 3: lattice mast

def lattice_mast() -> Scenario:
    """30 m free-standing square lattice mast, 12 panels of 2.5 m, 3.0 m base tapering to 1.2 m."""
    height, n_pan, b0, b1 = 30.0, 12, 3.0, 1.2
    zs = np.linspace(0.0, height, n_pan + 1)
    half = (b0 + (b1 - b0) * zs / height) / 2
    corners = [(1, 1), (-1, 1), (-1, -1), (1, -1)]
    legs = [chs(139.7, 6.3), chs(114.3, 6.3), chs(88.9, 5.0)]      # z < 10, < 20, <= 30
    brace_low, brace_high = chs(60.3, 3.2), chs(48.3, 3.2)
    horizontal = chs(48.3, 3.2)
    plan = chs(42.4, 3.2)

    B = Builder()
    for k, z in enumerate(zs):
        for c, (sx, sy) in enumerate(corners):
            B.node((k, c), (sx * half[k], sy * half[k], z))
    for c, (sx, sy) in enumerate(corners):
        radial = (sx / math.sqrt(2), sy / math.sqrt(2), 0.0)
        for part in range(3):
            ks = range(4 * part, 4 * part + 5)
            B.member([B.key[(k, c)] for k in ks], legs[part], STEEL, "leg", orientation=radial)
    for k in range(n_pan):
        brace = brace_low if zs[k] < 15.0 else brace_high
        for c in range(4):
            d = (c + 1) % 4
            B.member([B.key[(k, c)], B.key[(k + 1, d)]], brace, STEEL, "face_bracing", bar=True)
            B.member([B.key[(k, d)], B.key[(k + 1, c)]], brace, STEEL, "face_bracing", bar=True)
    for k in range(1, n_pan + 1):
        for c in range(4):
            B.member([B.key[(k, c)], B.key[(k, (c + 1) % 4)]], horizontal, STEEL, "horizontal", bar=True)
        if k % 4 == 0:                              # plan bracing keeps the square shape
            B.member([B.key[(k, 0)], B.key[(k, 2)]], plan, STEEL, "plan_bracing", bar=True)

    nodes, cells, props, groups = B.arrays()
    n = len(nodes)
    restraint = np.zeros((n, 6), bool)
    # leg bases pinned in bending; the base plate stops the leg twisting about its axis
    # (only bars meet the legs, so nothing else would)
    base = [B.key[(0, c)] for c in range(4)]
    restraint[np.ix_(base, [0, 1, 2, 5])] = True
    sc = Scenario("lattice_mast", nodes, cells, props, groups, restraint, {})

    # antenna head: 12 kN equipment; wind: peak pressure q(z) = 1.1 kPa (z / 10)^0.2 (z >= 5),
    # lattice force coefficient 2.6 on the projected member area of each face panel,
    # antennas and mounts 5.0 m^2 at force coefficient 1.4 at the top
    head, qp10 = 12e3, 1.1e3
    top = [B.key[(n_pan, c)] for c in range(4)]
    Pdead = np.zeros((n, 6))
    Pdead[top, 2] = -head / 4

    L = np.linalg.norm(nodes[cells[:, 1]] - nodes[cells[:, 0]], axis=1)
    dia = _diameters(props)
    # wind area per level: one face's members, half of each to either end level
    level_area = np.zeros(n_pan + 1)
    face = groups != "plan_bracing"
    for e in np.flatnonzero(face):
        ka = int(round(nodes[cells[e, 0], 2] / (height / n_pan)))
        kb = int(round(nodes[cells[e, 1], 2] / (height / n_pan)))
        share = L[e] * dia[e] / 4           # one of the four faces, half to each end
        level_area[ka] += share
        level_area[kb] += share

    def wind(direction, factor):
        d = np.asarray(direction, float) / np.linalg.norm(direction)
        P = np.zeros((n, 6))
        for k in range(1, n_pan + 1):
            qz = qp10 * (max(zs[k], 5.0) / 10.0) ** 0.2
            F = factor * GAMMA_Q * qz * 2.6 * level_area[k]
            if k == n_pan:
                F += GAMMA_Q * qz * 1.4 * 5.0
            for c in range(4):
                P[B.key[(k, c)], :3] += d * F / 4
        return P

    sc.cases["dead"] = (GAMMA_G * Pdead, sc.self_weight(GAMMA_G))
    sc.cases["wind_face"] = (Pdead + wind((1.0, 0.0, 0.0), 1.0), sc.self_weight(1.0))
    # wind on the diagonal: 1.2 x the face force (two faces partly exposed)
    sc.cases["wind_diagonal"] = (Pdead + wind((1.0, 1.0, 0.0), 1.2), sc.self_weight(1.0))
    return sc


# ------------------------------------------------------------------ scenario 4: storage building

#: basic cases of the storage building are characteristic (unfactored) values; its combinations
#: (EN 1990 6.10 style; invented but usual factors: 1.35 / 1.0 permanent, 1.5 variable, wind
#: accompanying with 0.6, stored goods accompanying with 1.0) and the factor ranges of its envelope
STORAGE_COMBINATIONS = {
    "ULS-1": {"G": 1.35, "Q": 1.5},
    "ULS-2": {"G": 1.35, "Q": 1.5, "W_x": 0.9},
    "ULS-3": {"G": 1.35, "Q": 1.5, "W_x": -0.9},
    "ULS-4": {"G": 1.35, "Q": 1.5, "W_y": 0.9},
    "ULS-5": {"G": 1.35, "Q": 1.5, "W_y": -0.9},
    "ULS-6": {"G": 1.35, "Q": 1.5, "W_x": 1.5},
    "ULS-7": {"G": 1.0, "W_x": 1.5},
    "ULS-8": {"G": 1.0, "W_y": -1.5},
}
STORAGE_ENVELOPE = {"G": [1.0, 1.35], "Q": [0.0, 1.5], "W_x": [-1.5, 1.5], "W_y": [-1.5, 1.5]}


def storage_building() -> Scenario:
    """Two-storey steel storage building: 3 x 6 m by 2 x 5 m on plan, storeys 4.5 m and 4.0 m.

    Rigid beam-to-column joints, pinned bases; X-bracing (bars) in the middle bay of both long
    walls and the first bay of both gable walls, plan bracing in the end bays of both levels.
    Basic cases (characteristic values, no partial factors): ``G`` permanent, ``Q`` imposed
    (stored goods on the floor, maintenance on the roof), ``W_x`` / ``W_y`` wind along X / Y.
    """
    ax, ay, hs = 6.0, 5.0, (4.5, 4.0)
    nx, ny = 3, 2
    xs, ys = np.arange(nx + 1) * ax, np.arange(ny + 1) * ay
    zs = np.concatenate([[0.0], np.cumsum(hs)])
    column = i_section(260.0, 260.0, 10.0, 17.5)       # rolled H about 260 x 260 x 93 kg/m
    beam_x = i_section(400.0, 180.0, 8.6, 13.5)        # rolled I about 400 x 180 x 66 kg/m
    beam_y = i_section(270.0, 135.0, 6.6, 10.2)        # rolled I about 270 x 135 x 36 kg/m
    wall_brace = chs(114.3, 6.3)
    plan_brace = chs(76.1, 4.0)

    B = Builder()
    for k, z in enumerate(zs):
        for j, y in enumerate(ys):
            for i, x in enumerate(xs):
                B.node((i, j, k), (x, y, z))
    key = B.key
    for j in range(ny + 1):
        for i in range(nx + 1):
            for k in range(len(hs)):
                B.member([key[(i, j, k)], key[(i, j, k + 1)]], column, STEEL, "column",
                         orientation=(1.0, 0.0, 0.0))
    for k in range(1, len(zs)):
        for j in range(ny + 1):               # main beams along X carry the floor (one-way deck)
            B.member([key[(i, j, k)] for i in range(nx + 1)], beam_x, STEEL, "beam_x")
        for i in range(nx + 1):
            B.member([key[(i, j, k)] for j in range(ny + 1)], beam_y, STEEL, "beam_y")

    def cross(a, b, c, d, sec, group):
        B.member([key[a], key[b]], sec, STEEL, group, bar=True)
        B.member([key[c], key[d]], sec, STEEL, group, bar=True)

    for k in range(len(hs)):
        for j in (0, ny):                     # long walls, middle bay
            cross((1, j, k), (2, j, k + 1), (2, j, k), (1, j, k + 1), wall_brace, "wall_bracing")
        for i in (0, nx):                     # gable walls, first bay
            cross((i, 0, k), (i, 1, k + 1), (i, 1, k), (i, 0, k + 1), wall_brace, "wall_bracing")
    for k in range(1, len(zs)):               # plan bracing, end bays
        for i in (0, nx - 1):
            for j in range(ny):
                cross((i, j, k), (i + 1, j + 1, k), (i + 1, j, k), (i, j + 1, k), plan_brace,
                      "plan_bracing")

    nodes, cells, props, groups = B.arrays()
    n = len(nodes)
    restraint = np.zeros((n, 6), bool)
    restraint[[key[(i, j, 0)] for j in range(ny + 1) for i in range(nx + 1)], :3] = True
    sc = Scenario("storage_building", nodes, cells, props, groups, restraint, {},
                  formats=("vtu", "combinations"))

    # characteristic loads (Pa on plan): floor deck, screed and services 3.5 kPa, roof 1.0 kPa;
    # stored goods 7.5 kPa on the floor, maintenance 0.6 kPa on the roof; wind: peak pressure
    # 0.8 kPa, pressure + suction coefficients 0.8 + 0.5 on the walls (common practice)
    g_load, q_load = {1: 3.5e3, 2: 1.0e3}, {1: 7.5e3, 2: 0.6e3}
    qp, cf = 0.8e3, 0.8 + 0.5
    bx = np.flatnonzero(groups == "beam_x")
    yb, zb = nodes[cells[bx, 0], 1], nodes[cells[bx, 0], 2]
    width = np.where((yb == 0.0) | (yb == ys[-1]), ay / 2, ay)       # tributary deck width
    level = np.rint(np.searchsorted(zs, zb - 1e-9)).astype(int)

    def deck(pressures):
        q = np.zeros((len(cells), 3))
        q[bx, 2] = -np.array([pressures[int(lv)] for lv in level]) * width
        return q

    sc.cases["G"] = (np.zeros((n, 6)), sc.self_weight() + deck(g_load))
    sc.cases["Q"] = (np.zeros((n, 6)), deck(q_load))
    trib_h = np.zeros(len(zs))
    trib_h[1:] += np.diff(zs) / 2
    trib_h[:-1] += np.diff(zs) / 2

    def wind(axis, across):
        P = np.zeros((n, 6))
        breadth = across[-1] - across[0]
        for k in range(1, len(zs)):
            F = qp * cf * breadth * trib_h[k]                         # storey force at level k
            ids = [key[(i, j, k)] for j in range(ny + 1) for i in range(nx + 1)]
            P[ids, axis] += F / len(ids)                              # floors spread it to every joint
        return P

    sc.cases["W_x"] = (wind(0, ys), np.zeros((len(cells), 3)))
    sc.cases["W_y"] = (wind(1, xs), np.zeros((len(cells), 3)))
    return sc


def _diameters(props) -> np.ndarray:
    """Outside diameter of circular hollow members from their area and second moment:
    I = A (d^2 + di^2) / 16 and A = pi (d^2 - di^2) / 4  give  d^2 = 8 I / A + 2 A / pi."""
    return np.sqrt(8 * props["Iy"] / props["A"] + 2 * props["A"] / math.pi)


SCENARIOS = (workshop_portal, footbridge, lattice_mast, storage_building)


def build_scenarios() -> list[Scenario]:
    return [f() for f in SCENARIOS]


# ------------------------------------------------------------------ fields and writers

def cell_fields(sc: Scenario, results: dict) -> dict:
    p = sc.props
    f = {k: p[k].copy() for k in ("E", "G", "A", "Iy", "Iz", "J", "Iw")}
    f["orientation"] = p["orientation"].copy()
    f["bar"] = p["bar"].astype(np.int32)
    f["member"] = p["member"].astype(np.int32)
    for name, res in results.items():
        f[f"axial_force.{name}"] = np.array(res.axial, float)
    return f


def point_fields(results: dict) -> dict:
    f = {}
    for name, res in results.items():
        u = np.ascontiguousarray(res.displacements[:, :3])
        r = np.ascontiguousarray(res.displacements[:, 3:])
        f[f"displacement.{name}"] = u
        f[f"rotation.{name}"] = r
    return f


def write_vtu(sc: Scenario, results: dict, path: Path):
    pd = {"restraint": sc.restraint.astype(np.int32), **point_fields(results)}
    mesh = meshio.Mesh(sc.nodes, [("line", sc.cells)], point_data=pd,
                       cell_data={k: [v] for k, v in cell_fields(sc, results).items()})
    meshio.write(path, mesh, file_format="vtu", binary=True)


@contextmanager
def _cwd(path: Path):
    old = os.getcwd()
    os.chdir(path)
    try:
        yield
    finally:
        os.chdir(old)


def write_xdmf(sc: Scenario, results: dict, path: Path):
    """XDMF time series: step k (time k + 1) holds load case k as plain field names."""
    const = cell_fields(sc, {})
    # meshio writes the .h5 file into the current folder: write from the target folder
    with _cwd(path.parent), meshio.xdmf.TimeSeriesWriter(path.name) as w:
        w.write_points_cells(sc.nodes, [("line", sc.cells)])
        for k, (name, res) in enumerate(results.items()):
            pd = {"displacement": np.ascontiguousarray(res.displacements[:, :3]),
                  "rotation": np.ascontiguousarray(res.displacements[:, 3:])}
            if k == 0:
                pd = {"restraint": sc.restraint.astype(np.int32), **pd}
            cd = {key: [v] for key, v in const.items()}
            cd["axial_force"] = [np.array(res.axial, float)]
            w.write_data(float(k + 1), point_data=pd, cell_data=cd)


def write_msh(sc: Scenario, results: dict, path: Path):
    """Gmsh MSH 4.1 binary: members as physical group 'members' (dimension 1), every
    support point a vertex cell in the physical group (dimension 0) of its bearing type."""
    n = len(sc.nodes)
    cells = [("line", sc.cells)]
    phys = [np.full(len(sc.cells), 1, np.int32)]
    geom = [np.full(len(sc.cells), 1, np.int32)]
    dim_tags = np.column_stack([np.ones(n, np.int32), np.ones(n, np.int32)])
    field_data = {"members": np.array([1, 1])}
    ent = 0
    for g, (name, (ids, _fix)) in enumerate(sc.supports.items()):
        field_data[name] = np.array([100 + g, 0])
        for node in ids:
            ent += 1
            cells.append(("vertex", np.array([[node]])))
            phys.append(np.array([100 + g], np.int32))
            geom.append(np.array([ent], np.int32))
            dim_tags[node] = (0, ent)
    cf = cell_fields(sc, results)
    cell_data = {}
    for k, v in cf.items():
        filler = np.zeros((1,) + v.shape[1:], v.dtype)
        cell_data[k] = [v] + [filler] * (len(cells) - 1)
    cell_data["gmsh:physical"] = phys
    cell_data["gmsh:geometrical"] = geom
    pd = {**point_fields(results), "gmsh:dim_tags": dim_tags}
    mesh = meshio.Mesh(sc.nodes, cells, point_data=pd, cell_data=cell_data, field_data=field_data)
    meshio.write(path, mesh, file_format="gmsh", binary=True)


def write_study(sc: Scenario, path: Path):
    lines = [f"# Study file for {sc.name}.msh: supports from the Gmsh physical groups (point sets).",
             "", "[units]", 'force = "N"', 'length = "m"', ""]
    for name, (_ids, fix) in sc.supports.items():
        lines += ["[[supports]]", f'set = "{name}"', f"fix = {list(fix)}", ""]
    path.write_text("\n".join(lines), encoding="utf-8")


def write_combinations(sc: Scenario, csv_path: Path, study_path: Path):
    """The storage building's combination table (CSV) and study file with the envelope."""
    names = list(sc.cases)
    rows = ["name," + ",".join(names)]
    for cname, f in STORAGE_COMBINATIONS.items():
        rows.append(cname + "," + ",".join(f"{f[k]:g}" if k in f else "" for k in names))
    csv_path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    lines = [f"# Study file for {sc.name}.vtu: the worst combination over factor ranges (envelope).",
             f"# Listed combinations: {csv_path.name} (--combinations); basic cases are characteristic",
             "# values (axial_force.G, axial_force.Q, axial_force.W_x, axial_force.W_y).",
             "", "[units]", 'force = "N"', 'length = "m"', "", "[envelope]"]
    lines += [f"{k} = [{lo:g}, {hi:g}]".replace("[0,", "[0.0,").replace("[1,", "[1.0,")
              for k, (lo, hi) in STORAGE_ENVELOPE.items()]
    lines += ['exclusive = [["W_x", "W_y"]]     # wind along one axis at a time',
              "# solve the listed combinations too (default true: skip those certified above the limit)",
              "screen = false", ""]
    study_path.write_text("\n".join(lines), encoding="utf-8")


def write_scenario(sc: Scenario, results: dict, out: Path) -> list[Path]:
    written = []
    if "vtu" in sc.formats:
        written.append(out / f"{sc.name}.vtu")
        write_vtu(sc, results, written[-1])
    if "xdmf" in sc.formats:
        written.append(out / f"{sc.name}.xdmf")
        write_xdmf(sc, results, written[-1])
        written.append(out / f"{sc.name}.h5")
    if "msh" in sc.formats:
        written.append(out / f"{sc.name}.msh")
        write_msh(sc, results, written[-1])
        written.append(out / f"{sc.name}.study.toml")
        write_study(sc, written[-1])
    if "combinations" in sc.formats:
        written += [out / f"{sc.name}.combinations.csv", out / f"{sc.name}.study.toml"]
        write_combinations(sc, written[-2], written[-1])
    return written


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description="Write framebuckle's sample meshes.")
    ap.add_argument("--out", default=str(HERE), help="output folder (default: beside this script)")
    args = ap.parse_args(argv)
    out = Path(args.out)
    out.mkdir(parents=True, exist_ok=True)
    for sc in build_scenarios():
        results = analyse(sc)
        paths = write_scenario(sc, results, out)
        cmp = {k: float(r.axial.min()) for k, r in results.items()}
        print(f"{sc.name}: {len(sc.nodes)} points, {len(sc.cells)} cells; largest compression "
              + ", ".join(f"{k} {-v / 1e3:.1f} kN" for k, v in cmp.items()))
        print("  wrote " + ", ".join(p.name for p in paths))
    return 0


if __name__ == "__main__":
    sys.exit(main())
