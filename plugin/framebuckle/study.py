"""The optional study file (TOML): field names, tables, supports, settings.

Every key is checked against :data:`SCHEMA`; an unknown key is an error that
names it and suggests the closest valid key.  Other stages add their own
tables to :data:`SCHEMA` (one place, so the contract stays readable).
"""

from __future__ import annotations

import difflib
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from . import units
from .errors import InputError

#: Field names the reader looks for, and their defaults in the file.
FIELD_DEFAULTS = {
    "axial_force": "axial_force", "E": "E", "G": "G", "A": "A", "Iy": "Iy", "Iz": "Iz",
    "J": "J", "Ip": "Ip", "Iw": "Iw", "orientation": "orientation", "bar": "bar",
    "restraint": "restraint", "member": "member",
    "release_start": "release_start", "release_end": "release_end",
    "displacement": "displacement", "rotation": "rotation", "Asy": "Asy", "Asz": "Asz",
    "moment_start": "moment_start", "moment_end": "moment_end",
    "warping_restraint": "warping_restraint",
}

_num = (int, float)
_SECTION_KEYS = {k: _num for k in ("A", "Iy", "Iz", "J", "Ip", "Iw", "fy", "E", "G", "Asy", "Asz")}

#: Allowed keys: a dict is a table, a tuple of types a leaf, "TABLE_OF" a table
#: whose keys are free (integer ids) and whose values follow the inner schema.
SCHEMA: dict[str, Any] = {
    "analysis": {"modes": (int,), "subdivide": (int,), "planar": (bool, str),
                 "cases": (list,), "eigensolver": (str,), "mesh_check": (bool, str),
                 "moment_terms": (bool, str), "warping": (str,), "compression": (str,),
                 "solver": (str,)},
    "warping": {"supports": (str,), "points": (list,)},
    "units": {"force": (str,), "length": (str,), "stress": (str,)},
    "fields": {k: (str,) for k in FIELD_DEFAULTS},
    "sections": {"key": (str,), "values": ("TABLE_OF", _SECTION_KEYS)},
    "materials": {"key": (str,), "values": ("TABLE_OF", _SECTION_KEYS)},
    "supports": ("LIST_OF", {"set": (str,), "box": {"min": (list,), "max": (list,)},
                             "fix": (list, str), "points": (list,)}),
    "preload": {"case": (str,), "factor": (int, float)},
    "releases": ("LIST_OF", {"set": (str,), "member": (list,), "cells": (list,),
                             "start": (list, str), "end": (list, str)}),
    # engineering check (check.py, codecheck.py, participation.py, effective.py)
    "checks": {"min_alpha": _num, "codes": (list,), "analysis": (str,), "en1993_elastic_limit": _num,
               "en1993_plastic_limit": _num, "en1993_amplify_limit": _num, "aisc_alpha": _num,
               "aisc_max_B2": _num, "fy": _num, "negligible_compression": _num, "twist_limit": _num,
               "sway_limit": _num, "energy_cut": _num, "member_share": _num, "sway_search_modes": (int,), "member_min_alpha": _num,
               "allow_all_tension": (bool,)},
    "imperfection": {"case": (str,), "mode": (int,), "amplitude": _num, "e0": _num, "curve": (str,),
                     "W": _num, "fy": _num, "gamma_M1": _num, "alpha_ult_k": _num, "member": (int,)},
    "storeys": ("LIST_OF", {"name": (str,), "case": (str,), "P_story": _num, "P_e_story": _num,
                            "H": _num, "height": _num, "drift": _num, "P_mf": _num, "R_M": _num,
                            "level": _num}),
}

#: sign conventions of the axial forces in the file: the sign of a compressive force
COMPRESSION = ("negative", "positive")

SUPPORT_KINDS = {"fixed": [1, 1, 1, 1, 1, 1], "pinned": [1, 1, 1, 0, 0, 0],
                 "roller_z": [0, 0, 1, 0, 0, 0]}


@dataclass(frozen=True)
class Study:
    data: dict = field(default_factory=dict)
    path: str | None = None

    def get(self, *keys, default=None):
        d = self.data
        for k in keys:
            if not isinstance(d, dict) or k not in d:
                return default
            d = d[k]
        return d

    def field_name(self, ours: str) -> str:
        return self.get("fields", ours, default=FIELD_DEFAULTS.get(ours, ours))

    @property
    def units(self) -> dict:
        """Declared ``[units]``: force, length, stress (None where not given)."""
        return units.declared(self.data, self.source)

    @property
    def compression_positive(self) -> bool:
        return self.get("analysis", "compression", default="negative") == "positive"

    @property
    def source(self) -> str:
        return self.path or "<study>"


def load_study(path: str | Path | None) -> Study:
    if path is None:
        return Study()
    p = Path(path)
    try:
        text = p.read_bytes().decode("utf-8")
    except FileNotFoundError:
        raise InputError("study file not found", source=str(p)) from None
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"cannot read study file: {exc}", source=str(p)) from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"not valid TOML: {exc}", source=str(p)) from None
    return study_from_dict(data, str(p))


def study_from_dict(data: dict, source: str = "<study>") -> Study:
    """A checked study; stress values are converted to the declared force / length^2
    (see :mod:`framebuckle.units`)."""
    _validate(data, SCHEMA, "", source)
    comp = data.get("analysis", {}).get("compression", "negative")
    if comp not in COMPRESSION:
        raise InputError(f"[analysis] compression = '{comp}' is not one of {', '.join(COMPRESSION)} "
                         f"(\"negative\": tension positive, the default)", source=source)
    return Study(units.convert_study(data, units.stress_factor(units.declared(data, source))), source)


def _validate(data, schema, prefix, source):
    if isinstance(schema, tuple) and schema and schema[0] == "LIST_OF":
        if not isinstance(data, list):
            raise InputError(f"key '{prefix}' must be an array of tables ([[{prefix}]])", source=source)
        for i, item in enumerate(data):
            _validate(item, schema[1], f"{prefix}[{i}]", source)
        return
    if isinstance(schema, tuple) and schema and schema[0] == "TABLE_OF":
        if not isinstance(data, dict):
            raise InputError(f"key '{prefix}' must be a table", source=source)
        for k, v in data.items():
            _validate(v, schema[1], f"{prefix}.{k}", source)
        return
    if isinstance(schema, dict):
        if not isinstance(data, dict):
            raise InputError(f"key '{prefix}' must be a table", source=source)
        for k, v in data.items():
            name = f"{prefix}.{k}" if prefix else k
            if k not in schema:
                close = difflib.get_close_matches(k, list(schema), n=1)
                hint = f"; did you mean '{close[0]}'?" if close else f"; valid keys: {', '.join(schema)}"
                raise InputError(f"unknown key '{name}'{hint}", source=source)
            _validate(v, schema[k], name, source)
        return
    types = schema
    if isinstance(data, bool) and bool not in types:
        raise InputError(f"key '{prefix}' has the wrong type (bool); expected "
                         f"{' or '.join(t.__name__ for t in types)}", source=source)
    if not isinstance(data, types):
        raise InputError(f"key '{prefix}' has the wrong type ({type(data).__name__}); expected "
                         f"{' or '.join(t.__name__ for t in types)}", source=source)
