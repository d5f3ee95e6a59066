"""The ``check`` stage's settings from the study file: ``[checks]`` validated, ``[[storeys]]``,
the yield strength per element."""

from __future__ import annotations

import math

import numpy as np

from ..errors import InputError
from ..io.study import Study
from ..model.plausible import model_extent, storey_errors


def _settings(study: Study) -> dict:
    return dict(study.get("checks", default={}) or {})


def _storeys(study: Study, result=None) -> list:
    out = []
    for i, s in enumerate(study.get("storeys", default=[]) or []):
        where = f"[[storeys]] entry {i + 1}"
        if "P_story" not in s and "level" not in s:
            raise InputError(f"{where}: give P_story (AISC 360-16 Appendix 8) or level (the floor "
                             f"elevation, for the storey-drift estimate)", source=study.source)
        if "level" in s and not math.isfinite(s["level"]):
            raise InputError(f"{where}: level must be a finite number, got {s['level']}", source=study.source)
        if "P_story" not in s:
            s = dict(s)
            s.setdefault("name", str(i + 1))
            out.append(s)
            continue
        if "P_e_story" not in s and not all(k in s for k in ("H", "height", "drift")):
            raise InputError(f"{where}: give P_e_story, or H, height and drift (AISC 360-16 Eq. A-8-7)",
                             source=study.source)
        for k in ("P_story", "P_e_story", "H", "height", "drift"):
            if k in s and not float(s[k]) > 0:
                raise InputError(f"{where}: {k} must be positive, got {s[k]}", source=study.source)
        if result is not None:
            storey_errors(s, where, [c.name for c in result.cases], model_extent(result.model), study.source)
        s = dict(s)
        s.setdefault("name", str(i + 1))
        out.append(s)
    return out


def _fy(result, settings) -> np.ndarray | None:
    fy = result.input.extra.get("fy")
    default = settings.get("fy")
    if fy is None:
        return None if default is None else np.full(result.model.n_elements, float(default))
    fy = np.asarray(fy, float)
    if default is not None:
        fy = np.where(np.isfinite(fy), fy, float(default))
    return fy


def _num(x):
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def _validate_settings(st: dict, source: str):
    for code in st.get("codes", []):
        if code not in ("EN1993", "AISC360"):
            raise InputError(f"[checks] codes: unknown code '{code}' (EN1993, AISC360)", source=source)
    if st.get("analysis", "elastic") not in ("elastic", "plastic"):
        raise InputError(f"[checks] analysis must be \"elastic\" or \"plastic\", got {st['analysis']!r}",
                         source=source)
    for key in ("min_alpha", "en1993_elastic_limit", "en1993_plastic_limit", "en1993_amplify_limit",
                "aisc_alpha", "aisc_max_B2", "fy"):
        if key in st and not (math.isfinite(st[key]) and st[key] > 0):
            raise InputError(f"[checks] {key} must be a positive number, got {st[key]}", source=source)
    if "sway_search_modes" in st and not (isinstance(st["sway_search_modes"], int) and st["sway_search_modes"] >= 1):
        raise InputError(f"[checks] sway_search_modes must be a whole number >= 1, got {st['sway_search_modes']}",
                         source=source)
    if "member_min_alpha" in st and not (math.isfinite(st["member_min_alpha"]) and st["member_min_alpha"] >= 0):
        raise InputError(f"[checks] member_min_alpha must be a number >= 0, got {st['member_min_alpha']}",
                         source=source)
    for key in ("twist_limit", "sway_limit", "energy_cut", "negligible_compression", "member_share"):
        if key in st and not 0 < st[key] <= 1:
            raise InputError(f"[checks] {key} must be in (0, 1], got {st[key]}", source=source)
