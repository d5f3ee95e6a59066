"""Section constants from shape and dimensions (pure functions, no I/O).

Axes: the project's local axes (see docs/user/input.md, *Input contract*): local z is the
``orientation`` vector's part perpendicular to the member, local y = z x x.
Every shape here has its depth ``h`` along local **z** and its width ``b``
along local **y**, so ``Iy`` (bending about y, stress ``My z / Iy``) is the
strong axis of an I section or channel whose web lies along the orientation
vector (default orientation: global Z, so a horizontal beam's web is vertical).

Dimensions are in the model's length unit; the constants come out in the same
unit (A: L^2, Iy, Iz, J: L^4, Iw: L^6).

Shapes and their dimensions (``r``, ``ro``, ``ri`` optional, default 0):

* ``I``: doubly symmetric I or H: ``h, b, tw, tf, r`` (root radius)
* ``channel``: ``h, b, tw, tf`` (parallel flanges, sharp corners; flanges point to +y)
* ``RHS``: rectangular hollow ``h, b, t, ro, ri`` (outer / inner corner radius;
  ``ri`` defaults to ``max(ro - t, 0)``); ``SHS``: square hollow ``b, t, ro, ri``
* ``CHS``: circular hollow ``d, t``
* ``rectangle``: solid ``h, b``; ``round``: solid bar ``d``

Shear areas (``Asy``, ``Asz``) are not computed: a row without them stays an
Euler-Bernoulli beam as before; give them in the same row to switch on the
shear-deformable beam.
"""

from __future__ import annotations

import difflib
import math

import numpy as np

PI = math.pi

#: dimensions per shape: (required, optional)
SHAPES = {
    "I": (("h", "b", "tw", "tf"), ("r",)),
    "channel": (("h", "b", "tw", "tf"), ()),
    "RHS": (("h", "b", "t"), ("ro", "ri")),
    "SHS": (("b", "t"), ("ro", "ri")),
    "CHS": (("d", "t"), ()),
    "rectangle": (("h", "b"), ()),
    "round": (("d",), ()),
}
#: every dimension key any shape uses (study-file schema of [sections])
DIMENSION_KEYS = ("h", "b", "tw", "tf", "r", "t", "ro", "ri", "d")
#: constants a shape gives (channels also Ip about the shear centre)
CONSTANTS = ("A", "Iy", "Iz", "J", "Iw")

CHANNEL_WARNING = (
    "section {key}: channel, shear centre {y0:.4g} from the centroid along local y; the beam "
    "element puts the shear centre on the centroid axis, so twist is not coupled with bending "
    "about local y: flexural-torsional load factors of compressed members of this section are "
    "over-estimated (unsafe side); flexural buckling about local z is not affected, Ip is taken "
    "about the shear centre, and lateral-torsional buckling is that of loads through the shear centre")


class DimensionError(ValueError):
    """A dimension is missing, not positive or inconsistent; ``field`` names it."""

    def __init__(self, field: str, message: str):
        super().__init__(message)
        self.field = field


# ---------------------------------------------------------------- fillet (spandrel)


def spandrel(r):
    """Area, centroid distance from each straight edge, and own second moment of a fillet.

    The fillet is the square r x r minus the quarter disc of radius r centred at
    the far corner.  Elementary integration (first and second moments of the
    square and of the quarter disc about an edge):
    ``a = (1 - pi/4) r^2``, ``c = r (10 - 3 pi) / (12 - 3 pi)``,
    ``I_edge = (1 - 5 pi / 16) r^4``, ``I_own = I_edge - a c^2`` (equal about both
    centroidal axes parallel to the edges, by symmetry about the diagonal).
    """
    r = np.asarray(r, float)
    a = (1 - PI / 4) * r ** 2
    c = r * (10 - 3 * PI) / (12 - 3 * PI)
    i_own = (1 - 5 * PI / 16) * r ** 4 - a * c ** 2
    return a, c, i_own


def _rounded_rectangle(b, h, R):
    """A, Iy (depth h along z), Iz of a b x h rectangle with four corners rounded by R."""
    a, c, i_own = spandrel(R)
    A = b * h - 4 * a
    Iy = b * h ** 3 / 12 - 4 * (i_own + a * (h / 2 - c) ** 2)
    Iz = h * b ** 3 / 12 - 4 * (i_own + a * (b / 2 - c) ** 2)
    return A, Iy, Iz


# ---------------------------------------------------------------- shapes


def i_section(h, b, tw, tf, r=0.0) -> dict:
    """Doubly symmetric I section with root radius ``r`` (web along local z).

    * ``A = 2 b tf + (h - 2 tf) tw + (4 - pi) r^2`` (exact with four fillets);
      ``Iy``, ``Iz`` exact: rectangles plus the four fillets (:func:`spandrel`) at
      their centroids, as in the derivation of rolled-section tables (EN 10365 /
      producers' tables compute A and I with the fillets; common practice).
    * ``J = 2/3 (b - 0.63 tf) tf^3 + 1/3 (h - 2 tf) tw^3 + 2 alpha D^4`` with
      ``alpha = (t1/t2)(0.145 + 0.1 r / tf)`` (t1, t2 the smaller and larger of
      tw, tf) and ``D = ((r + tw/2)^2 + (r + tf)^2 - r^2) / (2 r + tf)``, the
      diameter of the circle inscribed at the web-flange junction: the flange
      free-edge reduction and the junction term of El Darwish & Johnston,
      "Torsion of structural shapes", J. Struct. Div. ASCE 91 (1965), the formula
      producers' tables of rolled I sections use for I_t (from memory).
    * ``Iw = tf b^3 (h - tf)^2 / 24``: flanges only, about the shear centre
      (Timoshenko & Gere 1961, sec. 5.10), fillets and web ignored, as the tables.
    """
    a, c, i_own = spandrel(r)
    hw = h - 2 * tf
    A = 2 * b * tf + hw * tw + 4 * a
    Iy = (b * h ** 3 - (b - tw) * hw ** 3) / 12 + 4 * (i_own + a * (h / 2 - tf - c) ** 2)
    Iz = (2 * tf * b ** 3 + hw * tw ** 3) / 12 + 4 * (i_own + a * (tw / 2 + c) ** 2)
    t1, t2 = np.minimum(tw, tf), np.maximum(tw, tf)
    alpha = t1 / t2 * (0.145 + 0.1 * r / tf)
    D = ((r + tw / 2) ** 2 + (r + tf) ** 2 - r ** 2) / (2 * r + tf)
    J = 2 / 3 * (b - 0.63 * tf) * tf ** 3 + hw * tw ** 3 / 3 + 2 * alpha * D ** 4
    Iw = tf * b ** 3 * (h - tf) ** 2 / 24
    return {"A": A, "Iy": Iy, "Iz": Iz, "J": J, "Iw": Iw}


def channel(h, b, tw, tf) -> dict:
    """Channel with parallel flanges, sharp corners; web along local z, flanges toward +y.

    A, Iy, Iz exact for the three rectangles (centroid ``yc`` from the back of the
    web).  Thin-walled, on the mid-lines ``b' = b - tw/2``, ``h' = h - tf``:
    shear centre ``e = 3 b'^2 tf / (6 b' tf + h' tw)`` from the web mid-line on the
    side away from the flanges, and about it
    ``Iw = tf b'^3 h'^2 (3 b' tf + 2 h' tw) / (12 (6 b' tf + h' tw))``
    (Timoshenko & Gere 1961, secs. 5.10-5.11; Trahair, *Flexural-Torsional
    Buckling of Structures*, 1993, ch. 2).  ``J = (2 b tf^3 + (h - 2 tf) tw^3) / 3``
    (thin-walled open sum).  ``y0`` = shear centre minus centroid along y (negative),
    ``Ip = Iy + Iz + A y0^2`` the polar moment about the shear centre.
    """
    hw = h - 2 * tf
    A = 2 * b * tf + hw * tw
    Iy = (b * h ** 3 - (b - tw) * hw ** 3) / 12
    yc = (tf * b ** 2 + hw * tw ** 2 / 2) / A
    Iz = 2 * tf * b ** 3 / 3 + hw * tw ** 3 / 3 - A * yc ** 2
    J = (2 * b * tf ** 3 + hw * tw ** 3) / 3
    bm, hm = b - tw / 2, h - tf
    den = 6 * bm * tf + hm * tw
    e = 3 * bm ** 2 * tf / den
    Iw = tf * bm ** 3 * hm ** 2 * (3 * bm * tf + 2 * hm * tw) / (12 * den)
    y0 = (tw / 2 - e) - yc
    return {"A": A, "Iy": Iy, "Iz": Iz, "J": J, "Iw": Iw, "Ip": Iy + Iz + A * y0 ** 2,
            "y0": y0, "yc": yc}


def rhs(h, b, t, ro=0.0, ri=None) -> dict:
    """Rectangular hollow section (depth h along z), corner radii ``ro`` outside, ``ri`` inside.

    A, Iy, Iz exact: outer rounded rectangle minus inner one (:func:`spandrel`).
    Torsion, EN 10219-2:2006 Annex B / EN 10210-2 (from memory):
    ``J = t^3 p / 3 + 2 K A_h`` with ``R_c = (ro + ri) / 2``,
    ``p = 2 ((b - t) + (h - t)) - 2 R_c (4 - pi)`` (mid-line perimeter),
    ``A_h = (b - t)(h - t) - R_c^2 (4 - pi)`` (area inside the mid-line),
    ``K = 2 A_h t / p``; i.e. Bredt's ``4 A_h^2 t / p`` plus the open-wall term.
    ``Iw = 0``: warping of closed sections is negligible beside St Venant torsion
    (common practice; the tables give none).
    """
    ri = np.maximum(np.asarray(ro, float) - t, 0.0) if ri is None else ri
    Ao, Iyo, Izo = _rounded_rectangle(b, h, ro)
    Ai, Iyi, Izi = _rounded_rectangle(b - 2 * t, h - 2 * t, ri)
    Rc = (ro + ri) / 2
    p = 2 * ((b - t) + (h - t)) - 2 * Rc * (4 - PI)
    Ah = (b - t) * (h - t) - Rc ** 2 * (4 - PI)
    J = t ** 3 * p / 3 + 4 * Ah ** 2 * t / p
    return {"A": Ao - Ai, "Iy": Iyo - Iyi, "Iz": Izo - Izi, "J": J, "Iw": 0.0 * J}


def chs(d, t) -> dict:
    """Circular hollow section: exact ``A``, ``I``, ``J = 2 I`` (Saint-Venant, tube), ``Iw = 0``."""
    di = d - 2 * t
    A = PI / 4 * (d ** 2 - di ** 2)
    I = PI / 64 * (d ** 4 - di ** 4)
    return {"A": A, "Iy": I, "Iz": I, "J": 2 * I, "Iw": 0.0 * I}


def round_bar(d) -> dict:
    """Solid round bar: ``A = pi d^2/4``, ``I = pi d^4/64``, ``J = pi d^4/32``, ``Iw = 0``."""
    I = PI * d ** 4 / 64
    return {"A": PI * d ** 2 / 4, "Iy": I, "Iz": I, "J": 2 * I, "Iw": 0.0 * I}


def rectangle_torsion(a, c, terms: int = 100):
    """St Venant torsion constant of a solid a x c rectangle (any order of sides).

    Timoshenko & Goodier, *Theory of Elasticity*, 3rd ed. 1970, sec. 109:
    ``J = a c^3 / 3 [1 - (192 / pi^5)(c/a) sum_{n=1,3,5..} tanh(n pi a / (2c)) / n^5]``
    with ``a >= c``; the series is summed to ``terms`` odd terms (remainder below
    1e-9 relative for 100 terms).
    """
    a, c = np.maximum(a, c), np.minimum(a, c)
    n = 2.0 * np.arange(terms) + 1
    ratio = np.asarray(a / c, float)[..., None]
    s = (np.tanh(n * PI * ratio / 2) / n ** 5).sum(-1)
    return a * c ** 3 / 3 * (1 - 192 / PI ** 5 * (c / a) * s)


def rectangle(h, b) -> dict:
    """Solid rectangle (h along z): exact ``A``, ``I``; ``J`` by :func:`rectangle_torsion`.

    ``Iw = 0``: the warping constant of a thin strip, ``b^3 h^3 / 144``, would add
    ``pi^2 E b^2 / (48 G L^2)`` (about ``0.5 (b/L)^2``) to J; neglecting it is on
    the safe side (lower torsional stiffness) and small at member lengths.
    """
    J = rectangle_torsion(h, b)
    return {"A": b * h, "Iy": b * h ** 3 / 12, "Iz": h * b ** 3 / 12, "J": J, "Iw": 0.0 * J}


# ---------------------------------------------------------------- checks and dispatch


def _less(dims, small, bound, text):
    if not dims[small] < bound:
        raise DimensionError(small, f"{small} = {dims[small]:g} must be less than {text} = {bound:g}")


def check_dimensions(shape: str, dims: dict) -> dict:
    """Plausibility of a shape's dimensions; returns them as floats (with defaults).

    Raises :class:`DimensionError` naming the first field at fault.
    """
    if shape not in SHAPES:
        close = difflib.get_close_matches(shape, list(SHAPES), n=1)
        hint = f"; did you mean '{close[0]}'?" if close else ""
        raise DimensionError("shape", f"unknown shape '{shape}'{hint}; shapes: {', '.join(SHAPES)}")
    need, opt = SHAPES[shape]
    extra = [k for k in dims if k not in need + opt]
    if extra:
        raise DimensionError(extra[0], f"'{extra[0]}' is not a dimension of shape '{shape}'; its "
                                       f"dimensions are {', '.join(need + opt)}")
    missing = [k for k in need if k not in dims]
    if missing:
        raise DimensionError(missing[0], f"shape '{shape}' needs {', '.join(need)}; "
                                         f"missing {', '.join(missing)}")
    d = {k: float(v) for k, v in dims.items()}
    for k, v in d.items():
        if not math.isfinite(v) or v < 0 or (v == 0 and k in need):
            raise DimensionError(k, f"{k} = {v:g} must be {'positive' if k in need else '>= 0'}")
    if shape in ("I", "channel"):
        _less(d, "tf", d["h"] / 2, "h/2")
        _less(d, "tw", d["b"], "b")
        r = d.setdefault("r", 0.0)
        if r and d["tw"] + 2 * r > d["b"]:
            raise DimensionError("r", f"r = {r:g}: the fillets do not fit the flange (tw + 2 r = "
                                      f"{d['tw'] + 2 * r:g} > b = {d['b']:g})")
        if r and 2 * d["tf"] + 2 * r > d["h"]:
            raise DimensionError("r", f"r = {r:g}: the fillets do not fit the web (2 tf + 2 r = "
                                      f"{2 * d['tf'] + 2 * r:g} > h = {d['h']:g})")
    elif shape in ("RHS", "SHS"):
        if shape == "SHS":
            d["h"] = d["b"]
        side = min(d["h"], d["b"])
        _less(d, "t", side / 2, "half the smaller side")
        ro = d.setdefault("ro", 0.0)
        ri = d.setdefault("ri", max(ro - d["t"], 0.0))
        if ro > side / 2:
            raise DimensionError("ro", f"ro = {ro:g} must not exceed half the smaller side = {side / 2:g}")
        if ri > side / 2 - d["t"]:
            raise DimensionError("ri", f"ri = {ri:g} must not exceed half the smaller inner side = "
                                       f"{side / 2 - d['t']:g}")
        if ri > ro:
            raise DimensionError("ri", f"ri = {ri:g} must not exceed ro = {ro:g}")
    elif shape == "CHS":
        _less(d, "t", d["d"] / 2, "d/2")
    return d


def constants(shape: str, dims: dict) -> dict:
    """``{"A", "Iy", "Iz", "J", "Iw"}`` (channels also ``Ip``, ``y0``, ``yc``) as floats."""
    d = check_dimensions(shape, dims)
    if shape == "I":
        out = i_section(d["h"], d["b"], d["tw"], d["tf"], d["r"])
    elif shape == "channel":
        out = channel(d["h"], d["b"], d["tw"], d["tf"])
    elif shape in ("RHS", "SHS"):
        out = rhs(d["h"], d["b"], d["t"], d["ro"], d["ri"])
    elif shape == "CHS":
        out = chs(d["d"], d["t"])
    elif shape == "rectangle":
        out = rectangle(d["h"], d["b"])
    else:
        out = round_bar(d["d"])
    return {k: float(v) for k, v in out.items()}


def table_rows(values: dict) -> tuple[dict, dict, list]:
    """Fill the constants of the ``[sections.values]`` rows given by shape and dimensions.

    Returns ``(rows, info, warnings)``: the rows with ``A, Iy, Iz, J, Iw`` (and a
    channel's ``Ip``) filled in (a constant also given in the row wins and is listed
    under ``given``), per row key the summary entry, and warnings.  Raises
    :class:`DimensionError` with ``key`` set to the row at fault.
    """
    rows, info, warnings = {}, {}, []
    for key, row in values.items():
        dims = {k: v for k, v in row.items() if k in DIMENSION_KEYS}
        if "shape" not in row:
            if dims:
                err = DimensionError(next(iter(dims)), f"gives dimension(s) {', '.join(dims)} but "
                                                        f"no 'shape' ({', '.join(SHAPES)})")
                err.key = key
                raise err
            rows[key] = dict(row)
            continue
        try:
            c = constants(row["shape"], dims)
        except DimensionError as err:
            err.key = key
            raise
        given = [k for k in CONSTANTS + ("Ip",) if k in row]
        new = {k: v for k, v in row.items() if k not in DIMENSION_KEYS and k != "shape"}
        for k in CONSTANTS + (("Ip",) if "Ip" in c else ()):
            new.setdefault(k, c[k])
        rows[key] = new
        entry = {"shape": row["shape"], "dimensions": {k: float(v) for k, v in dims.items()}}
        entry.update({k: c[k] for k in CONSTANTS})
        if row["shape"] == "channel":
            entry.update(Ip=c["Ip"], shear_centre_y=c["y0"])
            warnings.append(CHANNEL_WARNING.format(key=key, y0=c["y0"]))
        if given:
            entry["given"] = {k: float(row[k]) for k in given}
        info[str(key)] = entry
    if any("Ip" in r for r in rows.values()):
        # a channel's Ip is about its shear centre; the other rows keep the default Iy + Iz
        for r in rows.values():
            if "Ip" not in r and "Iy" in r and "Iz" in r:
                r["Ip"] = float(r["Iy"]) + float(r["Iz"])
    if not any(r.get("Iw", 0) > 0 for r in rows.values()):
        # only closed / solid sections: leave Iw out (no warping treatment, as without Iw)
        for key, r in rows.items():
            if "Iw" in r and "Iw" not in values[key]:
                del r["Iw"]
    if any("Iw" in r for r in rows.values()) and any("shape" in v for v in values.values()):
        lacking = [k for k, r in rows.items() if "Iw" not in r]
        if lacking:
            err = DimensionError("Iw", "gives no Iw while rows given by shape do (Iw is then needed "
                                       "for every row: the warping constant of this section, 0 for "
                                       "closed or solid sections)")
            err.key = lacking[0]
            raise err
    return rows, info, warnings
