"""An asset across visits: key readings, findings over time and repair verification.

Choices, documented once here:

- A visit is a survey in which the asset was measured: a thermogram tied to the asset, or a
  finding on the asset.
- The key reading of a visit is the highest corrected temperature of the marks on the
  asset's thermograms (the whole thermogram's corrected maximum when it has no marks), and
  the highest rise of those marks per basis: ``similar`` when the mark's reference is
  another mark, ``ambient`` when it is the air. A rise is corrected to full load when the
  survey recorded the load (the same I²R correction as findings). Building surveys also
  keep the highest surface RH.
- Repair verification: a finding that is open or repaired is compared with the latest
  later visit that measured the same basis. For a rise, the repair worked when the rise has
  fallen below the lower bound of the lowest band of the finding's table (the "possible
  deficiency" band of the electrical tables): below it the table gives no level, so there
  is nothing left to report. For building surfaces the same holds for the surface RH under
  the envelope table. Otherwise the repair did not work. Roof findings need cores or a
  moisture meter; the app does not judge their repair.
"""

from __future__ import annotations

import math

from django.contrib.auth.models import AbstractBaseUser
from django.core.exceptions import ValidationError

from survey import severity
from survey.models import Asset, Conditions, Finding, Survey
from survey.services.findings import finding_set_status

OPEN_STATUSES = {Finding.Status.OPEN, Finding.Status.REPAIRED}


def _load_corrected(rise_c: float, survey: Survey) -> tuple[float, bool]:
    from survey.thermal import load_corrected_rise

    try:
        load = survey.conditions.load_pct
    except Conditions.DoesNotExist:
        load = None
    if load is None or load <= 0 or rise_c <= 0 or survey.is_building:
        return rise_c, False
    return float(load_corrected_rise(rise_c, load)), True


def _max(values):
    finite = [v for v in values if v is not None and math.isfinite(v)]
    return max(finite) if finite else None


def _thermogram_key(thermogram) -> dict:
    from survey.services.readings import thermogram_corrected_range, thermogram_readings

    readings = []
    if thermogram.is_ready:
        try:
            readings = thermogram_readings(thermogram)
        except (ValueError, RuntimeError, OSError):
            readings = []
    max_c = _max([r["corrected"]["max"] for r in readings])
    if max_c is None and thermogram.is_ready and not readings:
        try:
            max_c = thermogram_corrected_range(thermogram)[1]
        except (ValidationError, ValueError):
            max_c = None
    rises: dict[str, list[float]] = {"similar": [], "ambient": []}
    for reading in readings:
        if reading.get("delta_t_c") is None or reading.get("delta_t_quantitative") is False:
            continue
        basis = "ambient" if reading["reference"] == "ambient" else "similar"
        rises[basis].append(reading["delta_t_c"])
    return {
        "max_c": max_c,
        "rises": rises,
        "surface_rh_pct": _max([r.get("surface_rh_pct") for r in readings]),
    }


def asset_history(asset: Asset) -> list[dict]:
    """Every visit to the asset, oldest first, with its key reading and findings."""
    thermograms = asset.thermograms.filter(survey__status=Survey.Status.ACTIVE).select_related(
        "survey__conditions"
    )
    findings = asset.findings.filter(survey__status=Survey.Status.ACTIVE).select_related("survey")
    surveys: dict[int, Survey] = {}
    by_survey: dict[int, dict] = {}
    for thermogram in thermograms:
        surveys[thermogram.survey_id] = thermogram.survey
        by_survey.setdefault(thermogram.survey_id, {"thermograms": [], "findings": []})
        by_survey[thermogram.survey_id]["thermograms"].append(thermogram)
    for finding in findings:
        surveys.setdefault(finding.survey_id, finding.survey)
        by_survey.setdefault(finding.survey_id, {"thermograms": [], "findings": []})
        by_survey[finding.survey_id]["findings"].append(finding)
    visits = []
    for survey_id, survey in sorted(surveys.items(), key=lambda kv: (kv[1].date, kv[0])):
        visits.append(_visit(survey, **by_survey[survey_id]))
    return visits


def _visit(survey: Survey, thermograms: list, findings: list) -> dict:
    keys = [_thermogram_key(t) for t in thermograms]
    rises = {}
    corrected_to_full_load = False
    for basis in ("similar", "ambient"):
        raw = _max([v for key in keys for v in key["rises"][basis]])
        if raw is not None:
            rises[basis], corrected = _load_corrected(raw, survey)
            corrected_to_full_load = corrected_to_full_load or corrected
    # A judged finding's rise is the visit's rise for its basis when marks give none.
    for finding in findings:
        if finding.basis in ("similar", "ambient") and finding.corrected_rise_c is not None:
            rises.setdefault(finding.basis, finding.corrected_rise_c)
    max_c = _max([k["max_c"] for k in keys] + [f.max_corrected_c for f in findings])
    key_rise = None
    basis_order = [f.basis for f in findings] + ["similar", "ambient"]
    for basis in basis_order:
        if basis in rises:
            key_rise = {"basis": basis, "value": rises[basis]}
            break
    return {
        "survey": survey,
        "date": survey.date,
        "thermograms": thermograms,
        "findings": findings,
        "max_corrected_c": max_c,
        "rises": rises,
        "key_rise": key_rise,
        "load_corrected": corrected_to_full_load,
        "surface_rh_pct": _max([k["surface_rh_pct"] for k in keys]),
    }


def trend_points(visits: list[dict], basis: str | None = None) -> list[tuple]:
    """(date, rise) for the trend chart; a visit without a rise of the basis leaves a gap."""
    points = []
    for visit in visits:
        if basis:
            value = visit["rises"].get(basis)
        else:
            value = visit["key_rise"]["value"] if visit["key_rise"] else None
        points.append((visit["date"], value))
    return points


def trend_in_unit(
    points: list[tuple], thresholds: list[tuple], unit: str
) -> tuple[list[tuple], list[tuple], str]:
    """Rises (K) of a trend and its threshold lines in `unit`: K, or Δ°F for °F members."""
    from survey.thermal import units

    def convert(value):
        return None if value is None else units.difference_from_kelvin(value, unit)

    label = units.difference_label(unit)
    converted = [(x, convert(value)) for x, value in points]
    lines = [(convert(value), units.text_in_unit(text, unit)) for value, text in thresholds]
    return converted, lines, label


def _threshold(finding: Finding) -> float | None:
    rows = finding.criteria_table.rows if finding.criteria_table else []
    try:
        return severity.no_finding_below(rows)
    except (TypeError, KeyError):
        return None


def repair_verification(finding: Finding, visits: list[dict] | None = None) -> dict | None:
    """Before/after of an open or repaired finding against the latest later visit.

    Returns None when there is nothing to compare (finding closed, no asset, no later
    measurement of the same basis). Otherwise ``before``, ``after`` (visits),
    ``threshold``, ``unit``, ``outcome`` (``fixed`` or ``not_fixed``) and ``message``.
    """
    if finding.status not in OPEN_STATUSES or finding.asset_id is None:
        return None
    if finding.basis not in ("similar", "ambient", "envelope"):
        return None
    if visits is None:
        visits = asset_history(finding.asset)
    before = next((v for v in visits if v["survey"].pk == finding.survey_id), None)
    later = [
        v
        for v in visits
        if (v["date"], v["survey"].pk) > (finding.survey.date, finding.survey_id)
        and _after_value(v, finding.basis) is not None
    ]
    if before is None or not later:
        return None
    after = later[-1]
    value = _after_value(after, finding.basis)
    threshold = _threshold(finding)
    if threshold is None:
        return None
    if finding.basis == "envelope":
        before_value = (finding.suggestion.get("values") or {}).get("surface_rh_pct")
        unit = "% RH"
    else:
        before_value = finding.corrected_rise_c
        unit = "K"
    fixed = value < threshold
    if fixed:
        message = (
            f"Now {value:.1f} {unit}, below {threshold:g} {unit} where the table starts: the "
            "repair worked and the finding can be marked verified."
        )
    else:
        message = (
            f"Now {value:.1f} {unit}, still at or above {threshold:g} {unit}: the repair did "
            "not work."
        )
    return {
        "finding": finding,
        "before": before,
        "before_value": before_value,
        "after": after,
        "after_value": value,
        "threshold": threshold,
        "unit": unit,
        "outcome": "fixed" if fixed else "not_fixed",
        "message": message,
    }


def _after_value(visit: dict, basis: str):
    if basis == "envelope":
        return visit["surface_rh_pct"]
    return visit["rises"].get(basis)


def asset_verifications(asset: Asset, visits: list[dict] | None = None) -> list[dict]:
    """Repair verifications of every open or repaired finding on the asset."""
    if visits is None:
        visits = asset_history(asset)
    results = []
    for visit in visits:
        for finding in visit["findings"]:
            check = repair_verification(finding, visits)
            if check is not None:
                results.append(check)
    return results


def finding_verify(*, finding: Finding, user: AbstractBaseUser) -> Finding:
    """Mark a finding verified when a later measurement shows the repair worked."""
    check = repair_verification(finding)
    if check is None:
        raise ValidationError("No later measurement of this asset to verify the repair against.")
    if check["outcome"] != "fixed":
        raise ValidationError(check["message"])
    note = (
        f"Verified on {check['after']['date']}: {check['before_value']} → "
        f"{check['after_value']:.1f} {check['unit']} (below {check['threshold']:g})."
    )
    return finding_set_status(finding=finding, user=user, status=Finding.Status.VERIFIED, note=note)
