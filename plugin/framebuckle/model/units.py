"""Declared units (study ``[units]``) and the one conversion they need.

framebuckle works in the user's own force and length units: coordinates,
section constants (A in length^2, I and J in length^4, Iw in length^6),
axial forces (force) and end moments (force x length) are used as given, so
every output (N_Ed, N_cr, lengths, effective lengths, imperfection
amplitudes, meshes) is in the units of the input.  Only stresses (E, G, fy)
have a unit of their own; when ``[units]`` declares ``force``, ``length`` and
``stress`` the stresses are converted at read time to force / length^2, which
makes the model consistent.  Load factors are dimensionless and so do not
depend on the units chosen.

Examples: kN, mm and MPa: E in MPa (N/mm^2) times 1e-3 gives kN/mm^2;
N, m and MPa: E times 1e6 gives N/m^2 (Pa).
"""

from __future__ import annotations

import copy

from ..errors import InputError

#: decimal exponent of one unit in SI (N, m, Pa): one unit = 10 ** exponent
FORCE = {"N": 0, "kN": 3, "MN": 6}
LENGTH = {"m": 0, "mm": -3}
STRESS = {"Pa": 0, "kPa": 3, "MPa": 6, "GPa": 9}

#: study values that are stresses (converted with the mesh's E, G and fy)
STRESS_KEYS = ("E", "G", "fy")


def declared(data: dict, source: str) -> dict:
    """``{"force", "length", "stress"}`` of a study's ``[units]`` (None where not given),
    with the names checked against the tables."""
    u = dict((data or {}).get("units", {}) or {})
    for key, table in (("force", FORCE), ("length", LENGTH), ("stress", STRESS)):
        if key in u and u[key] not in table:
            raise InputError(f"[units] {key} = '{u[key]}' is not one of {', '.join(table)}", source=source)
    if "stress" in u and not ("force" in u and "length" in u):
        raise InputError(f"[units] stress = '{u['stress']}' needs force and length too: stresses are "
                         f"converted to force / length^2", source=source)
    return {"force": u.get("force"), "length": u.get("length"), "stress": u.get("stress")}


def stress_factor(units: dict) -> float:
    """Factor from the declared stress unit to force / length^2 (1 when not all three are given)."""
    if not (units.get("force") and units.get("length") and units.get("stress")):
        return 1.0
    return 10.0 ** (STRESS[units["stress"]] + 2 * LENGTH[units["length"]] - FORCE[units["force"]])


def internal_stress(units: dict) -> str | None:
    """Name of the stress unit the model uses inside (force / length^2)."""
    if not (units.get("force") and units.get("length")):
        return units.get("stress")
    return f"{units['force']}/{units['length']}^2"


def convert_study(data: dict, factor: float) -> dict:
    """A copy of the study data with its stress values ([sections], [materials] E, G, fy;
    [checks] fy; [imperfection] fy) times ``factor``."""
    if factor == 1.0:
        return data
    out = copy.deepcopy(data)
    for table in ("sections", "materials"):
        for row in (out.get(table, {}).get("values", {}) or {}).values():
            for k in STRESS_KEYS:
                if k in row:
                    row[k] = float(row[k]) * factor
    for table in ("checks", "imperfection"):
        if "fy" in out.get(table, {}):
            out[table]["fy"] = float(out[table]["fy"]) * factor
    return out


def note(units: dict) -> str | None:
    """The sentence that says what was converted, or None."""
    f = stress_factor(units)
    if not units.get("stress") or not (units.get("force") and units.get("length")):
        return None
    inner = internal_stress(units)
    how = "used as given" if f == 1.0 else f"converted to {inner} (x {f:g})"
    return (f"[units]: forces in {units['force']}, lengths in {units['length']}; stresses (E, G, fy) "
            f"declared in {units['stress']} are {how}; every output is in {units['force']} and "
            f"{units['length']}")
