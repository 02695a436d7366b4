"""Report blocks particular to a survey kind: the roof (plan, wet areas, moisture checks)
and the building envelope (construction, pressure difference, the outdoor 24 h before).

Each function returns the context of one include under templates/reports/pdf/."""

import io
import logging

from PIL import Image

from reports.pictures import Pictures
from survey.models import Finding, Survey
from survey.services import roof
from survey.thermal import units
from survey.thermal.drawing import draw_plan

logger = logging.getLogger(__name__)

PLAN_WIDTH_PX = 1600


def _plan_picture(survey: Survey, thermograms: list, wet: list[dict], pictures: Pictures):
    placements = [
        (t.plan_x_pct / 100, t.plan_y_pct / 100, str(t.sequence))
        for t in thermograms
        if t.plan_x_pct is not None
    ]
    outlines = [
        (
            row["thermogram"].plan_x_pct / 100,
            row["thermogram"].plan_y_pct / 100,
            f"{row['number']} {row['area_m2']:.1f} ± {row['u_m2']:.1f} m²",
        )
        for row in wet
        if row["thermogram"] is not None and row["thermogram"].plan_x_pct is not None
    ]
    try:
        with survey.roof_plan.open("rb") as handle, Image.open(io.BytesIO(handle.read())) as plan:
            drawn = draw_plan(plan, placements, outlines, max_width_px=PLAN_WIDTH_PX)
    except (OSError, ValueError):
        logger.warning("Roof plan of survey %s could not be drawn", survey.pk, exc_info=True)
        return None
    return pictures.add(f"roof-plan-{survey.pk}", drawn)


def roof_context(
    survey: Survey, thermograms: list, findings: list[Finding], pictures: Pictures
) -> dict | None:
    """The roof block: survey time, membrane and insulation, rain, the plan, wet areas
    numbered W1, W2… with their total, and the checks recorded against each finding."""
    if survey.kind != Survey.Kind.ROOF:
        return None
    totals = roof.wet_area_total(findings)
    wet = []
    for number, row in enumerate(totals["rows"], start=1):
        finding = row["finding"]
        finding.wet_number = f"W{number}"
        wet.append({**row, "number": finding.wet_number, "thermogram": finding.thermogram})
    by_id = {t.pk: t for t in thermograms}
    for row in wet:
        if row["thermogram"] is not None:
            row["thermogram"] = by_id.get(row["thermogram"].pk, row["thermogram"])
    checks = [c for f in findings for c in f.moisture_checks.all()]
    conditions = getattr(survey, "conditions", None)
    return {
        "plan": _plan_picture(survey, thermograms, wet, pictures) if survey.roof_plan else None,
        "placed": [t for t in thermograms if t.plan_x_pct is not None],
        "not_placed": [t for t in thermograms if t.plan_x_pct is None],
        "wet": wet,
        "total_m2": totals["total_m2"],
        "total_u_m2": totals["total_u_m2"],
        "checks": checks,
        "rain_24h_mm": conditions.rain_24h_mm if conditions else None,
    }


def envelope_context(survey: Survey, unit: str) -> dict | None:
    """The envelope block: construction, pressure difference, outdoor 24 h before (from the
    outdoor log when there is one)."""
    from survey.services.loggers import survey_logged_window

    if not survey.is_building:
        return None
    conditions = getattr(survey, "conditions", None)
    outdoor = None
    window = survey_logged_window(survey)
    if window and "outdoor_min" in window:
        low, high = window["outdoor_min"].value, window["outdoor_max"].value
        if low is not None and high is not None:
            outdoor = {
                "low": units.from_celsius(low, unit),
                "high": units.from_celsius(high, unit),
            }
    pressure = conditions.pressure_difference_pa if conditions else None
    return {
        "description": survey.building_description,
        "pressure_pa": pressure,
        "pressure_method": conditions.get_pressure_method_display() if conditions else "",
        "outdoor_24h": outdoor,
    }
