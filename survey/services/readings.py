"""Corrected readings of marks: what the results table, findings and reports show.

Choices, documented once here:

- Corrected min, max and mean are the radiometric correction (survey.thermal.
  object_temperature, with the mark's effective emissivity and reflected temperature and the
  thermogram's transmittance and atmosphere) applied to the apparent min, max and mean. The
  correction is monotonic, so min and max are exact; the mean is the correction of the mean
  apparent temperature, which differs from the mean of corrected pixels by far less than
  the uncertainty.
- The uncertainty (±, °C) combines the camera accuracy (the larger of the survey's
  camera_accuracy_c and camera_accuracy_pct of the reading), an emissivity uncertainty of
  ±0.02 and a reflected-temperature uncertainty of ±2 K (typical for an emissivity taken
  from a table and a reflected temperature measured with a crumpled-foil reflector; common
  practice, no single source). It is the larger of the values at the mark's min and max.
- ΔT is the mark's corrected maximum minus the reference: another mark's corrected mean
  (a reference area stands for "normal", so its mean is steadier than its max), or the
  survey's air temperature (ambient_air_c; indoor_air_c for building surveys).
- Humidity figures (building surveys with indoor air temperature and RH) are taken at the
  mark's coldest corrected temperature: dew point, surface RH, the margin to condensation
  (surface − dew point) and to the mould criterion (surface − the temperature at which the
  surface RH reaches 80 %, ISO 13788).
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
NOT_QUANTITATIVE_BELOW = 0.3


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


def surface_limit_c(t_air_c: float, rh_pct: float, limit_rh_pct: float) -> float:
    """Surface temperature at which the air layer at the surface reaches limit_rh_pct.

    Solves e_s(θ) = (rh/limit)·e_s(t_air) with survey.thermal.dew_point, evaluated from an
    air temperature 15 K warmer so that the relative humidity passed stays below 100 %.
    """
    from survey.thermal import dew_point, saturation_vapor_pressure

    vapour_pa = rh_pct / 100.0 * float(saturation_vapor_pressure(t_air_c, over="water"))
    warm_c = t_air_c + 15.0
    rh_warm = (
        100.0
        * vapour_pa
        / (limit_rh_pct / 100.0)
        / float(saturation_vapor_pressure(warm_c, over="water"))
    )
    return float(dew_point(warm_c, rh_warm))


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


def _uncertainty(mark: Mark, apparent_values: list[float], emissivity: float, reflected_c: float):
    from survey.thermal import object_temperature_uncertainty

    survey = mark.thermogram.survey
    values = []
    for apparent in apparent_values:
        values.append(
            float(
                object_temperature_uncertainty(
                    apparent,
                    emissivity,
                    reflected_c,
                    EMISSIVITY_U,
                    REFLECTED_U_K,
                    camera_uncertainty_c(survey, apparent),
                    transmittance=mark.thermogram.transmittance,
                    atmosphere_c=mark.thermogram.atmosphere_c,
                )
            )
        )
    finite = [v for v in values if math.isfinite(v)]
    return rounded(max(finite), 1) if finite else None


def _stats(mark: Mark, temperatures: np.ndarray | None) -> dict:
    if temperatures is not None or not mark.stats:
        from survey.services.arrays import thermogram_temperatures
        from survey.services.marks import mark_stats

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


def _humidity(survey: Survey, coldest_c: float | None) -> dict:
    from survey.thermal import dew_point, surface_rh

    empty = dict.fromkeys(
        ("dew_point_c", "surface_rh_pct", "condensation_margin_k", "mould_margin_k")
    )
    air = indoor_air(survey)
    if air is None:
        return empty
    t_air_c, rh_pct = air
    try:
        dew_c = float(dew_point(t_air_c, rh_pct))
        mould_c = surface_limit_c(t_air_c, rh_pct, MOULD_SURFACE_RH_PCT)
    except ValueError:
        return empty
    result = empty | {"dew_point_c": rounded(dew_c)}
    if coldest_c is None:
        return result
    try:
        result["surface_rh_pct"] = rounded(surface_rh(t_air_c, rh_pct, coldest_c), 1)
    except ValueError:
        pass
    result["condensation_margin_k"] = rounded(coldest_c - dew_c)
    result["mould_margin_k"] = rounded(coldest_c - mould_c)
    return result


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


def _reference(mark: Mark, corrected: dict, by_id: dict[int, dict]) -> dict:
    """ΔT against the reference; by_id holds readings already computed for other marks."""
    result = {"reference": None, "delta_t_c": None, "delta_t_quantitative": None}
    survey = mark.thermogram.survey
    if mark.reference_kind == Mark.ReferenceKind.AMBIENT:
        result["reference"] = "ambient"
        air_c = reference_air_c(survey)
        if air_c is not None and corrected["max"] is not None:
            result["delta_t_c"] = rounded(corrected["max"] - air_c)
        quantitative = mark.effective_emissivity >= NOT_QUANTITATIVE_BELOW
    elif mark.reference_kind == Mark.ReferenceKind.MARK and mark.reference_mark_id:
        other = mark.reference_mark
        result["reference"] = other.label
        if other.pk in by_id:
            other_mean = by_id[other.pk]["corrected"]["mean"]
        else:
            other_mean = _corrected(other, _stats(other, None))[0]["mean"]
        if other_mean is not None and corrected["max"] is not None:
            result["delta_t_c"] = rounded(corrected["max"] - other_mean)
        quantitative = min(mark.effective_emissivity, other.effective_emissivity) >= (
            NOT_QUANTITATIVE_BELOW
        )
    else:
        return result
    result["delta_t_quantitative"] = quantitative
    return result


def mark_readings(
    mark: Mark, *, temperatures: np.ndarray | None = None, by_id: dict[int, dict] | None = None
) -> dict:
    """Apparent and corrected figures of one mark, with ΔT and humidity figures."""
    from survey.thermal import emissivity_warning

    stats = _stats(mark, temperatures)
    emissivity, reflected_c = mark.effective_emissivity, mark.effective_reflected_c
    corrected, error = _corrected(mark, stats)
    uncertainty = None
    if error is None:
        try:
            uncertainty = _uncertainty(
                mark, [stats["min_c"], stats["max_c"]], emissivity, reflected_c
            )
        except ValueError:
            uncertainty = None
    readings = {
        "id": mark.pk,
        "label": mark.label,
        "kind": mark.kind,
        "points": mark.points,
        "note": mark.note,
        "name": getattr(mark, "name", "") or "",
        "load_current_a": mark.load_current_a,
        "caption": mark_caption(mark),
        "emissivity": emissivity,
        "emissivity_own": mark.emissivity is not None,
        "reflected_c": reflected_c,
        "reflected_own": mark.reflected_c is not None,
        "emissivity_warning": emissivity_warning(emissivity),
        "apparent": _apparent(stats),
        "corrected": corrected,
        "uncertainty_c": uncertainty,
        "error": error,
    }
    readings |= _reference(mark, corrected, by_id if by_id is not None else {})
    readings |= _humidity(mark.thermogram.survey, corrected["min"])
    readings["profile"] = stats.get("profile") if mark.kind == Mark.Kind.LINE else None
    return readings


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
    # Referenced marks first, so each reference's readings are computed once.
    referenced = {m.reference_mark_id for m in marks if m.reference_mark_id}
    by_id: dict[int, dict] = {}
    for mark in sorted(marks, key=lambda m: m.pk not in referenced):
        by_id[mark.pk] = mark_readings(mark, by_id=by_id)
    return [by_id[mark.pk] for mark in marks]


OVERLAY_LIMITS_PCT = {"rh80": 80.0, "rh100": 100.0}


def condensation_overlay(thermogram: Thermogram) -> dict:
    """Apparent-temperature thresholds at and below which surfaces reach 80 % and 100 % RH."""
    from survey.thermal import apparent_temperature

    air = indoor_air(thermogram.survey)
    if air is None:
        return {
            "available": False,
            "reason": "Needs a building survey with indoor air temperature and RH recorded.",
        }
    t_air_c, rh_pct = air
    try:
        surfaces = {
            key: surface_limit_c(t_air_c, rh_pct, limit)
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
