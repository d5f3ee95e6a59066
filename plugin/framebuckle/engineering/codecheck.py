r"""Code verdicts from alpha_cr; each verdict names the clause it applies.

EN 1993-1-1:2005

* clause 5.2.1(3): first-order global analysis may be used when
  :math:`\alpha_{cr} \ge 10` for elastic analysis, :math:`\ge 15` for plastic
  analysis;
* clause 5.2.2(5)-(6): sway effects may be allowed for by amplifying the
  horizontal actions of a first-order analysis by
  :math:`1 / (1 - 1/\alpha_{cr})` provided :math:`\alpha_{cr} \ge 3`; below 3
  a second-order analysis is needed.

AISC 360-16 Appendix 8 (approximate second-order analysis), per storey:

.. math::

    B_2 = \frac{1}{1 - \alpha P_{story} / P_{e,story}} \ge 1, \qquad
    P_{e,story} = R_M \frac{H L}{\Delta_H}, \qquad
    R_M = 1 - 0.15 \, P_{mf} / P_{story}

(Eqs. A-8-6, A-8-7, A-8-8), ``alpha`` = 1.0 (LRFD) or 1.6 (ASD).  A storey
with :math:`\alpha P_{story} \ge P_{e,story}` is unstable.

Both EN 1993-1-1 clauses concern instability in a *global sway* mode: ``check`` passes
the lowest load factor of a global sway mode, :math:`\alpha_{cr,sway}`
(:mod:`framebuckle.engineering.globalmode`), or, when no sway mode lies below a bound ``B``, that
certified lower bound (``alpha_min``: :math:`\alpha_{cr,sway} \ge B`).  A lower bound
decides a verdict only when it is at or above the limit; the amplifier from a bound is an
upper bound of the amplifier (safe to use).

Thresholds are arguments (overridable in the study file ``[checks]``).
These verdicts are elastic indicators, not resistances: see ``CAUTIONS``.
"""

from __future__ import annotations

EN_CLAUSE_FIRST_ORDER = "EN 1993-1-1:2005 clause 5.2.1(3)"
EN_CLAUSE_AMPLIFY = "EN 1993-1-1:2005 clause 5.2.2(5)-(6)"
AISC_CLAUSE_B2 = "AISC 360-16 Appendix 8, Eqs. (A-8-6)-(A-8-8)"

EN_ELASTIC = 10.0
EN_PLASTIC = 15.0
EN_AMPLIFY_MIN = 3.0


def en1993_first_order(alpha_cr: float | None, analysis: str = "elastic",
                       elastic_limit: float = EN_ELASTIC, plastic_limit: float = EN_PLASTIC,
                       alpha_min: float | None = None, name: str = "alpha_cr") -> dict:
    """Clause 5.2.1(3): may a first-order global analysis be used?

    ``alpha_min``: a certified lower bound used when ``alpha_cr`` is unknown (None);
    ``name``: how the load factor is called in the text (``alpha_cr,sway``).
    """
    limit = plastic_limit if analysis == "plastic" else elastic_limit
    base = {"code": "EN1993", "clause": EN_CLAUSE_FIRST_ORDER, "check": "first_order_analysis",
            "analysis": analysis, "limit": limit, "alpha_cr": alpha_cr}
    if alpha_cr is None and alpha_min is not None:
        ok = alpha_min >= limit
        text = (f"{name} >= {alpha_min:.4g} (no sway mode below it, by a Sturm count) >= {limit:g}: "
                f"first-order global analysis may be used ({analysis} analysis)" if ok else
                f"{name} >= {alpha_min:.4g} only (no sway mode found below it), less than {limit:g}: "
                f"not decided; raise [checks] sway_search_modes or treat second-order effects")
        return {**base, "alpha_cr_min": alpha_min, "passes": bool(ok), "text": text}
    if alpha_cr is None:
        return {**base, "passes": True,
                "text": "no compressive instability in this case: first-order analysis may be used"}
    ok = alpha_cr >= limit
    text = (f"{name} = {alpha_cr:.4g} >= {limit:g}: first-order global analysis may be used "
            f"({analysis} analysis)" if ok else
            f"{name} = {alpha_cr:.4g} < {limit:g}: second-order effects must be accounted for "
            f"({analysis} analysis)")
    return {**base, "passes": bool(ok), "text": text}


def en1993_amplifier(alpha_cr: float | None, min_alpha: float = EN_AMPLIFY_MIN,
                     alpha_min: float | None = None, name: str = "alpha_cr") -> dict:
    """Clause 5.2.2(5)-(6): sway amplification factor 1/(1 - 1/alpha_cr), allowed for alpha_cr >= 3.

    With only a lower bound ``alpha_min`` the amplifier 1/(1 - 1/alpha_min) is an upper bound.
    """
    base = {"code": "EN1993", "clause": EN_CLAUSE_AMPLIFY, "check": "sway_amplification",
            "limit": min_alpha, "alpha_cr": alpha_cr}
    if alpha_cr is None and alpha_min is not None:
        if alpha_min < min_alpha or alpha_min <= 1.0:
            return {**base, "alpha_cr_min": alpha_min, "amplifier": None, "passes": False,
                    "text": f"{name} >= {alpha_min:.4g} only, less than {min_alpha:g}: not decided; "
                            f"raise [checks] sway_search_modes or make a second-order analysis"}
        amp = 1.0 / (1.0 - 1.0 / alpha_min)
        return {**base, "alpha_cr_min": alpha_min, "amplifier": amp, "amplifier_is_bound": True,
                "passes": True,
                "text": f"{name} >= {alpha_min:.4g} >= {min_alpha:g}: the amplifier is at most "
                        f"1/(1 - 1/{alpha_min:.4g}) = {amp:.4g}"}
    if alpha_cr is None:
        return {**base, "amplifier": 1.0, "passes": True,
                "text": "no compressive instability in this case: no amplification"}
    if alpha_cr < min_alpha or alpha_cr <= 1.0:
        return {**base, "amplifier": None, "passes": False,
                "text": f"{name} = {alpha_cr:.4g} < {min_alpha:g}: amplification is not allowed; "
                        f"a second-order analysis is needed"}
    amp = 1.0 / (1.0 - 1.0 / alpha_cr)
    return {**base, "amplifier": amp, "passes": True,
            "text": f"{name} = {alpha_cr:.4g} >= {min_alpha:g}: horizontal actions may be amplified "
                    f"by 1/(1 - 1/{name}) = {amp:.4g}"}


def storey_Pe(storey: dict) -> float:
    """P_e,story from the storey data: given directly, or R_M H L / Delta_H (Eq. A-8-7)."""
    if "P_e_story" in storey:
        return float(storey["P_e_story"])
    P = float(storey["P_story"])
    RM = float(storey["R_M"]) if "R_M" in storey else 1.0 - 0.15 * float(storey.get("P_mf", 0.0)) / P
    return RM * float(storey["H"]) * float(storey["height"]) / float(storey["drift"])


def aisc_b2(storey: dict, alpha: float = 1.0, max_b2: float | None = None) -> dict:
    """AISC 360-16 Eq. (A-8-6) for one storey (dict with P_story and P_e_story or H, height, drift)."""
    P = float(storey["P_story"])
    Pe = storey_Pe(storey)
    ratio = alpha * P / Pe
    name = storey.get("name", "")
    base = {"code": "AISC360", "clause": AISC_CLAUSE_B2, "check": "storey_amplifier_B2", "storey": name,
            "alpha": alpha, "P_story": P, "P_e_story": Pe}
    if ratio >= 1.0:
        return {**base, "B2": None, "passes": False,
                "text": f"storey {name}: alpha P_story / P_e,story = {ratio:.4g} >= 1: the storey is unstable"}
    b2 = max(1.0, 1.0 / (1.0 - ratio))
    ok = max_b2 is None or b2 <= max_b2
    text = f"storey {name}: B2 = 1/(1 - {alpha:g} x {P:.4g} / {Pe:.4g}) = {b2:.4g}"
    if max_b2 is not None:
        text += f" ({'<=' if ok else '>'} the limit {max_b2:g} set in the study file)"
    return {**base, "B2": b2, "limit": max_b2, "passes": bool(ok), "text": text}


def case_verdicts(alpha_cr: float | None, settings: dict, storeys: list, case: str,
                  alpha_min: float | None = None, name: str = "alpha_cr") -> list:
    """All selected verdicts of one case (settings = the study's [checks] table).

    ``alpha_cr``: the load factor of the global sway mode (``check`` passes alpha_cr,sway), or
    None with ``alpha_min`` its certified lower bound.
    """
    codes = settings.get("codes", ["EN1993", "AISC360"])
    out = []
    if "EN1993" in codes:
        out.append(en1993_first_order(alpha_cr, settings.get("analysis", "elastic"),
                                      float(settings.get("en1993_elastic_limit", EN_ELASTIC)),
                                      float(settings.get("en1993_plastic_limit", EN_PLASTIC)),
                                      alpha_min, name))
        out.append(en1993_amplifier(alpha_cr, float(settings.get("en1993_amplify_limit", EN_AMPLIFY_MIN)),
                                    alpha_min, name))
    if "AISC360" in codes:
        a = float(settings.get("aisc_alpha", 1.0))
        mx = settings.get("aisc_max_B2")
        for s in storeys:
            if s.get("case") in (None, case):
                out.append(aisc_b2(s, a, None if mx is None else float(mx)))
    return out


def first_order_limit(settings: dict) -> float:
    """The alpha_cr a case must reach by default: the clause 5.2.1(3) limit of the analysis type."""
    if settings.get("analysis", "elastic") == "plastic":
        return float(settings.get("en1993_plastic_limit", EN_PLASTIC))
    return float(settings.get("en1993_elastic_limit", EN_ELASTIC))

