"""An asset across visits: key readings, findings over time and repair verification.

Choices, documented once here:

- A visit is a survey in which the asset was measured: a thermogram tied to the asset, or a
  finding on the asset.
- The key reading of a visit is the highest corrected temperature of the marks on the
  asset's thermograms (the whole thermogram's corrected maximum when it has no marks), and
  the highest rise of those marks per basis: ``similar`` when the mark's reference is
  another mark, ``ambient`` when it is the air. Each is kept as measured and, when the
  survey recorded the load, also corrected to full load with the exponent n of the visit's
  finding of that basis (n = 2 when the visit has none); both are shown, labelled, at
  0.1 K. Building surveys also keep the highest surface RH.
- Repair verification: a finding that is open or repaired is compared with the latest
  later visit that measured the same basis. For a rise, the repair worked when the rise has
  fallen below the lower bound of the lowest band of the finding's table (the "possible
  deficiency" band of the electrical tables): below it the table gives no level, so there
  is nothing left to report. The later rise is corrected to full load with the finding's
  own n, so like is compared with like. For building surfaces the same holds for the
  surface RH under the envelope table. Otherwise the repair did not work. Roof findings
  need cores or a moisture meter; the app does not judge their repair.
"""

from __future__ import annotations

import math

from django.contrib.auth.models import AbstractBaseUser
from django.core.exceptions import ValidationError

from survey import severity
from survey.models import Asset, Conditions, Finding, Survey
from survey.services.findings import finding_verify_by_measurement

OPEN_STATUSES = {Finding.Status.OPEN, Finding.Status.REPAIRED}
RISE_BASES = ("similar", "ambient")
DEFAULT_EXPONENT = 2.0


def _load(survey: Survey) -> float | None:
    try:
        load = survey.conditions.load_pct
    except Conditions.DoesNotExist:
        return None
    if load is None or load <= 0 or survey.is_building:
        return None
    return load


def full_load_rise(measured_c: float, load_pct: float | None, exponent: float) -> float | None:
    """The full-load rise at 0.1 K, or None without a load (or for a rise of 0 K or less)."""
    from survey.thermal import load_corrected_rise, round_rise_c

    if load_pct is None or measured_c <= 0:
        return None
    return float(round_rise_c(load_corrected_rise(measured_c, load_pct, exponent)))


def _rise(measured_c: float, survey: Survey, exponent: float) -> dict:
    load = _load(survey)
    return {
        "measured": measured_c,
        "full_load": full_load_rise(measured_c, load, exponent),
        "exponent": exponent if load is not None and measured_c > 0 else None,
        "load_pct": load,
    }


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


def _exponent(findings: list, basis: str) -> float:
    for finding in findings:
        if finding.basis == basis and finding.load_exponent is not None:
            return finding.load_exponent
    return DEFAULT_EXPONENT


def _visit(survey: Survey, thermograms: list, findings: list) -> dict:
    keys = [_thermogram_key(t) for t in thermograms]
    rises = {}
    for basis in RISE_BASES:
        measured = _max([v for key in keys for v in key["rises"][basis]])
        if measured is not None:
            rises[basis] = _rise(measured, survey, _exponent(findings, basis))
    # A judged finding's rise is the visit's rise for its basis when marks give none.
    for finding in findings:
        if finding.basis in RISE_BASES and finding.basis not in rises:
            measured = finding.rise_c if finding.rise_c is not None else finding.corrected_rise_c
            if measured is not None:
                rises[finding.basis] = _rise(
                    measured, survey, finding.load_exponent or DEFAULT_EXPONENT
                )
    max_c = _max([k["max_c"] for k in keys] + [f.max_corrected_c for f in findings])
    key_rise = None
    basis_order = [f.basis for f in findings] + list(RISE_BASES)
    for basis in basis_order:
        if basis in rises:
            rise = rises[basis]
            value = rise["full_load"] if rise["full_load"] is not None else rise["measured"]
            key_rise = {"basis": basis, "value": value} | rise
            break
    return {
        "survey": survey,
        "date": survey.date,
        "thermograms": thermograms,
        "findings": findings,
        "max_corrected_c": max_c,
        "rises": rises,
        "key_rise": key_rise,
        "load_corrected": any(r["full_load"] is not None for r in rises.values()),
        "surface_rh_pct": _max([k["surface_rh_pct"] for k in keys]),
    }


def trend_points(visits: list[dict], basis: str | None = None) -> list[tuple]:
    """(date, rise) for the trend chart; a visit without a rise of the basis leaves a gap."""
    points = []
    for visit in visits:
        if basis:
            rise = visit["rises"].get(basis)
            value = None
            if rise is not None:
                value = rise["full_load"] if rise["full_load"] is not None else rise["measured"]
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


def rise_text(value: float | None, full_load: bool, exponent: float | None) -> str:
    """'6.3 K full-load (n = 1.5)' or '4.0 K measured'."""
    if value is None:
        return "—"
    if full_load:
        return f"{value:.1f} K full-load (n = {exponent:g})"
    return f"{value:.1f} K measured"


def _judged_value(finding: Finding, visit: dict) -> tuple[float | None, str]:
    """The value of a later visit to compare with the finding's, and its words."""
    if finding.basis == "envelope":
        value = visit["surface_rh_pct"]
        return value, (f"{value:.1f} % RH" if value is not None else "—")
    rise = visit["rises"].get(finding.basis)
    if rise is None:
        return None, "—"
    exponent = finding.load_exponent or DEFAULT_EXPONENT
    full = full_load_rise(rise["measured"], rise["load_pct"], exponent)
    if full is not None:
        return full, rise_text(full, True, exponent)
    return rise["measured"], rise_text(rise["measured"], False, None)


def _before(finding: Finding) -> tuple[float | None, str]:
    if finding.basis == "envelope":
        value = (finding.suggestion.get("values") or {}).get("surface_rh_pct")
        return value, (f"{value:.1f} % RH" if value is not None else "—")
    full = finding.corrected_rise_c
    if full is not None and full != finding.rise_c:
        return full, rise_text(full, True, finding.load_exponent or DEFAULT_EXPONENT)
    value = finding.rise_c if finding.rise_c is not None else full
    return value, rise_text(value, False, None)


def repair_verification(finding: Finding, visits: list[dict] | None = None) -> dict | None:
    """Before/after of an open or repaired finding against the latest later visit.

    Returns None when there is nothing to compare (finding closed, no asset, no later
    measurement of the same basis). Otherwise ``before``, ``after`` (visits),
    ``threshold``, ``unit``, ``outcome`` (``fixed`` or ``not_fixed``), ``message`` and the
    printed ``before_text``, ``after_text``, ``threshold_text``.
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
        and _judged_value(finding, v)[0] is not None
    ]
    if before is None or not later:
        return None
    after = later[-1]
    value, after_text = _judged_value(finding, after)
    threshold = _threshold(finding)
    if threshold is None:
        return None
    unit = "% RH" if finding.basis == "envelope" else "K"
    before_value, before_text = _before(finding)
    threshold_text = f"{threshold:g} {unit}"
    fixed = value < threshold
    if fixed:
        message = (
            f"Now {after_text}, below {threshold_text} where the table starts: the repair "
            "worked and the finding can be marked verified."
        )
    else:
        message = f"Now {after_text}, still at or above {threshold_text}: the repair did not work."
    return {
        "finding": finding,
        "before": before,
        "before_value": before_value,
        "before_text": before_text,
        "before_label": before_text.partition(" K ")[2],
        "after": after,
        "after_value": value,
        "after_text": after_text,
        "after_label": after_text.partition(" K ")[2],
        "threshold": threshold,
        "threshold_text": threshold_text,
        "unit": unit,
        "outcome": "fixed" if fixed else "not_fixed",
        "message": message,
    }


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
    evidence = {
        "outcome": "fixed",
        "survey_id": check["after"]["survey"].pk,
        "date": check["after"]["date"].isoformat(),
        "before_text": check["before_text"],
        "after_text": check["after_text"],
        "threshold_text": check["threshold_text"],
        "after_value": check["after_value"],
    }
    return finding_verify_by_measurement(finding=finding, user=user, evidence=evidence)
