"""Corrected readings of marks: what the results table, findings and reports show.

Choices, documented once here:

- Corrected min, max and mean are the radiometric correction (survey.thermal.
  object_temperature, with the mark's effective emissivity and reflected temperature and the
  thermogram's transmittance and atmosphere) applied to the apparent min, max and mean. The
  correction is monotonic, so min and max are exact; the mean is the correction of the mean
  apparent temperature, which differs from the mean of corrected pixels by far less than
  the uncertainty.
- Every ± is an expanded uncertainty U at k = 2 (about 95 %). A corrected temperature's U
  combines the camera accuracy (the larger of the survey's camera_accuracy_c and
  camera_accuracy_pct of the reading), an emissivity known to ±0.02 and a reflected
  temperature known to ±2 K (typical for an emissivity taken from a table and a reflected
  temperature measured with a crumpled-foil reflector; common practice, no single
  source). Each of those is a limit, turned into U with survey.thermal.expanded_from_limit
  (rectangular distribution) before propagation. `uncertainty_c` is the larger of U at
  the mark's min and max; humidity figures use U at the coldest pixel.
- ΔT over another mark is taken hottest to hottest (the mark's corrected maximum minus
  the reference mark's corrected maximum: the same point of like components) unless the
  mark's rise_method says hottest to mean; over the air it is the corrected maximum minus
  the survey's air temperature (ambient_air_c; indoor_air_c for building surveys). A rise
  is shown, stored and classified at 0.1 K (survey.thermal.round_rise_c). On electrical and
  mechanical surveys a recorded load gives the full-load rise (exponent n = 2 for a mark;
  a finding stores its own n) and the organization's severity table gives a suggested level.
- Humidity figures (building surveys with indoor air temperature and RH) are taken at the
  mark's coldest corrected temperature, with one convention throughout (over ice below
  0 °C, as ISO 13788): surface RH (uncapped; 100 % or more is condensation), the 100 %
  limit temperature (the dew point, or the frost point below 0 °C), the margins to it and
  to the mould criterion (80 %), the temperature factor fRsi against fRsi,min for the
  recorded and the design conditions. Each limit gets a decision under the guarded
  acceptance rule of ILAC-G8 (survey.thermal.decide_interval): exceeded, not exceeded, or
  cannot tell when the ± interval reaches the limit. The air readings are taken as exact.
"""

import math
from typing import Any

import numpy as np

from survey.captions import mark_caption
from survey.models import Mark, Survey, Thermogram
from survey.thermal.units import rounded

EMISSIVITY_U = 0.02
REFLECTED_U_K = 2.0
MOULD_SURFACE_RH_PCT = 80.0
CONDENSATION_SURFACE_RH_PCT = 100.0
NOT_QUANTITATIVE_BELOW = 0.3
#: The load-correction exponent of a mark's full-load rise (a finding stores its own).
DEFAULT_LOAD_EXPONENT = 2.0
RISE_KINDS = {Survey.Kind.ELECTRICAL, Survey.Kind.MECHANICAL}

#: The words shown for the decisions of survey.thermal.decide_interval.
DECISION_TEXT = {
    "exceeded": "exceeded",
    "not exceeded": "not exceeded",
    "cannot tell": "cannot tell within the camera's accuracy",
}
#: What every printed ± is.
UNCERTAINTY_NOTE = "± is the expanded uncertainty at k = 2 (about 95 %)."
RISE_METHOD_TEXT = {
    "hottest_to_hottest": "hottest to hottest",
    "hottest_to_mean": "hottest to mean",
    "hottest_to_air": "hottest to air",
}


def _conditions(survey: Survey):
    return getattr(survey, "conditions", None) if survey.pk else None


def reference_air_c(survey: Survey) -> float | None:
    """The air temperature a mark's ΔT is taken against when its reference is the ambient."""
    conditions = _conditions(survey)
    if conditions is None:
        return None
    return conditions.indoor_air_c if survey.is_building else conditions.ambient_air_c


def indoor_air(survey: Survey) -> tuple[float, float] | None:
    """(indoor air °C, indoor RH %) for building surveys that recorded both."""
    conditions = _conditions(survey)
    if (
        not survey.is_building
        or conditions is None
        or conditions.indoor_air_c is None
        or conditions.indoor_rh_pct is None
        or conditions.indoor_rh_pct <= 0
    ):
        return None
    return conditions.indoor_air_c, conditions.indoor_rh_pct


def limit_name(limit_c: float | None) -> str:
    """What the 100 % surface-humidity limit is called: dew point, or frost point below 0 °C."""
    return "frost point" if limit_c is not None and limit_c < 0 else "dew point"


def thermogram_indoor_air(thermogram: Thermogram) -> tuple[float, float] | None:
    """(indoor air °C, indoor RH %) for a building thermogram: logged at its capture time
    (survey/services/loggers.py), else the survey's recorded conditions."""
    from survey.services.loggers import thermogram_air

    if not thermogram.survey.is_building:
        return None
    air = thermogram_air(thermogram)
    if air.indoor_c is None or air.indoor_rh_pct is None or air.indoor_rh_pct <= 0:
        return None
    return air.indoor_c, air.indoor_rh_pct


def thermogram_reference_air_c(thermogram: Thermogram) -> float | None:
    """The air a mark's ΔT against the ambient uses: logged at the capture time, else recorded."""
    from survey.services.loggers import thermogram_air

    air = thermogram_air(thermogram)
    return air.indoor_c if thermogram.survey.is_building else air.ambient_c


def correct(
    thermogram: Thermogram, apparent_c: Any, emissivity: float, reflected_c: float
) -> np.ndarray:
    """Object temperatures; raises ValueError when the surface reflects more than it emits."""
    from survey.thermal import object_temperature

    return object_temperature(
        apparent_c,
        emissivity,
        reflected_c,
        transmittance=thermogram.transmittance,
        atmosphere_c=thermogram.atmosphere_c,
    )


def correction_table(thermogram: Thermogram, samples: int = 129) -> dict | None:
    """Apparent → corrected pairs over the thermogram's range, for the cursor readout.

    None marks apparent temperatures with no object temperature at this emissivity.
    """
    from survey.thermal import object_temperature

    if thermogram.min_c is None or thermogram.max_c is None:
        return None
    apparent = np.linspace(thermogram.min_c - 1.0, thermogram.max_c + 1.0, samples)
    corrected = object_temperature(
        apparent,
        thermogram.emissivity,
        thermogram.reflected_c,
        transmittance=thermogram.transmittance,
        atmosphere_c=thermogram.atmosphere_c,
        out_of_range="nan",
    )
    return {
        "apparent_c": [round(float(v), 3) for v in apparent],
        "corrected_c": [rounded(v, 3) for v in corrected],
    }


def camera_uncertainty_c(survey: Survey, reading_c: float) -> float:
    """The camera's stated accuracy: ± the larger of a fixed value and a share of reading."""
    return max(survey.camera_accuracy_c, survey.camera_accuracy_pct / 100.0 * abs(reading_c))


def _uncertainty(mark: Mark, apparent_c: float, emissivity: float, reflected_c: float):
    """Expanded uncertainty (k = 2) of the corrected value of one apparent temperature."""
    from survey.thermal import expanded_from_limit, object_temperature_uncertainty

    survey = mark.thermogram.survey
    value = float(
        object_temperature_uncertainty(
            apparent_c,
            emissivity,
            reflected_c,
            float(expanded_from_limit(EMISSIVITY_U)),
            float(expanded_from_limit(REFLECTED_U_K)),
            float(expanded_from_limit(camera_uncertainty_c(survey, apparent_c))),
            transmittance=mark.thermogram.transmittance,
            atmosphere_c=mark.thermogram.atmosphere_c,
        )
    )
    return value if math.isfinite(value) else None


def _stats(mark: Mark, temperatures: np.ndarray | None) -> dict:
    if temperatures is not None or not mark.stats:
        from survey.services.arrays import thermogram_temperatures
        from survey.services.mark_stats import mark_stats

        if temperatures is None:
            temperatures = thermogram_temperatures(mark.thermogram)
        return mark_stats(temperatures, mark.kind, mark.points, mark.single_pixel)
    return mark.stats


def _corrected(mark: Mark, stats: dict) -> tuple[dict, str | None]:
    emissivity, reflected_c = mark.effective_emissivity, mark.effective_reflected_c
    keys = ("min", "max", "mean")
    apparent = [stats.get(f"{key}_c") for key in keys]
    if any(value is None for value in apparent):
        return dict.fromkeys(keys), "The mark has no valid pixel."
    try:
        values = correct(mark.thermogram, np.array(apparent, dtype=float), emissivity, reflected_c)
    except ValueError as error:
        message = f"No corrected value at ε {emissivity:g}, reflected {reflected_c:g} °C: {error}"
        return dict.fromkeys(keys), message
    return {key: rounded(value) for key, value in zip(keys, values, strict=True)}, None


def _decision(low: float, high: float, limit: float, direction: str = "above") -> str:
    from survey.thermal import decide_interval

    return str(decide_interval(low, high, limit, direction))


HUMIDITY_KEYS = (
    "dew_point_c",
    "dew_point_name",
    "surface_rh_pct",
    "surface_rh_low_pct",
    "surface_rh_high_pct",
    "surface_u_c",
    "condensation",
    "condensation_decision",
    "mould_decision",
    "condensation_margin_k",
    "mould_margin_k",
    "margin_u_k",
    "temperature_factor",
    "temperature_factor_low",
    "temperature_factor_high",
    "critical_factor",
    "factor_margin",
    "factor_decision",
    "design_critical_factor",
    "design_factor_margin",
    "design_factor_decision",
)


def design_conditions(survey: Survey) -> tuple[float, float, float] | None:
    """(indoor °C, indoor RH %, outdoor °C) of the survey's design case, when all three."""
    conditions = _conditions(survey)
    if conditions is None:
        return None
    values = (
        conditions.design_indoor_c,
        conditions.design_indoor_rh_pct,
        conditions.design_outdoor_c,
    )
    return None if None in values else values


def humidity_figures(
    thermogram: Thermogram, coldest_c: float | None, coldest_u_c: float | None
) -> dict:
    """Humidity figures of a surface at coldest_c ± coldest_u_c (U, k = 2); see the module.

    The air is the thermogram's: logged at its capture time, else the survey's recorded
    conditions. Every value is None when there is no indoor air temperature and RH, or the
    figure cannot be computed (no surface temperature, outdoor air missing or not colder).
    """
    from survey.services.loggers import thermogram_air
    from survey.thermal import (
        condensation_margin_k,
        critical_temperature_factor,
        surface_limit_temperature,
        surface_margin_interval_k,
        surface_margin_k,
        surface_rh,
        surface_rh_interval,
        temperature_factor,
        temperature_factor_interval,
    )

    survey = thermogram.survey
    result = dict.fromkeys(HUMIDITY_KEYS)
    air = thermogram_indoor_air(thermogram)
    if air is None:
        return result
    t_air_c, rh_pct = air
    try:
        limit_c = float(surface_limit_temperature(t_air_c, rh_pct, CONDENSATION_SURFACE_RH_PCT))
    except ValueError:
        return result
    result |= {"dew_point_c": rounded(limit_c), "dew_point_name": limit_name(limit_c)}
    if coldest_c is None:
        return result
    u = coldest_u_c or 0.0
    try:
        rh = float(surface_rh(t_air_c, rh_pct, coldest_c))
        low, high = surface_rh_interval(t_air_c, rh_pct, coldest_c, u)
        wet_low, wet_high = surface_margin_interval_k(t_air_c, rh_pct, coldest_c, u)
    except ValueError:
        return result
    result |= {
        "surface_rh_pct": rounded(rh, 1),
        "surface_rh_low_pct": rounded(low, 1),
        "surface_rh_high_pct": rounded(high, 1),
        "surface_u_c": rounded(u, 1),
        "condensation": bool(rh >= CONDENSATION_SURFACE_RH_PCT),
        "condensation_decision": _decision(low, high, CONDENSATION_SURFACE_RH_PCT),
        "mould_decision": _decision(low, high, MOULD_SURFACE_RH_PCT),
        "condensation_margin_k": rounded(condensation_margin_k(t_air_c, rh_pct, coldest_c)),
        "mould_margin_k": rounded(
            surface_margin_k(t_air_c, rh_pct, coldest_c, MOULD_SURFACE_RH_PCT)
        ),
        # Only the surface temperature is uncertain: every margin is margin ± U exactly.
        "margin_u_k": rounded((float(wet_high) - float(wet_low)) / 2.0, 1),
    }
    t_out = thermogram_air(thermogram).outdoor_c
    if t_out is None or t_air_c - t_out < 1.0:
        return result
    factor = float(temperature_factor(coldest_c, t_air_c, t_out))
    f_low, f_high = temperature_factor_interval(coldest_c, u, t_air_c, t_out)
    f_min = float(critical_temperature_factor(t_air_c, rh_pct, t_out))
    result |= {
        "temperature_factor": rounded(factor, 3),
        "temperature_factor_low": rounded(f_low, 3),
        "temperature_factor_high": rounded(f_high, 3),
        "critical_factor": rounded(f_min, 3),
        "factor_margin": rounded(factor - f_min, 3),
        "factor_decision": _decision(float(f_low), float(f_high), f_min, "below"),
    }
    design = design_conditions(survey)
    if design is not None and design[2] < design[0]:
        f_design = float(critical_temperature_factor(*design))
        result |= {
            "design_critical_factor": rounded(f_design, 3),
            "design_factor_margin": rounded(factor - f_design, 3),
            "design_factor_decision": _decision(float(f_low), float(f_high), f_design, "below"),
        }
    return result


def surface_rh_text(readings: dict) -> str:
    """Surface RH as printed: '≥ 100 % (condensation)' at or above saturation, else '83 %'."""
    value = readings.get("surface_rh_pct")
    if value is None:
        return "—"
    if readings.get("condensation"):
        return "≥ 100 % (condensation)"
    return f"{value:.0f} %"


def _apparent(stats: dict) -> dict:
    return {
        "min": stats.get("min_c"),
        "max": stats.get("max_c"),
        "mean": stats.get("mean_c"),
        "std": stats.get("std_c"),
        "count": stats.get("pixels"),
        "nan_count": stats.get("nan_count", 0),
        "hottest": stats.get("max_at"),
        "coldest": stats.get("min_at"),
    }


def rise_context(survey: Survey) -> dict:
    """What the rises of a survey's marks are judged with, fetched once per thermogram:
    the load and the organization's rise tables (electrical and mechanical surveys)."""
    if survey.kind not in RISE_KINDS:
        return {"judged": False}
    from survey.services.criteria_tables import criteria_table_for

    conditions = _conditions(survey)
    tables = {}
    for basis in ("similar", "ambient"):
        table = criteria_table_for(organization=survey.organization, basis=basis)
        tables[basis] = {"name": table.name, "rows": table.rows}
    return {
        "judged": True,
        "load_pct": conditions.load_pct if conditions is not None else None,
        "tables": tables,
    }


def _rise_judgement(rise_c: float, basis: str, quantitative: bool, context: dict) -> dict:
    """Full-load rise and suggested level of a mark's rise (electrical and mechanical)."""
    from survey.thermal import classify_rise, load_corrected_rise, load_is_too_low, round_rise_c

    result = {
        "full_load_delta_t_c": None,
        "load_exponent": None,
        "load_too_low": None,
        "suggested_level": None,
        "suggestion": None,
    }
    if not context.get("judged"):
        return result
    load = context.get("load_pct")
    judged = rise_c
    if load is not None and 0 < load:
        result["load_exponent"] = DEFAULT_LOAD_EXPONENT
        result["load_too_low"] = bool(load_is_too_low(load))
        if rise_c > 0:
            judged = float(load_corrected_rise(rise_c, load, DEFAULT_LOAD_EXPONENT))
        result["full_load_delta_t_c"] = float(round_rise_c(judged))
    if not quantitative:
        return result
    classification = classify_rise(judged, basis, table=context["tables"][basis])
    result["suggested_level"] = classification.level
    result["suggestion"] = classification.as_dict()
    return result


def rise_text(reference: str | None, method: str | None) -> str:
    """'rise over mark B (L1), hottest to hottest', or 'rise over the air, hottest to air'."""
    if reference is None:
        return ""
    method_text = RISE_METHOD_TEXT.get(method or "", "")
    over = "the air" if method == "hottest_to_air" else f"mark {reference}"
    return f"rise over {over}, {method_text}"


def _reference(mark: Mark, corrected: dict, by_id: dict[int, dict], context: dict) -> dict:
    """ΔT against the reference; by_id holds readings already computed for other marks."""
    from survey.thermal import like_component_rise_c, round_rise_c

    result = {
        "reference": None,
        "reference_title": None,
        "delta_t_c": None,
        "delta_t_method": None,
        "delta_t_text": "",
        "delta_t_quantitative": None,
    }
    rise = None
    if mark.reference_kind == Mark.ReferenceKind.AMBIENT:
        result |= {"reference": "ambient", "reference_title": "air"}
        result["delta_t_method"] = "hottest_to_air"
        air_c = thermogram_reference_air_c(mark.thermogram)
        if air_c is not None and corrected["max"] is not None:
            rise = corrected["max"] - air_c
        quantitative = mark.effective_emissivity >= NOT_QUANTITATIVE_BELOW
        basis = "ambient"
    elif mark.reference_kind == Mark.ReferenceKind.MARK and mark.reference_mark_id:
        other = mark.reference_mark
        result |= {"reference": other.label, "reference_title": other.title}
        method = mark.rise_method or Mark.RiseMethod.HOTTEST_TO_HOTTEST
        result["delta_t_method"] = method
        if other.pk in by_id:
            other_corrected = by_id[other.pk]["corrected"]
        else:
            other_corrected = _corrected(other, _stats(other, None))[0]
        if corrected["max"] is not None and None not in (
            other_corrected["max"],
            other_corrected["mean"],
        ):
            rise = float(
                like_component_rise_c(
                    corrected["max"],
                    other_corrected["max"],
                    reference_mean_c=other_corrected["mean"],
                    method=method,
                )
            )
        quantitative = min(mark.effective_emissivity, other.effective_emissivity) >= (
            NOT_QUANTITATIVE_BELOW
        )
        basis = "similar"
    else:
        return result
    result["delta_t_quantitative"] = quantitative
    result["delta_t_text"] = rise_text(result["reference_title"], result["delta_t_method"])
    if rise is None:
        return result
    result["delta_t_c"] = float(round_rise_c(rise))
    result |= _rise_judgement(rise, basis, quantitative, context)
    return result


def mark_readings(
    mark: Mark,
    *,
    temperatures: np.ndarray | None = None,
    by_id: dict[int, dict] | None = None,
    context: dict | None = None,
) -> dict:
    """Apparent and corrected figures of one mark, with ΔT and humidity figures.

    `context` is rise_context(survey), passed in when many marks of one survey are read.
    """
    from survey.thermal import emissivity_warning

    stats = _stats(mark, temperatures)
    emissivity, reflected_c = mark.effective_emissivity, mark.effective_reflected_c
    corrected, error = _corrected(mark, stats)
    u_min = u_max = None
    if error is None:
        try:
            u_min = _uncertainty(mark, stats["min_c"], emissivity, reflected_c)
            u_max = _uncertainty(mark, stats["max_c"], emissivity, reflected_c)
        except ValueError:
            u_min = u_max = None
    finite = [u for u in (u_min, u_max) if u is not None]
    survey = mark.thermogram.survey
    readings = {
        "id": mark.pk,
        "label": mark.label,
        "name": mark.name,
        "title": mark.title,
        "kind": mark.kind,
        "points": mark.points,
        "note": mark.note,
        "rise_method": mark.rise_method,
        "load_current_a": mark.load_current_a,
        "caption": mark_caption(mark),
        "emissivity": emissivity,
        "emissivity_own": mark.emissivity is not None,
        "reflected_c": reflected_c,
        "reflected_own": mark.reflected_c is not None,
        "emissivity_warning": emissivity_warning(emissivity),
        "apparent": _apparent(stats),
        "corrected": corrected,
        "uncertainty_c": rounded(max(finite), 1) if finite else None,
        "error": error,
    }
    if context is None:
        context = rise_context(survey)
    readings |= _reference(mark, corrected, by_id if by_id is not None else {}, context)
    readings |= humidity_figures(mark.thermogram, corrected["min"], u_min)
    readings["profile"] = stats.get("profile") if mark.kind == Mark.Kind.LINE else None
    return readings


def readings_of_marks(marks: list[Mark], context: dict | None = None) -> dict[int, dict]:
    """Readings of marks of one thermogram (reference marks loaded), by mark id.

    `context` is rise_context(survey), passed in when many thermograms of one survey are read.
    """
    if not marks:
        return {}
    if context is None:
        context = rise_context(marks[0].thermogram.survey)
    # Referenced marks first, so each reference's readings are computed once.
    referenced = {m.reference_mark_id for m in marks if m.reference_mark_id}
    by_id: dict[int, dict] = {}
    for mark in sorted(marks, key=lambda m: m.pk not in referenced):
        by_id[mark.pk] = mark_readings(mark, by_id=by_id, context=context)
    return by_id


def thermogram_readings(thermogram: Thermogram) -> list[dict]:
    """Readings of every mark of the thermogram, in label order (A, B, … Z, AA …)."""
    marks = list(
        thermogram.marks.select_related("thermogram__survey__conditions", "reference_mark")
    )
    marks.sort(key=lambda m: (len(m.label), m.label))
    for mark in marks:
        mark.thermogram = thermogram
        if mark.reference_mark is not None:
            mark.reference_mark.thermogram = thermogram
    by_id = readings_of_marks(marks)
    return [by_id[mark.pk] for mark in marks]


OVERLAY_LIMITS_PCT = {"rh80": 80.0, "rh100": 100.0}


def condensation_overlay(thermogram: Thermogram) -> dict:
    """Apparent-temperature thresholds at and below which surfaces reach 80 % and 100 % RH.

    Surface thresholds over ice below 0 °C, as the readings' flag and margins; the 100 %
    threshold is named (dew point, or frost point below 0 °C).
    """
    from survey.thermal import apparent_temperature, surface_limit_temperature

    air = thermogram_indoor_air(thermogram)
    if air is None:
        return {
            "available": False,
            "reason": "Needs a building survey with indoor air temperature and RH recorded.",
        }
    t_air_c, rh_pct = air
    try:
        surfaces = {
            key: float(surface_limit_temperature(t_air_c, rh_pct, limit))
            for key, limit in OVERLAY_LIMITS_PCT.items()
        }
        apparent = {
            key: float(
                apparent_temperature(
                    surface_c,
                    thermogram.emissivity,
                    thermogram.reflected_c,
                    transmittance=thermogram.transmittance,
                    atmosphere_c=thermogram.atmosphere_c,
                )
            )
            for key, surface_c in surfaces.items()
        }
    except ValueError as error:
        return {"available": False, "reason": f"Cannot compute the overlay: {error}"}
    return {
        "available": True,
        "indoor_air_c": t_air_c,
        "indoor_rh_pct": rh_pct,
        "surface_c": {k: round(v, 2) for k, v in surfaces.items()},
        "rh100_name": limit_name(surfaces["rh100"]),
        "apparent_c": {k: round(v, 2) for k, v in apparent.items()},
        "emissivity": thermogram.emissivity,
        "reflected_c": thermogram.reflected_c,
    }


def thermogram_corrected_range(thermogram: Thermogram) -> tuple[float, float]:
    """Corrected min and max of a whole thermogram from its stored apparent extremes."""
    from django.core.exceptions import ValidationError

    from survey.thermal import object_temperature

    if thermogram.min_c is None or thermogram.max_c is None:
        raise ValidationError("The thermogram has not been processed yet.")
    values = [
        float(
            object_temperature(
                t,
                thermogram.emissivity,
                thermogram.reflected_c,
                thermogram.transmittance,
                thermogram.atmosphere_c,
            )
        )
        for t in (thermogram.min_c, thermogram.max_c)
    ]
    return values[0], values[1]
