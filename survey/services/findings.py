"""Findings: suggest a severity from the readings, record the inspector's judgement.

A suggestion is a plain dict (stored on the finding as `suggestion`) with the level, the
table and row that gave it, the numbers it came from and the reasons shown to the user.
The inspector may choose another level, but only with a reason, which is kept.
"""

from __future__ import annotations

import math

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
from survey.services.audit import audit_record
from survey.services.criteria_tables import criteria_table_for
from survey.services.loggers import thermogram_air
from survey.services.readings import mark_readings, thermogram_corrected_range
from survey.thermal import pixel_area_m2, surface_heat_flux
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
    load_exponent: float = 2.0,
    design_inside_c: float | None = None,
    design_inside_rh_pct: float | None = None,
    design_outside_c: float | None = None,
    view_angle_deg: float | None = None,
) -> dict:
    """Suggest a severity level for marks (or a whole thermogram) and say why.

    Returns a JSON-ready dict: ``level`` (1–4 or None), ``action``, ``basis``,
    ``table_id``, ``table_key``, ``table_name``, ``row`` (text), ``values`` (the numbers),
    ``flags`` (e.g. ``low_load``) and ``reasons`` (sentences for the inspector).
    Raises ValidationError with an inspector-readable message when the inputs do not
    allow a judgement.
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
    table = criteria_table_for(organization=survey.organization, basis=basis)
    if basis in RISE_BASES:
        result = _suggest_rise(survey, basis, marks, thermogram, reference, load_exponent, table)
    elif basis == "envelope":
        design = (design_inside_c, design_inside_rh_pct, design_outside_c)
        result = _suggest_envelope(survey, marks, thermogram, design, table)
    else:
        result = _suggest_roof(survey, marks, view_angle_deg, table)
    result.update(
        {
            "basis": basis,
            "table_id": table.pk,
            "table_key": table.key,
            "table_name": table.name,
            "table_source": table.source,
        }
    )
    result.setdefault("flags", [])
    return result


def _judged(rule, **numbers) -> dict:
    try:
        return rule(**numbers)
    except JudgementError as error:
        raise ValidationError(str(error)) from None


def _suggest_rise(survey, basis, marks, thermogram, reference, exponent, table) -> dict:
    subject = marks[0] if marks else None
    if subject is not None:
        subject_readings = _readings(subject)
        if subject_readings.get("error"):
            raise ValidationError(f"Mark {subject.label}: {subject_readings['error']}")
        hot_c = subject_readings["corrected"]["max"]
        uncertainty = subject_readings.get("uncertainty_c")
        warnings = [subject_readings.get("emissivity_warning")]
        where = f"mark {subject.label}"
    else:
        hot_c = thermogram_corrected_range(thermogram)[1]
        uncertainty = None
        warnings = []
        where = "the thermogram"
    if basis == "similar":
        ref = reference or (subject.reference_mark if subject is not None else None)
        if ref is None and len(marks) > 1:
            ref = marks[1]
        if ref is None or ref == subject:
            raise ValidationError(
                "For a rise over a like component, mark the hot place first and a like "
                "component under like load as its reference."
            )
        ref_readings = _readings(ref)
        # The reference area stands for "normal": its mean, as the workspace's ΔT uses.
        ref_c = ref_readings["corrected"]["mean"]
        warnings.append(ref_readings.get("emissivity_warning"))
        against = f"mean of mark {ref.label} (like component)"
    else:
        conditions = _conditions(survey)
        ref_c = conditions.ambient_air_c if conditions else None
        if ref_c is None:
            raise ValidationError(
                "Record the ambient air temperature in the survey conditions before "
                "judging a rise over ambient."
            )
        against = "the ambient air"
    conditions = _conditions(survey)
    return _judged(
        judgement.judge_rise,
        hot_c=hot_c,
        reference_c=ref_c,
        where=where,
        against=against,
        load_pct=conditions.load_pct if conditions else None,
        exponent=exponent,
        warnings=warnings,
        uncertainty_c=uncertainty,
        rows=table.rows,
        basis=basis,
    )


def _suggest_envelope(survey, marks, thermogram, design, table) -> dict:
    # The air at the thermogram's capture time: logged when a logger covers it.
    air = thermogram_air(marks[0].thermogram if marks else thermogram)
    t_in, rh_in, t_out = air.indoor_c, air.indoor_rh_pct, air.outdoor_c
    if t_in is None or rh_in is None:
        raise ValidationError(
            "Record the indoor air temperature and humidity in the survey conditions first."
        )
    if marks:
        surface_c = _readings(marks[0])["corrected"]["min"]
        where = f"mark {marks[0].label}"
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
    )


def _suggest_roof(survey, marks, view_angle_deg, table) -> dict:
    area_marks = [m for m in marks if m.kind in AREA_KINDS]
    if not area_marks:
        raise ValidationError("Mark the wet area with a rectangle, ellipse or polygon.")
    thermogram = area_marks[0].thermogram
    if not thermogram.distance_m:
        raise ValidationError("Record the distance from camera to roof on the thermogram.")
    if not survey.ifov_mrad:
        raise ValidationError("Record the camera's IFOV (mrad) on the survey.")
    if view_angle_deg is not None and not 0 <= view_angle_deg < 80:
        raise ValidationError("The viewing angle must be between 0° (square-on) and 80°.")
    pixels = 0
    for mark in area_marks:
        apparent = _readings(mark)["apparent"]
        pixels += int(apparent.get("count") or 0) - int(apparent.get("nan_count") or 0)
    square_on = float(pixel_area_m2(pixels, thermogram.distance_m, survey.ifov_mrad))
    angle = view_angle_deg or 0.0
    area = square_on / math.cos(math.radians(angle))
    reasons = [
        f"{pixels} pixels at {thermogram.distance_m:g} m with an IFOV of "
        f"{survey.ifov_mrad:g} mrad: about {square_on:.2f} m² seen square-on.",
    ]
    flags = ["oblique_caveat"]
    if angle:
        reasons.append(f"Corrected for a {angle:g}° viewing angle: about {area:.2f} m².")
    reasons.append(
        "Caveat: an oblique view makes the true area larger than the image shows; the "
        "estimate holds for a view square-on to the roof unless an angle is given. Confirm "
        "wet insulation with cores or a moisture meter."
    )
    values = {
        "pixel_count": pixels,
        "distance_m": thermogram.distance_m,
        "ifov_mrad": survey.ifov_mrad,
        "view_angle_deg": angle,
        "wet_area_square_on_m2": rounded(square_on, 4),
        "wet_area_m2": rounded(area, 4),
        "max_corrected_c": None,
    }
    result = judgement.with_level(severity.classify(area, table.rows, unit="m²"), reasons)
    result.update({"values": values, "flags": flags})
    return result


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
    """Record a finding judged by `suggestion` (from finding_suggest) and the inspector."""
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
    if previous is not None and previous.organization_id != survey.organization_id:
        raise ValidationError("The earlier finding belongs to another organization.")
    suggested = suggestion.get("level")
    if level is None:
        level = suggested
    _check_level(level, suggested, override_reason)
    values = suggestion.get("values", {})
    table = CriteriaTable.objects.filter(pk=suggestion.get("table_id")).first()
    finding = Finding(
        organization=survey.organization,
        survey=survey,
        thermogram=thermogram,
        asset=asset,
        previous=previous,
        category=category,
        location=location,
        description=description,
        basis=suggestion.get("basis", ""),
        suggested_level=suggested,
        suggestion=suggestion,
        level=level,
        override_reason=override_reason.strip() if level != suggested else "",
        criteria_table=table,
        criteria_row=(suggestion.get("row") or "")[:200],
        rise_c=values.get("rise_c"),
        corrected_rise_c=values.get("corrected_rise_c"),
        max_corrected_c=values.get("max_corrected_c"),
        recommendation=recommendation or suggestion.get("action", ""),
        status=Finding.Status.OPEN,
        status_changed_at=timezone.now(),
        created_by=user,
    )
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
    before = {name: getattr(finding, name) for name in changes if name != "asset"}
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


def finding_set_status(
    *, finding: Finding, user: AbstractBaseUser, status: str, note: str = ""
) -> Finding:
    """Move a finding between open, repaired and verified; the change is audited."""
    if status not in Finding.Status.values:
        raise ValidationError({"status": "Choose open, repaired or verified."})
    if status == Finding.Status.VERIFIED and not note.strip():
        raise ValidationError(
            {"note": "Say how the repair was confirmed before marking it verified."}
        )
    old = finding.status
    finding.status = status
    finding.status_changed_at = timezone.now()
    finding.full_clean()
    finding.save(update_fields=["status", "status_changed_at", "updated_at"])
    audit_record(
        organization=finding.organization,
        actor=user,
        action="finding_status",
        obj=finding,
        detail={"from": old, "to": status, "note": note},
    )
    return finding


# --- heat loss ---


def heat_loss_estimate_create(
    *,
    survey: Survey,
    user: AbstractBaseUser,
    label: str,
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
    """Estimate heat lost by a surface: W/m², W, kWh per year and cost; inputs kept.

    With `t_reference_c` (the temperature of a sound surface nearby) the estimate is the
    excess lost because of the defect: flux(surface) − flux(reference). Without a surface
    temperature or emissivity, the mark's corrected mean and emissivity are used.
    """
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

    q = {k: float(v) for k, v in flux(t_surface_c).items()}
    total_w_m2 = q["total_w_m2"]
    if t_reference_c is not None:
        q_ref = {k: float(v) for k, v in flux(t_reference_c).items()}
        total_w_m2 = q["total_w_m2"] - q_ref["total_w_m2"]
    watts = total_w_m2 * area_m2
    kwh_year = watts * hours_per_year / 1000.0
    # The energy bought is what the surface loses divided by the heat source's efficiency.
    purchased_kwh_year = kwh_year / (efficiency_pct / 100.0)
    results = {
        "convective_w_m2": round(q["convective_w_m2"], 2),
        "radiative_w_m2": round(q["radiative_w_m2"], 2),
        "surface_w_m2": round(q["total_w_m2"], 2),
        "reference_w_m2": round(q["total_w_m2"] - total_w_m2, 2)
        if t_reference_c is not None
        else None,
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
