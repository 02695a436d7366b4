"""A survey's results as plain data: what a report shows and what its digest is made from.

Used by the PDF (reports/document.py), the services and the archive; it draws nothing.
"""

import hashlib
import json
import math

from survey.conditions import conditions_check
from survey.models import Finding, Survey, Thermogram
from survey.services.readings import readings_of_marks, rise_context
from survey.severity import category_label

_PLAIN = frozenset({str, int, bool, type(None)})


def json_safe(value):
    """Plain JSON types: numpy scalars to Python, NaN and infinities to None.

    The exact-type checks come first: a 50-thermogram survey holds some 100,000 numbers
    (the profiles of its line marks), and this runs over all of them.
    """
    kind = type(value)
    if kind is float:
        return value if math.isfinite(value) else None
    if kind in _PLAIN:
        return value
    if kind is list or kind is tuple:
        return [json_safe(item) for item in value]
    if kind is dict:
        return {str(key): json_safe(item) for key, item in value.items()}
    if isinstance(value, dict):
        return {str(key): json_safe(item) for key, item in value.items()}
    if isinstance(value, list | tuple):
        return [json_safe(item) for item in value]
    if hasattr(value, "item") and not isinstance(value, str | bytes):
        value = value.item() if getattr(value, "ndim", 0) == 0 else value.tolist()
        return json_safe(value)
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


def readings_by_thermogram(survey: Survey, thermograms) -> dict[int, list[dict]]:
    """The readings of every ready thermogram with marks, JSON-safe, computed once.

    `thermograms` should come with their marks prefetched: the readings are then made from
    those rows instead of one query per thermogram.
    """
    context = rise_context(survey)
    return {
        thermogram.pk: json_safe(_thermogram_readings(thermogram, context))
        for thermogram in thermograms
        if thermogram.is_ready and thermogram.marks.all()
    }


def _thermogram_readings(thermogram: Thermogram, context: dict) -> list[dict]:
    """survey.services.readings.thermogram_readings, on the thermogram's prefetched marks."""
    marks = sorted(thermogram.marks.all(), key=lambda m: (len(m.label), m.label))
    by_pk = {mark.pk: mark for mark in marks}
    for mark in marks:
        mark.thermogram = thermogram
        if mark.reference_mark_id in by_pk:
            mark.reference_mark = by_pk[mark.reference_mark_id]
    by_id = readings_of_marks(marks, context)
    return [by_id[mark.pk] for mark in marks]


def content_digest(results: dict) -> str:
    """sha256 of the survey results in canonical JSON: what the report was built from."""
    canonical = json.dumps(results, sort_keys=True, separators=(",", ":"), ensure_ascii=True)
    return hashlib.sha256(canonical.encode()).hexdigest()


# How sure the product is of a criterion is the firm's working note, not client data.
_INTERNAL_CHECK_KEYS = frozenset({"source", "confidence", "confidence_text"})


def results_file_name(survey_id: int) -> str:
    return f"survey-{survey_id}-results.json"


def results_file(results: dict) -> bytes:
    """The survey's results export as the file a user downloads, byte for byte: the same
    data always gives the same bytes, so `sha256sum` of the file checks it. It carries the
    digest of its own data in `content_sha256`, as reports before issue 14 printed it."""
    from django.core.serializers.json import DjangoJSONEncoder

    data = {**results, "content_sha256": content_digest(results)}
    text = json.dumps(data, ensure_ascii=False, indent=1, cls=DjangoJSONEncoder)
    return (text + "\n").encode("utf-8")


def conditions_check_rows(survey: Survey) -> list[dict]:
    rows = conditions_check(survey)
    return json_safe(
        [{k: v for k, v in row.items() if k not in _INTERNAL_CHECK_KEYS} for row in rows]
    )


def _finding_dict(finding: Finding) -> dict:
    values = (finding.suggestion or {}).get("values") or {}
    return {
        "id": finding.pk,
        "thermogram_id": finding.thermogram_id,
        "asset": finding.asset.name if finding.asset else None,
        "asset_tag": finding.asset.tag if finding.asset else None,
        "marks": sorted(mark.label for mark in finding.marks.all()),
        "mark_names": {mark.label: mark.name for mark in finding.marks.all() if mark.name},
        "reference_mark": finding.reference_mark.label if finding.reference_mark else None,
        "category": finding.category,
        "category_label": category_label(finding.survey.kind, finding.category),
        "location": finding.location,
        "description": finding.description,
        "basis": finding.basis,
        "level": finding.level,
        "level_name": finding.get_level_display() if finding.level else None,
        "suggested_level": finding.suggested_level,
        "override_reason": finding.override_reason,
        "criteria_table": finding.criteria_table.name if finding.criteria_table else None,
        "criteria_row": finding.criteria_row,
        "rise_c": finding.rise_c,
        "corrected_rise_c": finding.corrected_rise_c,
        "rise_method": finding.rise_method,
        "load_exponent": finding.load_exponent,
        "max_corrected_c": finding.max_corrected_c,
        "wet_area_m2": values.get("wet_area_m2"),
        "wet_area_u_m2": values.get("wet_area_u_m2"),
        "recommendation": finding.recommendation,
        "status": finding.status,
        "verification": finding.verification,
        "verification_reason": finding.verification_reason,
        "moisture_checks": [
            {
                "method": check.method,
                "checked_on": check.checked_on.isoformat(),
                "result": check.result,
                "reading": check.reading,
                "note": check.note,
            }
            for check in finding.moisture_checks.all()
        ],
    }


def survey_results(survey: Survey, *, readings: dict[int, list[dict]] | None = None) -> dict:
    """The survey's results as plain data: marks with corrected values, findings, conditions.

    The same dictionary is what a report's content digest is computed from.
    """
    thermograms = survey.thermograms.filter(status="ready").select_related("asset")
    if readings is None:
        thermograms = list(thermograms.prefetch_related("marks"))
        readings = readings_by_thermogram(survey, thermograms)
    conditions = getattr(survey, "conditions", None)
    conditions_data = {}
    if conditions is not None:
        for model_field in conditions._meta.concrete_fields:
            if model_field.name != "survey":
                conditions_data[model_field.name] = getattr(conditions, model_field.name)
    results = json_safe(
        {
            "format": "heatmark-survey-results",
            "format_version": 1,
            "temperature_unit": "°C",
            "survey": {
                "id": survey.pk,
                "kind": survey.kind,
                "title": str(survey),
                "date": survey.date.isoformat(),
                "client": survey.site.client.name,
                "site": survey.site.name,
                "instrument": str(survey.camera) if survey.camera_id else survey.instrument,
                "start_time": survey.start_time.strftime("%H:%M") if survey.start_time else None,
                "end_time": survey.end_time.strftime("%H:%M") if survey.end_time else None,
                "building_description": survey.building_description,
                "roof_membrane": survey.roof_membrane,
                "roof_insulation": survey.roof_insulation,
                "roof_plan_sha256": survey.roof_plan_sha256 or None,
                "thermographer": str(survey.thermographer) if survey.thermographer else None,
                "reviewer": str(survey.reviewer) if survey.reviewer else None,
            },
            "conditions": conditions_data,
            "conditions_check": conditions_check_rows(survey),
            "thermograms": [
                {
                    "id": t.pk,
                    "sequence": t.sequence,
                    "title": t.title,
                    "original_name": t.original_name,
                    "original_sha256": t.original_sha256,
                    "estimated": t.estimated,
                    "asset": t.asset.name if t.asset else None,
                    "emissivity": t.emissivity,
                    "reflected_c": t.reflected_c,
                    "transmittance": t.transmittance,
                    "distance_m": t.distance_m,
                    "plan_x_pct": t.plan_x_pct,
                    "plan_y_pct": t.plan_y_pct,
                }
                for t in thermograms
            ],
            "findings": [
                _finding_dict(f)
                for f in survey.findings.select_related(
                    "asset", "criteria_table", "survey", "reference_mark"
                )
                .prefetch_related("marks", "moisture_checks")
                .order_by("id")
            ],
            "heat_loss": [
                {"label": e.label, "inputs": e.inputs, "results": e.results}
                for e in survey.heat_loss_estimates.all()
            ],
        }
    )
    # The readings are JSON-safe already (readings_by_thermogram): not walked a second time.
    for thermogram in results["thermograms"]:
        thermogram["marks"] = readings.get(thermogram["id"], [])
    return results
