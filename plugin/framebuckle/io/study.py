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

from ..model import units
from ..errors import InputError
from ..model.sections import DIMENSION_KEYS

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
#: largest integer a study file may hold (ids, counts): beyond it numpy would overflow
MAX_INT = 2 ** 53


@dataclass(frozen=True)
class ListOf:
    """Schema of an array: every item follows ``item`` (types, or another ListOf);
    ``n`` = required number of items (None: any)."""

    item: Any
    n: int | None = None

    @property
    def __name__(self) -> str:          # used in "expected ..." messages
        inner = self.item if isinstance(self.item, ListOf) else " or ".join(t.__name__ for t in self.item)
        inner = getattr(inner, "__name__", inner)
        return f"array of {'' if self.n is None else f'{self.n} '}{inner}"


_ids = ListOf((int,))
_flags6 = ListOf((int,), 6)
_SECTION_KEYS = {k: _num for k in ("A", "Iy", "Iz", "J", "Ip", "Iw", "fy", "E", "G", "Asy", "Asz")}
# sections from shape and dimensions (framebuckle.model.sections)
_SHAPE_KEYS = {"shape": (str,), **{k: _num for k in DIMENSION_KEYS}}

#: Allowed keys: a dict is a table, a tuple of types a leaf, "TABLE_OF" a table
#: whose keys are free (integer ids) and whose values follow the inner schema.
SCHEMA: dict[str, Any] = {
    "analysis": {"modes": (int,), "subdivide": (int,), "planar": (bool, str),
                 "cases": (ListOf((str,)),), "eigensolver": (str,), "mesh_check": (bool, str),
                 "moment_terms": (bool, str), "warping": (str,), "compression": (str,),
                 "combinations_file": (str,), "solver": (str,)},
    "warping": {"supports": (str,), "points": (_ids,)},
    "units": {"force": (str,), "length": (str,), "stress": (str,)},
    "fields": {k: (str,) for k in FIELD_DEFAULTS},
    "sections": {"key": (str,), "values": ("TABLE_OF", {**_SECTION_KEYS, **_SHAPE_KEYS})},
    "materials": {"key": (str,), "values": ("TABLE_OF", _SECTION_KEYS)},
    "supports": ("LIST_OF", {"set": (str,), "box": {"min": (ListOf(_num, 3),), "max": (ListOf(_num, 3),)},
                             "fix": (_flags6, str), "points": (_ids,)}),
    "preload": {"case": (str,), "factor": (int, float)},
    "releases": ("LIST_OF", {"set": (str,), "member": (_ids,), "cells": (_ids,),
                             "start": (_flags6, str), "end": (_flags6, str)}),
    # engineering check (check.py, codecheck.py, participation.py, effective.py)
    "checks": {"min_alpha": _num, "codes": (ListOf((str,)),), "analysis": (str,), "en1993_elastic_limit": _num,
               "en1993_plastic_limit": _num, "en1993_amplify_limit": _num, "aisc_alpha": _num,
               "aisc_max_B2": _num, "fy": _num, "negligible_compression": _num, "twist_limit": _num,
               "sway_limit": _num, "energy_cut": _num, "member_share": _num, "sway_search_modes": (int,), "member_min_alpha": _num,
               "allow_all_tension": (bool,)},
    "imperfection": {"case": (str,), "mode": (int,), "amplitude": _num, "e0": _num, "curve": (str,),
                     "W": _num, "fy": _num, "gamma_M1": _num, "alpha_ult_k": _num, "member": (int,)},
    # load combinations and the envelope over factor ranges (combinations.py, envelope.py):
    # their keys are the input's case names, checked there
    "combinations": ("FREE_TABLE",),
    "envelope": ("FREE_TABLE",),
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
    (see :mod:`framebuckle.model.units`)."""
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
    if isinstance(schema, tuple) and schema and schema[0] == "FREE_TABLE":
        if not isinstance(data, dict):
            raise InputError(f"key '{prefix}' must be a table", source=source)
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
    _leaf(data, schema, prefix, source)


def _type_names(types) -> str:
    return " or ".join(t.__name__ for t in types)


def _leaf(data, types, prefix, source, item=None):
    """Check a value against a tuple of types and :class:`ListOf`; ``item`` = its index in an array."""
    what = f"key '{prefix}'" if item is None else f"key '{prefix}' item {item}"
    lists = [t for t in types if isinstance(t, ListOf)]
    plain = tuple(t for t in types if not isinstance(t, ListOf))
    if isinstance(data, list) and lists:
        spec = lists[0]
        if spec.n is not None and len(data) != spec.n:
            raise InputError(f"{what} must have {spec.n} items, got {len(data)}", source=source)
        for j, v in enumerate(data):
            _leaf(v, spec.item if isinstance(spec.item, tuple) else (spec.item,), prefix, source,
                  j if item is None else f"{item}[{j}]")
        return
    if (isinstance(data, bool) and bool not in plain) or not isinstance(data, plain or ()):
        raise InputError(f"{what} has the wrong type ({type(data).__name__}"
                         f"{' ' + repr(data)[:40] if item is not None else ''}); expected "
                         f"{_type_names(types)}", source=source)
    if isinstance(data, int) and not isinstance(data, bool) and abs(data) > MAX_INT:
        raise InputError(f"{what} = {data} is out of range (at most {MAX_INT} in size)", source=source)
    if isinstance(data, float) and data != data:
        raise InputError(f"{what} is nan; give a number", source=source)
