"""Judgement: the rules that turn readings into a suggested severity, with the reasons.

Pure functions: they take numbers (corrected temperatures, the recorded conditions, the
rows of a severity table) and return a suggestion as plain data; they read no database.
survey/services/findings.py gathers those numbers from marks, conditions and the
organization's tables, and records the inspector's finding.
"""

from __future__ import annotations

import math

from survey.severity import NO_BAND, Band, classify
from survey.thermal import (
    RISE_METHODS,
    condensation_margin_k,
    critical_temperature_factor,
    decide_interval,
    like_component_rise_c,
    load_corrected_rise,
    round_rise_c,
    surface_limit_temperature,
    surface_margin_k,
    surface_rh,
    surface_rh_interval,
    temperature_factor,
)
from survey.thermal.electrical import MIN_RELIABLE_LOAD_PCT, load_is_too_low
from survey.thermal.units import rounded

#: How a rise is taken: over a like component (the methods of survey.thermal) or the air.
RISE_METHOD_TEXT = dict(RISE_METHODS) | {"hottest_to_air": "hottest to air"}
DECISION_TEXT = {
    "exceeded": "exceeded",
    "not exceeded": "not exceeded",
    "cannot tell": "cannot tell within the camera's accuracy",
}


class JudgementError(ValueError):
    """The inputs do not allow a judgement; the message says what is missing."""


def with_level(band: Band, reasons: list[str]) -> dict:
    """The level, action and row of a suggestion, with the sentence that explains them."""
    if band.level is None:
        reasons.append("No severity band of the table applies: no level is suggested.")
        return {"level": None, "action": "", "row": "", "reasons": reasons}
    reasons.append(f"Table row {band.text} → level {band.level}. {band.action}".strip())
    return {"level": band.level, "action": band.action, "row": band.text, "reasons": reasons}


def rise_over(*, hot_c: float, reference_c: float, method: str) -> float:
    """The unrounded rise of a hot place over its reference, by the method named."""
    if method == "hottest_to_air":
        return float(hot_c - reference_c)
    if method == "hottest_to_mean":
        return float(like_component_rise_c(hot_c, reference_mean_c=reference_c, method=method))
    return float(like_component_rise_c(hot_c, reference_c, method=method))


def judge_rise(
    *,
    hot_c: float | None,
    reference_c: float | None,
    method: str,
    where: str,
    over: str,
    against: str,
    load_pct: float | None,
    exponent: float,
    warnings: list[str | None],
    uncertainty_c: float | None,
    rows: list[dict],
    basis: str,
) -> dict:
    """Suggest a level for a hot place from its rise over a reference, load-corrected.

    `method` is how the rise is taken (``hottest_to_hottest``, ``hottest_to_mean`` or
    ``hottest_to_air``); `reference_c` is the reference's value that method compares (its
    corrected max, its corrected mean, or the air). The measured and full-load rises are
    shown, stored and classified at 0.1 K.
    """
    if (
        hot_c is None
        or reference_c is None
        or not math.isfinite(hot_c)
        or not math.isfinite(reference_c)
    ):
        raise JudgementError("The marked places hold no valid temperatures.")
    if method not in RISE_METHOD_TEXT:
        raise JudgementError(f"Unknown rise method {method!r}.")
    reasons, flags = [], []
    rise = rise_over(hot_c=hot_c, reference_c=reference_c, method=method)
    measured = float(round_rise_c(rise))
    method_text = RISE_METHOD_TEXT[method]
    reasons.append(
        f"Hottest corrected temperature of {where}: {hot_c:.1f} °C; {against}: "
        f"{reference_c:.1f} °C. Rise over {over}, {method_text}: {measured:.1f} K measured."
    )
    load = load_pct
    corrected = rise
    if load is None:
        flags.append("load_not_recorded")
        reasons.append("The load was not recorded, so the rise is not load-corrected.")
    elif load <= 0:
        flags.append("low_load")
        reasons.append("The load was recorded as 0 %: the rise cannot be corrected to full load.")
    elif rise > 0:
        corrected = float(load_corrected_rise(rise, load, exponent=exponent))
        reasons.append(
            f"At {load:.0f} % load the rise expected at full load is "
            f"{float(round_rise_c(corrected)):.1f} K beside the {measured:.1f} K measured "
            f"(rise × (100 / load)^n with n = {exponent:g})."
        )
    if load is not None and load > 0 and load_is_too_low(load):
        flags.append("low_load")
        reasons.append(
            f"Low load: {load:.0f} % is below {MIN_RELIABLE_LOAD_PCT:.0f} % of rating. The "
            "correction extrapolates far; re-survey at higher load when possible."
        )
    if "not_quantitative" in warnings:
        flags.append("not_quantitative")
        reasons.append(
            "The emissivity is too low for a quantitative rise: judge this place by its "
            "pattern, or cover it with a high-emissivity target and re-measure."
        )
        band = NO_BAND
    else:
        if "uncertain" in warnings:
            flags.append("emissivity_uncertain")
            reasons.append("Low emissivity: the corrected temperatures are uncertain.")
        # classify reads the rise at the 0.1 K it is printed at.
        band = classify(corrected, rows, basis=basis)
    values = {
        "hot_c": rounded(hot_c),
        "reference_c": rounded(reference_c),
        "rise_c": measured,
        "corrected_rise_c": float(round_rise_c(corrected)),
        "rise_method": method,
        "rise_text": f"rise over {over}, {method_text}",
        "load_pct": load,
        "load_exponent": exponent,
        "max_corrected_c": rounded(hot_c),
        "uncertainty_c": rounded(uncertainty_c),
    }
    result = with_level(band, reasons)
    if uncertainty_c:
        reasons.append(
            f"Each corrected temperature is uncertain by ±{uncertainty_c:.1f} K (expanded "
            "uncertainty at k = 2, about 95 %: camera accuracy, emissivity, reflected "
            "temperature); a difference within one image is usually better than that."
        )
    result.update({"values": values, "flags": flags})
    return result


def _rh_text(rh_pct: float) -> str:
    return "≥ 100 % RH (condensation)" if rh_pct >= 100 else f"{rh_pct:.0f} % RH"


def judge_envelope(
    *,
    surface_c: float | None,
    where: str,
    indoor_c: float,
    indoor_rh_pct: float,
    outdoor_c: float | None,
    design: tuple[float | None, float | None, float | None],
    rows: list[dict],
    uncertainty_c: float | None = None,
) -> dict:
    """Suggest a level for a cold building surface from its humidity and temperature factor.

    `design` is (indoor °C, indoor RH %, outdoor °C) of design conditions, or three Nones.
    `uncertainty_c` is the surface temperature's expanded uncertainty (k = 2): each limit
    is then also decided under guarded acceptance (exceeded, not exceeded, cannot tell).
    One convention throughout: saturation over ice below 0 °C (ISO 13788).
    """
    if surface_c is None or not math.isfinite(surface_c):
        raise JudgementError("The marked place holds no valid temperatures.")
    if indoor_rh_pct <= 0:
        raise JudgementError("The indoor humidity must be above 0 % to judge a surface.")
    t_in, rh_in, t_out = indoor_c, indoor_rh_pct, outdoor_c
    reasons, flags = [], []
    rh_s = float(surface_rh(t_in, rh_in, surface_c))
    limit_c = float(surface_limit_temperature(t_in, rh_in, 100.0))
    name = "frost point" if limit_c < 0 else "dew point"
    margin = float(condensation_margin_k(t_in, rh_in, surface_c))
    u = uncertainty_c or 0.0
    shown_u = f" ± {u:.1f}" if u else ""
    reasons.append(
        f"Coldest corrected temperature of {where}: {surface_c:.1f}{shown_u} °C. Indoor air "
        f"{t_in:.1f} °C at {rh_in:.0f} % gives {_rh_text(rh_s)} at that surface ({name} "
        f"{limit_c:.1f} °C, {abs(margin):.1f} K {'below' if margin <= 0 else 'above'} it)."
    )
    if rh_s >= 100:
        flags.append("condensation")
        reasons.append(f"Condensation expected: the surface is at or below the {name}.")
    elif rh_s >= 80:
        flags.append("mould")
        reasons.append("Mould risk: surface RH at or above 80 % (ISO 13788).")
    low, high = surface_rh_interval(t_in, rh_in, surface_c, u)
    decisions = {
        "condensation": str(decide_interval(low, high, 100.0)),
        "mould": str(decide_interval(low, high, 80.0)),
    }
    if u:
        reasons.append(
            f"With ±{u:.1f} K (expanded uncertainty at k = 2, about 95 %) the surface RH lies "
            f"between {float(low):.0f} % and {float(high):.0f} %: condensation limit "
            f"{DECISION_TEXT[decisions['condensation']]}, mould limit "
            f"{DECISION_TEXT[decisions['mould']]} (guarded acceptance, ILAC-G8)."
        )
        if "cannot tell" in decisions.values() and (rh_s >= 80 or float(high) >= 80):
            flags.append("cannot_tell")
    values = {
        "surface_c": rounded(surface_c),
        "surface_u_c": rounded(u, 1),
        "surface_rh_pct": rounded(rh_s, 1),
        "surface_rh_low_pct": rounded(low, 1),
        "surface_rh_high_pct": rounded(high, 1),
        "condensation": rh_s >= 100,
        "condensation_decision": decisions["condensation"],
        "mould_decision": decisions["mould"],
        "dew_point_c": rounded(limit_c),
        "dew_point_name": name,
        "condensation_margin_k": rounded(margin, 1),
        "mould_margin_k": rounded(surface_margin_k(t_in, rh_in, surface_c, 80.0), 1),
        "max_corrected_c": None,
    }
    worst = classify(rh_s, rows, unit="% RH")
    factor = None
    if t_out is not None and t_in - t_out >= 1.0:
        factor = float(temperature_factor(surface_c, t_in, t_out))
        f_min = float(critical_temperature_factor(t_in, rh_in, t_out))
        margin = (factor - f_min) * (t_in - t_out)
        values.update(
            {
                "temperature_factor": rounded(factor, 3),
                "critical_factor": rounded(f_min, 3),
                "margin_k": rounded(margin),
            }
        )
        reasons.append(
            f"Temperature factor fRsi {factor:.2f} against {f_min:.2f} needed for the "
            f"recorded conditions (outdoor {t_out:.1f} °C): margin {margin:+.1f} K at the "
            "surface (ISO 13788). Measured factors hold only near steady state."
        )
    else:
        flags.append("factor_not_computed")
        reasons.append(
            "No temperature factor: the outdoor temperature is missing or not at least "
            "1 K below the indoor temperature."
        )
    if any(v is not None for v in design):
        worst = _envelope_design(design, factor, rows, values, reasons, flags, worst)
    result = with_level(worst, reasons)
    result.update({"values": values, "flags": flags})
    return result


def _envelope_design(design, factor, rows, values, reasons, flags, worst: Band) -> Band:
    t_in, rh_in, t_out = design
    if None in design:
        raise JudgementError(
            "For design conditions give the indoor temperature, indoor humidity and "
            "outdoor temperature."
        )
    if t_out >= t_in or rh_in <= 0:
        raise JudgementError(
            "Design outdoor temperature must be below the indoor one, and the humidity above 0 %."
        )
    if factor is None:
        raise JudgementError(
            "A design check needs the temperature factor, which needs the recorded "
            "outdoor temperature at least 1 K below the indoor one."
        )
    f_min = float(critical_temperature_factor(t_in, rh_in, t_out))
    surface_design = t_out + factor * (t_in - t_out)
    rh_design = float(surface_rh(t_in, rh_in, surface_design))
    margin = (factor - f_min) * (t_in - t_out)
    values.update(
        {
            "design_inside_c": t_in,
            "design_inside_rh_pct": rh_in,
            "design_outside_c": t_out,
            "design_critical_factor": rounded(f_min, 3),
            "design_surface_c": rounded(surface_design),
            "design_surface_rh_pct": rounded(rh_design, 1),
            "design_margin_k": rounded(margin),
        }
    )
    reasons.append(
        f"Design conditions {t_in:.1f} °C / {rh_in:.0f} % inside, {t_out:.1f} °C outside: "
        f"fRsi needed {f_min:.2f}, surface would be {surface_design:.1f} °C at "
        f"{rh_design:.0f} % RH; margin {margin:+.1f} K."
    )
    if factor < f_min:
        flags.append("below_design_factor")
    band = classify(rh_design, rows, unit="% RH")
    if band.level is not None and (worst.level is None or band.level < worst.level):
        return band
    return worst
