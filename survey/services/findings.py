"""Findings: suggest a severity from the readings, record the inspector's judgement.

A suggestion is a plain dict (stored on the finding as `suggestion`) with the level, the
table and row that gave it, the numbers it came from and the reasons shown to the user.
The inspector may choose another level, but only with a reason, which is kept.
"""

from __future__ import annotations

import numpy as np
from django.contrib.auth.models import AbstractBaseUser
from django.core.exceptions import ValidationError
from django.db import transaction
from django.utils import timezone

from survey import judgement, severity
from survey.judgement import JudgementError
from survey.models import (
    Asset,
    Conditions,
    CriteriaTable,
    Finding,
    HeatLossEstimate,
    Mark,
    Survey,
    Thermogram,
)
from survey.services.arrays import ThermogramNotReady, thermogram_temperatures
from survey.services.audit import audit_record
from survey.services.criteria_tables import criteria_table_for, table_basis
from survey.services.instruments import survey_ifov
from survey.services.loggers import thermogram_air
from survey.services.readings import mark_readings, thermogram_corrected_range
from survey.thermal import surface_heat_flux
from survey.thermal.units import rounded

RISE_BASES = {"similar", "ambient"}
AREA_KINDS = {Mark.Kind.RECTANGLE, Mark.Kind.ELLIPSE, Mark.Kind.POLYGON}


# --- readings ---


def _readings(mark: Mark) -> dict:
    try:
        return mark_readings(mark)
    except (ValueError, RuntimeError) as error:
        raise ValidationError(f"Mark {mark.label} cannot be read: {error}") from None


def _conditions(survey: Survey) -> Conditions | None:
    try:
        return survey.conditions
    except Conditions.DoesNotExist:
        return None


# --- suggestion ---


def finding_suggest(
    *,
    survey: Survey,
    basis: str,
    marks=(),
    thermogram: Thermogram | None = None,
    reference: Mark | None = None,
    rise_method: str | None = None,
    load_exponent: float = 2.0,
    design_inside_c: float | None = None,
    design_inside_rh_pct: float | None = None,
    design_outside_c: float | None = None,
    view_angle_deg: float | None = None,
) -> dict:
    """Suggest a severity level for marks (or a whole thermogram) and say why.

    Returns a JSON-ready dict: ``level`` (1–4 or None), ``action``, ``basis``,
    ``table_id``, ``table_key``, ``table_name``, ``row`` (text), ``values`` (the numbers),
    ``flags`` (e.g. ``low_load``), ``reasons`` (sentences for the inspector) and
    ``inputs`` (what it was asked, so the finding can be judged again on new readings).
    A rise over a like component is taken hottest to hottest unless `rise_method` (or the
    judged mark's own method) says hottest to mean. Raises ValidationError with an
    inspector-readable message when the inputs do not allow a judgement.
    """
    marks = list(marks)
    for mark in marks:
        if mark.thermogram.survey_id != survey.pk:
            raise ValidationError("The marks must belong to this survey.")
    if thermogram is not None and thermogram.survey_id != survey.pk:
        raise ValidationError("The thermogram must belong to this survey.")
    if not marks and thermogram is None:
        raise ValidationError("Pick one or more marks, or a whole thermogram.")
    allowed = {b for b, _ in severity.BASES.get(survey.kind, [])}
    if basis not in allowed:
        raise ValidationError(f"Choose how to judge a {survey.get_kind_display().lower()} finding.")
    if rise_method is not None and rise_method not in Mark.RiseMethod.values:
        raise ValidationError({"rise_method": "Choose hottest to hottest or hottest to mean."})
    if not 1.0 <= load_exponent <= 3.0:
        raise ValidationError({"load_exponent": "The exponent is between 1 and 3."})
    table = criteria_table_for(organization=survey.organization, basis=basis)
    inputs = {
        "basis": basis,
        "thermogram_id": thermogram.pk if thermogram is not None else None,
        "marks": [mark.label for mark in marks],
    }
    if basis in RISE_BASES:
        result = _suggest_rise(
            survey, basis, marks, thermogram, reference, rise_method, load_exponent, table
        )
        values = result["values"]
        inputs |= {
            "reference": values.get("reference_label"),
            "rise_method": values.get("rise_method"),
            "load_exponent": load_exponent,
        }
    elif basis == "envelope":
        design = (design_inside_c, design_inside_rh_pct, design_outside_c)
        result = _suggest_envelope(survey, marks, thermogram, design, table)
        inputs |= dict(
            zip(
                ("design_inside_c", "design_inside_rh_pct", "design_outside_c"), design, strict=True
            )
        )
    else:
        result = _suggest_roof(survey, marks, view_angle_deg, table)
        inputs["view_angle_deg"] = view_angle_deg
    result.update(
        {
            "basis": basis,
            "table_id": table.pk,
            "table_key": table.key,
            "table_name": table.name,
            "table_source": f"Basis: {table_basis(table)}." if table_basis(table) else "",
            "inputs": inputs,
        }
    )
    result.setdefault("flags", [])
    return result


def _judged(rule, **numbers) -> dict:
    try:
        return rule(**numbers)
    except JudgementError as error:
        raise ValidationError(str(error)) from None


def _suggest_rise(survey, basis, marks, thermogram, reference, method, exponent, table) -> dict:
    subject = marks[0] if marks else None
    if subject is not None:
        subject_readings = _readings(subject)
        if subject_readings.get("error"):
            raise ValidationError(f"Mark {subject.title}: {subject_readings['error']}")
        hot_c = subject_readings["corrected"]["max"]
        uncertainty = subject_readings.get("uncertainty_c")
        warnings = [subject_readings.get("emissivity_warning")]
        where = f"mark {subject.title}"
    else:
        hot_c = thermogram_corrected_range(thermogram)[1]
        uncertainty = None
        warnings = []
        where = "the thermogram"
    ref = None
    if basis == "similar":
        ref = reference or (subject.reference_mark if subject is not None else None)
        if ref is None and len(marks) > 1:
            ref = marks[1]
        if ref is None or ref == subject:
            raise ValidationError(
                "For a rise over a like component, mark the hot place first and a like "
                "component under like load as its reference."
            )
        if method is None:
            method = subject.rise_method if subject is not None else None
        method = method or Mark.RiseMethod.HOTTEST_TO_HOTTEST
        ref_readings = _readings(ref)
        statistic = "max" if method == Mark.RiseMethod.HOTTEST_TO_HOTTEST else "mean"
        ref_c = ref_readings["corrected"][statistic]
        warnings.append(ref_readings.get("emissivity_warning"))
        word = "hottest" if statistic == "max" else "mean"
        against = f"{word} corrected temperature of mark {ref.title} (like component)"
        over = f"mark {ref.title}"
    else:
        method = "hottest_to_air"
        conditions = _conditions(survey)
        ref_c = conditions.ambient_air_c if conditions else None
        if ref_c is None:
            raise ValidationError(
                "Record the ambient air temperature in the survey conditions before "
                "judging a rise over ambient."
            )
        against = "the ambient air"
        over = "the air"
    conditions = _conditions(survey)
    result = _judged(
        judgement.judge_rise,
        hot_c=hot_c,
        reference_c=ref_c,
        method=method,
        where=where,
        over=over,
        against=against,
        load_pct=conditions.load_pct if conditions else None,
        exponent=exponent,
        warnings=warnings,
        uncertainty_c=uncertainty,
        rows=table.rows,
        basis=basis,
    )
    result["values"]["reference_label"] = ref.label if ref is not None else None
    return result


def _suggest_envelope(survey, marks, thermogram, design, table) -> dict:
    # The air at the thermogram's capture time: logged when a logger covers it.
    air = thermogram_air(marks[0].thermogram if marks else thermogram)
    t_in, rh_in, t_out = air.indoor_c, air.indoor_rh_pct, air.outdoor_c
    if t_in is None or rh_in is None:
        raise ValidationError(
            "Record the indoor air temperature and humidity in the survey conditions first."
        )
    uncertainty = None
    if marks:
        readings = _readings(marks[0])
        surface_c = readings["corrected"]["min"]
        uncertainty = readings.get("surface_u_c")
        where = f"mark {marks[0].title}"
    else:
        surface_c = thermogram_corrected_range(thermogram)[0]
        where = "the thermogram"
    return _judged(
        judgement.judge_envelope,
        surface_c=surface_c,
        where=where,
        indoor_c=t_in,
        indoor_rh_pct=rh_in,
        outdoor_c=t_out,
        design=design,
        rows=table.rows,
        uncertainty_c=uncertainty,
    )


def _wet_area(thermogram: Thermogram, area_marks: list[Mark], ifov_mrad: float, angle: float):
    """The marks' union on the thermogram, each pixel with a temperature counted once."""
    from survey.thermal import masked_area_m2
    from survey.thermal.marks import mark_mask

    try:
        temperatures = thermogram_temperatures(thermogram)
    except ThermogramNotReady as error:
        raise ValidationError(str(error)) from None
    mask = np.zeros(temperatures.shape, dtype=bool)
    for mark in area_marks:
        mask |= mark_mask(
            temperatures.shape, mark.kind, mark.points, single_pixel=mark.single_pixel
        )
    return masked_area_m2(
        temperatures, thermogram.distance_m, ifov_mrad, mask=mask, view_angle_deg=angle
    )


def _suggest_roof(survey, marks, view_angle_deg, table) -> dict:
    area_marks = [m for m in marks if m.kind in AREA_KINDS]
    if not area_marks:
        raise ValidationError("Mark the wet area with a rectangle, ellipse or polygon.")
    thermogram = area_marks[0].thermogram
    if any(m.thermogram_id != thermogram.pk for m in area_marks):
        raise ValidationError("Mark the wet area on one thermogram.")
    if not thermogram.distance_m:
        raise ValidationError("Record the distance from camera to roof on the thermogram.")
    ifov, ifov_source = survey_ifov(survey)
    if not ifov:
        raise ValidationError(
            "Choose the survey's camera (with its field of view and detector width), or "
            "record the camera's IFOV (mrad) on the survey."
        )
    if view_angle_deg is not None and not 0 <= view_angle_deg < 80:
        raise ValidationError("The viewing angle must be between 0° (square-on) and 80°.")
    angle = view_angle_deg or 0.0
    square_on = _wet_area(thermogram, area_marks, ifov, 0.0)
    area = _wet_area(thermogram, area_marks, ifov, angle) if angle else square_on
    area_m2, u_m2 = float(area.area_m2), float(area.u_m2)
    missing = (
        f" ({area.missing_count} without a temperature left out)" if area.missing_count else ""
    )
    reasons = [
        f"{area.pixel_count} pixels with a temperature inside the marks{missing}, at "
        f"{thermogram.distance_m:g} m with one pixel seeing {ifov:.3f} mrad ({ifov_source}): "
        f"{float(square_on.area_m2):.2f} ± {float(square_on.u_m2):.2f} m² seen square-on.",
    ]
    flags = ["oblique_caveat"]
    if angle:
        reasons.append(f"Corrected for a {angle:g}° viewing angle: {area_m2:.2f} ± {u_m2:.2f} m².")
    reasons.append(
        "The ± allows the wet edge to lie half a pixel either side of the marked pixels "
        "(our model, stated in the method). Caveat: an oblique view makes the true area "
        "larger than the image shows; the estimate holds for a view square-on to the roof "
        "unless an angle is given. Confirm wet insulation with cores or a moisture meter."
    )
    values = {
        "pixel_count": area.pixel_count,
        "missing_pixel_count": area.missing_count,
        "distance_m": thermogram.distance_m,
        "ifov_mrad": rounded(ifov, 4),
        "ifov_source": ifov_source,
        "view_angle_deg": angle,
        "wet_area_square_on_m2": rounded(square_on.area_m2, 6),
        "wet_area_m2": rounded(area_m2, 6),
        "wet_area_u_m2": rounded(u_m2, 6),
        "wet_area_low_m2": rounded(area.low_m2, 6),
        "wet_area_high_m2": rounded(area.high_m2, 6),
        "max_corrected_c": None,
    }
    result = judgement.with_level(severity.classify(area_m2, table.rows, unit="m²"), reasons)
    result.update({"values": values, "flags": flags})
    return result


# --- what a finding was judged on ---


def _mark_state(mark: Mark) -> dict:
    stats = mark.stats or {}
    if mark.reference_kind == Mark.ReferenceKind.MARK and mark.reference_mark is not None:
        reference = mark.reference_mark.label
    else:
        reference = mark.reference_kind
    return {
        "kind": mark.kind,
        "points": mark.points,
        "single_pixel": mark.single_pixel,
        "emissivity": mark.effective_emissivity,
        "reflected_c": mark.effective_reflected_c,
        "reference": reference,
        "rise_method": mark.rise_method,
        "min_c": rounded(stats.get("min_c"), 3),
        "max_c": rounded(stats.get("max_c"), 3),
        "mean_c": rounded(stats.get("mean_c"), 3),
    }


def readings_snapshot(marks: list[Mark], reference: Mark | None = None) -> dict:
    """The state of the marks a finding is judged on, by label: geometry, ε, reflected
    temperature, reference and the apparent statistics of the array they were read from."""
    judged = list(marks) + ([reference] if reference is not None else [])
    if not judged:
        return {}
    thermogram = judged[0].thermogram
    return {
        "marks": {mark.label: _mark_state(mark) for mark in judged},
        "thermogram": {
            "transmittance": thermogram.transmittance,
            "atmosphere_c": thermogram.atmosphere_c,
        },
    }


FIELD_WORDS = {
    "kind": "kind",
    "points": "outline",
    "single_pixel": "spot size",
    "emissivity": "emissivity",
    "reflected_c": "reflected temperature",
    "reference": "reference",
    "rise_method": "rise method",
    "min_c": "readings",
    "max_c": "readings",
    "mean_c": "readings",
}


def finding_changes(finding: Finding) -> list[str]:
    """What changed since the finding was judged: one sentence per mark or setting.

    Empty when nothing changed, or when the finding was recorded before snapshots were.
    """
    snapshot = finding.readings_snapshot or {}
    judged = snapshot.get("marks") or {}
    if not judged or finding.thermogram_id is None:
        return []
    thermogram = finding.thermogram
    current = {mark.label: mark for mark in thermogram.marks.all()}
    changes = []
    for label, before in sorted(judged.items(), key=lambda kv: (len(kv[0]), kv[0])):
        mark = current.get(label)
        if mark is None:
            changes.append(f"Mark {label} no longer exists.")
            continue
        mark.thermogram = thermogram
        if mark.reference_mark_id and mark.reference_mark_id in {m.pk for m in current.values()}:
            mark.reference_mark = next(
                m for m in current.values() if m.pk == mark.reference_mark_id
            )
        now = _mark_state(mark)
        words = []
        for key, old in before.items():
            if now.get(key) != old and FIELD_WORDS.get(key, key) not in words:
                words.append(FIELD_WORDS.get(key, key))
        if words:
            changes.append(f"Mark {mark.title}: {', '.join(words)} changed.")
    settings_before = snapshot.get("thermogram") or {}
    for key, word in (("transmittance", "transmittance"), ("atmosphere_c", "path temperature")):
        if key in settings_before and getattr(thermogram, key) != settings_before[key]:
            changes.append(f"The thermogram's {word} changed.")
    return changes


# --- findings ---


def _check_level(level, suggested, override_reason: str) -> None:
    if level is None:
        raise ValidationError({"level": "Choose a severity level: no level was suggested."})
    if level not in Finding.Level.values:
        raise ValidationError({"level": "Choose a level from 1 (act now) to 4 (watch)."})
    if level != suggested and not override_reason.strip():
        raise ValidationError(
            {"override_reason": "Say why you chose another level than the suggested one."}
        )


def _check_previous(finding: Finding, previous: Finding | None) -> None:
    """The earlier finding must be of the organization, of an earlier visit, not itself."""
    if previous is None:
        return
    if previous.organization_id != finding.organization_id:
        raise ValidationError({"previous": "The earlier finding belongs to another organization."})
    if previous.pk is not None and previous.pk == finding.pk:
        raise ValidationError({"previous": "A finding cannot re-measure itself."})
    if previous.survey_id == finding.survey_id:
        raise ValidationError({"previous": "Choose a finding of an earlier visit."})
    if previous.survey.date > finding.survey.date:
        raise ValidationError(
            {"previous": "Choose a finding of an earlier visit, not a later one."}
        )
    seen, step = set(), previous
    while step is not None and step.pk not in seen:
        if finding.pk is not None and step.pk == finding.pk:
            raise ValidationError({"previous": "That finding already re-measures this one."})
        seen.add(step.pk)
        step = step.previous


def _judged_fields(suggestion: dict, reference: Mark | None) -> dict:
    """The finding's columns that come from a suggestion."""
    values = suggestion.get("values", {})
    table = CriteriaTable.objects.filter(pk=suggestion.get("table_id")).first()
    rise = suggestion.get("basis") in RISE_BASES
    return {
        "basis": suggestion.get("basis", ""),
        "suggested_level": suggestion.get("level"),
        "suggestion": suggestion,
        "criteria_table": table,
        "criteria_row": (suggestion.get("row") or "")[:200],
        "rise_c": values.get("rise_c"),
        "corrected_rise_c": values.get("corrected_rise_c"),
        "max_corrected_c": values.get("max_corrected_c"),
        "rise_method": values.get("rise_method", "") if rise else "",
        "load_exponent": values.get("load_exponent") if rise else None,
        "reference_mark": reference,
    }


def _suggestion_reference(suggestion: dict, thermogram: Thermogram | None) -> Mark | None:
    label = (suggestion.get("inputs") or {}).get("reference")
    if not label or thermogram is None:
        return None
    return thermogram.marks.filter(label=label).first()


@transaction.atomic
def finding_create(
    *,
    survey: Survey,
    user: AbstractBaseUser,
    category: str,
    suggestion: dict,
    marks=(),
    thermogram: Thermogram | None = None,
    level: int | None = None,
    override_reason: str = "",
    recommendation: str = "",
    location: str = "",
    description: str = "",
    asset: Asset | None = None,
    previous: Finding | None = None,
) -> Finding:
    """Record a finding judged by `suggestion` (from finding_suggest) and the inspector.

    The finding keeps the rise method and load exponent it was judged with, the reference
    mark of a rise, and a snapshot of the marks' readings (finding_changes compares it).
    """
    marks = list(marks)
    if category not in dict(severity.FINDING_CATEGORIES.get(survey.kind, [])):
        raise ValidationError({"category": "Choose a category for this kind of survey."})
    if thermogram is None and marks:
        thermogram = marks[0].thermogram
    if thermogram is not None and thermogram.survey_id != survey.pk:
        raise ValidationError("The thermogram must belong to this survey.")
    if any(m.thermogram_id != getattr(thermogram, "pk", None) for m in marks):
        raise ValidationError("All marks of a finding must be on one thermogram of this survey.")
    if asset is None and thermogram is not None:
        asset = thermogram.asset
    if asset is not None and asset.organization_id != survey.organization_id:
        raise ValidationError({"asset": "Choose an asset of your organization."})
    suggested = suggestion.get("level")
    if level is None:
        level = suggested
    _check_level(level, suggested, override_reason)
    reference = _suggestion_reference(suggestion, thermogram)
    finding = Finding(
        organization=survey.organization,
        survey=survey,
        thermogram=thermogram,
        asset=asset,
        previous=previous,
        category=category,
        location=location,
        description=description,
        level=level,
        override_reason=override_reason.strip() if level != suggested else "",
        recommendation=recommendation or suggestion.get("action", ""),
        readings_snapshot=readings_snapshot(marks, reference if reference not in marks else None),
        status=Finding.Status.OPEN,
        status_changed_at=timezone.now(),
        created_by=user,
        **_judged_fields(suggestion, reference),
    )
    _check_previous(finding, previous)
    finding.full_clean()
    finding.save()
    finding.marks.set(marks)
    audit_record(
        organization=survey.organization,
        actor=user,
        action="finding_created",
        obj=finding,
        detail={
            "level": level,
            "suggested_level": suggested,
            "override_reason": finding.override_reason,
        },
    )
    return finding


EDITABLE_FIELDS = {
    "category",
    "location",
    "description",
    "recommendation",
    "level",
    "override_reason",
    "asset",
    "previous",
}


@transaction.atomic
def finding_update(*, finding: Finding, user: AbstractBaseUser, **changes) -> Finding:
    """Change what the inspector wrote; a level other than the suggested one needs a reason."""
    unknown = set(changes) - EDITABLE_FIELDS
    if unknown:
        raise ValueError(f"Cannot change {', '.join(sorted(unknown))} of a finding.")
    if "category" in changes and changes["category"] not in dict(
        severity.FINDING_CATEGORIES.get(finding.survey.kind, [])
    ):
        raise ValidationError({"category": "Choose a category for this kind of survey."})
    asset = changes.get("asset")
    if asset is not None and asset.organization_id != finding.organization_id:
        raise ValidationError({"asset": "Choose an asset of your organization."})
    if "previous" in changes:
        _check_previous(finding, changes["previous"])
    related = {"asset", "previous"}
    before = {name: getattr(finding, name) for name in changes if name not in related}
    before |= {f"{name}_id": getattr(finding, f"{name}_id") for name in changes if name in related}
    for name, value in changes.items():
        setattr(finding, name, value)
    _check_level(finding.level, finding.suggested_level, finding.override_reason or "")
    if finding.level == finding.suggested_level:
        finding.override_reason = ""
    finding.full_clean()
    finding.save()
    audit_record(
        organization=finding.organization,
        actor=user,
        action="finding_updated",
        obj=finding,
        detail={"before": {k: v for k, v in before.items() if v != getattr(finding, k)}},
    )
    return finding


@transaction.atomic
def finding_rejudge(*, finding: Finding, user: AbstractBaseUser) -> Finding:
    """Judge a finding again on its marks' current readings, with what it was asked before.

    The level follows the new suggestion unless the inspector had chosen another level
    (with a reason), which stays. Issued reports are files and do not change.
    """
    inputs = (finding.suggestion or {}).get("inputs")
    if not inputs or finding.thermogram_id is None:
        raise ValidationError(
            "This finding was recorded before findings kept what they were judged on: "
            "record it again from its thermogram."
        )
    thermogram = finding.thermogram
    by_label = {mark.label: mark for mark in thermogram.marks.select_related("reference_mark")}
    missing = [label for label in inputs.get("marks", []) if label not in by_label]
    reference_label = inputs.get("reference")
    if reference_label and reference_label not in by_label:
        missing.append(reference_label)
    if missing:
        raise ValidationError(
            f"Mark {', '.join(missing)} no longer exists: record the finding again."
        )
    marks = [by_label[label] for label in inputs.get("marks", [])]
    arguments = {
        "survey": finding.survey,
        "basis": inputs["basis"],
        "marks": marks,
        "thermogram": thermogram,
        "reference": by_label.get(reference_label) if reference_label else None,
    }
    for name in (
        "rise_method",
        "load_exponent",
        "design_inside_c",
        "design_inside_rh_pct",
        "design_outside_c",
        "view_angle_deg",
    ):
        if inputs.get(name) is not None:
            arguments[name] = inputs[name]
    if arguments.get("rise_method") == "hottest_to_air":
        del arguments["rise_method"]
    suggestion = finding_suggest(**arguments)
    new_level = suggestion.get("level")
    overridden = finding.is_overridden
    if not overridden and new_level is None:
        raise ValidationError(
            "On the current readings no level is suggested: edit the finding to keep a level "
            "with a reason, or delete it."
        )
    old = {
        "suggested_level": finding.suggested_level,
        "level": finding.level,
        "rise_c": finding.rise_c,
        "corrected_rise_c": finding.corrected_rise_c,
    }
    old_action = (finding.suggestion or {}).get("action", "")
    reference = arguments["reference"] or _suggestion_reference(suggestion, thermogram)
    for name, value in _judged_fields(suggestion, reference).items():
        setattr(finding, name, value)
    if not overridden:
        finding.level = new_level
        finding.override_reason = ""
    elif finding.level == new_level:
        finding.override_reason = ""
    if finding.recommendation == old_action:
        finding.recommendation = suggestion.get("action", "") or finding.recommendation
    finding.readings_snapshot = readings_snapshot(
        marks, reference if reference is not None and reference not in marks else None
    )
    finding.full_clean()
    finding.save()
    audit_record(
        organization=finding.organization,
        actor=user,
        action="finding_rejudged",
        obj=finding,
        detail={"before": old, "suggested_level": new_level, "level": finding.level},
    )
    return finding


def verification_text(finding: Finding) -> str:
    """How a verified finding earned it, as printed on its page and in the report."""
    evidence = finding.verification or {}
    if finding.status != Finding.Status.VERIFIED:
        return ""
    if evidence.get("how") == "measurement":
        return (
            f"Verified by the later measurement of {evidence.get('date')}: "
            f"{evidence.get('before_text', '')} → {evidence.get('after_text', '')}, below "
            f"{evidence.get('threshold_text', '')} where the table starts."
        ).replace(":  →", ":")
    if evidence.get("how") == "override":
        return f"Verified without a later measurement: {finding.verification_reason}"
    return "Verified before the evidence was recorded with findings."


def _set_status(finding: Finding, user, status: str, detail: dict) -> Finding:
    old = finding.status
    finding.status = status
    finding.status_changed_at = timezone.now()
    finding.full_clean()
    finding.save(
        update_fields=[
            "status",
            "status_changed_at",
            "verification",
            "verification_reason",
            "updated_at",
        ]
    )
    audit_record(
        organization=finding.organization,
        actor=user,
        action="finding_status",
        obj=finding,
        detail={"from": old, "to": status} | detail,
    )
    return finding


def finding_set_status(
    *, finding: Finding, user: AbstractBaseUser, status: str, note: str = ""
) -> Finding:
    """Move a finding between open and repaired (or back from verified); audited.

    "Verified" needs evidence: finding_verify_by_measurement (a later measurement that
    passes the check) or finding_verify_override (a reason, kept and printed).
    """
    if status == Finding.Status.VERIFIED:
        raise ValidationError(
            {
                "status": "A finding is verified by a later measurement that passes the check, "
                "or with a reason for verifying it without one."
            }
        )
    if status not in Finding.Status.values:
        raise ValidationError({"status": "Choose open or repaired."})
    finding.verification = {}
    finding.verification_reason = ""
    return _set_status(finding, user, status, {"note": note})


def finding_verify_by_measurement(
    *, finding: Finding, user: AbstractBaseUser, evidence: dict
) -> Finding:
    """Mark a finding verified from a later measurement; `evidence` says which and what."""
    if evidence.get("outcome") != "fixed":
        raise ValidationError("The later measurement does not show the repair worked.")
    finding.verification = {"how": "measurement"} | {
        key: evidence[key]
        for key in (
            "survey_id",
            "date",
            "before_text",
            "after_text",
            "threshold_text",
            "after_value",
        )
        if key in evidence
    }
    finding.verification_reason = ""
    return _set_status(finding, user, Finding.Status.VERIFIED, {"evidence": finding.verification})


def finding_verify_override(*, finding: Finding, user: AbstractBaseUser, reason: str) -> Finding:
    """Mark a finding verified without a later measurement; the reason is kept and printed."""
    reason = (reason or "").strip()
    if not reason:
        raise ValidationError(
            {
                "reason": "Say how the repair was confirmed without a later measurement (for "
                "example the component replaced, with the work order)."
            }
        )
    finding.verification = {
        "how": "override",
        "at": timezone.now().date().isoformat(),
        "by": getattr(user, "username", ""),
    }
    finding.verification_reason = reason[:2000]
    return _set_status(finding, user, Finding.Status.VERIFIED, {"reason": reason[:2000]})


# --- heat loss ---

#: Which surveys a heat-loss estimate applies to, and what "heat leaving" means there.
HEAT_LOSS_KINDS = {Survey.Kind.ENVELOPE, Survey.Kind.ROOF, Survey.Kind.MECHANICAL}
HEAT_LOSS_SIDES = {
    "inside": "an inside surface of the building (heat flows from the room air into it)",
    "outside": "an outside surface, a roof, or a pipe or vessel (heat flows from it into the air)",
}
HEAT_LOSS_APPLIES = (
    "Heat-loss estimates apply to building envelope and roof surfaces and to the outside of "
    "pipes, ducts and vessels; heat leaving the building (or the pipe) is counted positive."
)


def heat_loss_refusal(survey: Survey) -> str:
    """Why a survey takes no heat-loss estimate, or '' when it does."""
    if survey.kind in HEAT_LOSS_KINDS:
        return ""
    return (
        f"{HEAT_LOSS_APPLIES} A {survey.get_kind_display().lower()} survey's components heat "
        "up because of their load: their temperature is a fault sign, not a building heat "
        "loss, so no estimate is made for them."
    )


def heat_loss_estimate_create(
    *,
    survey: Survey,
    user: AbstractBaseUser,
    label: str,
    side: str,
    t_surface_c: float | None,
    t_air_c: float,
    emissivity: float | None,
    geometry: str,
    size_m: float,
    area_m2: float,
    hours_per_year: float,
    price_per_kwh: float = 0.0,
    efficiency_pct: float = 100.0,
    currency: str = "",
    wind_m_s: float = 0.0,
    t_surroundings_c: float | None = None,
    t_reference_c: float | None = None,
    mark: Mark | None = None,
    finding: Finding | None = None,
) -> HeatLossEstimate:
    """Estimate heat lost through a surface: W/m², W, kWh per year and cost; inputs kept.

    Sign: heat leaving the building (or the pipe or vessel) is positive. On an inside
    surface (`side` "inside") that is the heat the room air gives to the surface, the
    negative of the surface's flux to the air; on an outside surface ("outside") it is the
    surface's flux to the air. An estimate that would come out negative (heat entering)
    is refused with the reason. With `t_reference_c` (the temperature of a sound surface
    nearby) the estimate is the excess lost because of the defect. Without a surface
    temperature or emissivity, the mark's corrected mean and emissivity are used.
    Electrical surveys take no estimate (heat_loss_refusal).
    """
    refusal = heat_loss_refusal(survey)
    if refusal:
        raise ValidationError(refusal)
    if side not in HEAT_LOSS_SIDES:
        raise ValidationError({"side": "Say whether this is an inside or an outside surface."})
    if side == "inside" and survey.kind == Survey.Kind.MECHANICAL:
        raise ValidationError(
            {"side": "A pipe, duct or vessel loses heat from its outside surface."}
        )
    if mark is not None and mark.thermogram.survey_id != survey.pk:
        raise ValidationError("The mark must belong to this survey.")
    if mark is not None and t_surface_c is None:
        t_surface_c = _readings(mark)["corrected"]["mean"]
    if mark is not None and emissivity is None:
        emissivity = mark.effective_emissivity
    if t_surface_c is None or emissivity is None:
        raise ValidationError("Give the surface temperature and emissivity, or pick a mark.")
    if finding is not None and finding.survey_id != survey.pk:
        raise ValidationError("The finding must belong to this survey.")
    if not 0 < area_m2 <= 1e5:
        raise ValidationError({"area_m2": "The area must be above 0 m²."})
    if not 0 <= hours_per_year <= 8784:
        raise ValidationError({"hours_per_year": "Hours per year are between 0 and 8784."})
    if not 1 <= efficiency_pct <= 600:
        raise ValidationError({"efficiency_pct": "Efficiency (or COP) is between 1 and 600 %."})
    if price_per_kwh < 0:
        raise ValidationError({"price_per_kwh": "The energy price cannot be negative."})
    inputs = {
        "side": side,
        "t_surface_c": t_surface_c,
        "t_air_c": t_air_c,
        "t_surroundings_c": t_surroundings_c,
        "t_reference_c": t_reference_c,
        "emissivity": emissivity,
        "geometry": geometry,
        "size_m": size_m,
        "wind_m_s": wind_m_s,
        "area_m2": area_m2,
        "hours_per_year": hours_per_year,
        "price_per_kwh": price_per_kwh,
        "currency": currency,
        "efficiency_pct": efficiency_pct,
    }

    def flux(t_c: float) -> dict:
        try:
            return surface_heat_flux(
                t_c,
                t_air_c,
                emissivity,
                geometry,
                size_m,
                wind_m_s=wind_m_s,
                t_surroundings_c=t_surroundings_c,
            )
        except ValueError as error:
            raise ValidationError(f"Cannot estimate the heat loss: {error}") from None

    # The physics gives the flux from the surface to the air; leaving is that flux outside
    # and its negative inside.
    sign = -1.0 if side == "inside" else 1.0
    q = {k: sign * float(v) for k, v in flux(t_surface_c).items()}
    total_w_m2 = q["total_w_m2"]
    reference_w_m2 = None
    if t_reference_c is not None:
        reference_w_m2 = sign * float(flux(t_reference_c)["total_w_m2"])
        total_w_m2 = q["total_w_m2"] - reference_w_m2
    if total_w_m2 < 0:
        if t_reference_c is not None:
            reason = (
                "the marked surface loses less heat than the sound surface nearby: there is "
                "no excess loss to estimate."
            )
        elif side == "inside":
            reason = (
                "an inside surface warmer than the room air gives heat to the room: no heat "
                "leaves the building through it. Is it an outside surface?"
            )
        else:
            reason = (
                "an outside surface colder than the air takes heat from it: no heat leaves "
                "through it. Is it an inside surface?"
            )
        raise ValidationError(f"No heat loss: {reason}")
    watts = total_w_m2 * area_m2
    kwh_year = watts * hours_per_year / 1000.0
    # The energy bought is what the surface loses divided by the heat source's efficiency.
    purchased_kwh_year = kwh_year / (efficiency_pct / 100.0)
    results = {
        "sign": "heat leaving the building is positive",
        "convective_w_m2": round(q["convective_w_m2"], 2),
        "radiative_w_m2": round(q["radiative_w_m2"], 2),
        "surface_w_m2": round(q["total_w_m2"], 2),
        "reference_w_m2": round(reference_w_m2, 2) if reference_w_m2 is not None else None,
        "total_w_m2": round(total_w_m2, 2),
        "watts": round(watts, 1),
        "kwh_per_year": round(kwh_year, 1),
        "purchased_kwh_per_year": round(purchased_kwh_year, 1),
        "cost_per_year": round(purchased_kwh_year * price_per_kwh, 2),
    }
    estimate = HeatLossEstimate(
        organization=survey.organization,
        survey=survey,
        finding=finding,
        mark=mark,
        label=label.strip() or "Heat loss",
        inputs=inputs,
        results=results,
    )
    estimate.full_clean()
    estimate.save()
    audit_record(
        organization=survey.organization,
        actor=user,
        action="heat_loss_created",
        obj=estimate,
        detail={"watts": results["watts"]},
    )
    return estimate
