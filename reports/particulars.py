"""The report's particulars: who did the work and with what, the firm's letterhead and the
sign-off, each thermogram's capture details, the equipment inspected, the plain-language
summary and the glossary.

`particulars_context` adds to the context reports.document.build_context made; each block
has its own include under templates/reports/pdf/.
"""

import datetime
from dataclasses import dataclass

from django.utils.safestring import mark_safe

from reports.pictures import Pictures
from survey.charts import profile_svg
from survey.models import Finding, Member, Survey, Thermogram
from survey.services.instruments import survey_ifov
from survey.services.loggers import local_text, thermogram_air
from survey.services.rounds import add_months
from survey.severity import category_label
from survey.thermal import pixel_footprint_m, units

LOGO_MAX_BYTES = 4 * 1024 * 1024

# Our own words for the terms a report uses; `kinds` None means every survey kind.
GLOSSARY = [
    (
        "Thermogram",
        "A picture of the heat a surface gives off, taken with a thermal camera; each pixel "
        "holds a temperature.",
        None,
    ),
    (
        "Emissivity (ε)",
        "How well a surface gives off heat radiation, from 0 to 1. Matt paint, brick and "
        "plaster are near 0.9; bare shiny metal can be below 0.1 and then mostly mirrors its "
        "surroundings.",
        None,
    ),
    (
        "Reflected temperature",
        "The temperature of the surroundings that a surface mirrors into the camera. It is "
        "measured or estimated at the time and taken out of each reading.",
        None,
    ),
    (
        "Apparent temperature",
        "What the camera reads before the surface's emissivity and the reflected surroundings "
        "are allowed for.",
        None,
    ),
    (
        "Corrected temperature",
        "The surface's temperature after allowing for its emissivity and the reflected "
        "surroundings; the ± beside it says how well it is known.",
        None,
    ),
    (
        "ΔT",
        "A temperature difference: between a spot and a reference spot, or between a spot and "
        "the air.",
        None,
    ),
    (
        "Rise",
        "How much warmer a component is than a like component under like load, or than the air "
        "around it; the report says which reference each rise uses.",
        {"electrical", "mechanical"},
    ),
    (
        "Full-load rise",
        "A rise scaled from the load at the time of the survey to the component's full "
        "rating, because heating grows with current.",
        {"electrical"},
    ),
    (
        "Dew point",
        "The temperature at which the room's air would start to leave water on a surface.",
        {"envelope", "roof"},
    ),
    (
        "Surface RH",
        "The relative humidity of the thin layer of air touching a surface. Mould can start to "
        "grow where it stays at about 80 % for long; at 100 % water condenses.",
        {"envelope", "roof"},
    ),
    (
        "fRsi (temperature factor)",
        "How close the inside surface stays to the indoor temperature, from 0 (as cold as "
        "outdoors) to 1 (as warm as indoors). It does not depend on the weather of the day, so "
        "surveys on different days can be compared. The critical fRsi is the lowest value that "
        "keeps the surface free of mould risk for the indoor humidity.",
        {"envelope", "roof"},
    ),
    (
        "Span",
        "The range of temperatures that a picture's colours stand for; the scale bar beside "
        "each thermogram gives it.",
        None,
    ),
]

METHOD_NOT_RECORDED = "method not recorded"
RE_INSPECTION_BASIS = (
    "NFPA 70B asks for infrared inspection of electrical equipment at least every 12 months; "
    "equipment that is critical, heavily loaded or in a harsh place is often inspected more "
    "often."
)


@dataclass
class Person:
    role: str
    member: Member
    qualification: str
    expires: datetime.date | None
    expired: bool


def people(survey: Survey, reviewer: Member | None) -> list[Person]:
    rows = []
    for role, member in (("Thermographer", survey.thermographer), ("Reviewer", reviewer)):
        if member is None:
            continue
        rows.append(
            Person(
                role=role,
                member=member,
                qualification=member.qualification_text,
                expires=member.qualification_expires,
                expired=member.qualification_expired_on(survey.date),
            )
        )
    return rows


def instrument_record(survey: Survey, thermograms: list[Thermogram]) -> dict:
    """The chosen camera's record and the deviations the report must state: thermograms whose
    pixel size is not the camera's detector, and a calibration past due on the survey date."""
    camera = survey.camera
    ifov_mrad, ifov_source = survey_ifov(survey)
    deviations = []
    sizes = sorted({(t.width, t.height) for t in thermograms if t.width and t.height})
    if camera is not None:
        detector = (camera.detector_width_px, camera.detector_height_px)
        other = [size for size in sizes if size not in (detector, detector[::-1])]
        if other:
            shown = ", ".join(f"{w} × {h}" for w, h in other)
            deviations.append(
                f"The thermograms measure {shown} pixels, not the {detector[0]} × {detector[1]} "
                f"pixels of the camera record ({camera.model_name}): they were exported at "
                "another size or taken with another camera. Figures that depend on the size "
                "of a pixel (the spatial scale, areas) use the camera record's pixels and can "
                "be off by the ratio of the two sizes."
            )
        if camera.calibration_due is not None and camera.calibration_due < survey.date:
            deviations.append(
                f"The camera's calibration was due on {camera.calibration_due:%-d %B %Y}, "
                "before the survey."
            )
    if survey.deviations:
        deviations.append(survey.deviations)
    return {
        "camera": camera,
        "free_text": survey.instrument if camera is None else "",
        "ifov_mrad": ifov_mrad,
        "ifov_source": ifov_source,
        "image_sizes": [f"{w} × {h}" for w, h in sizes],
        "deviations": deviations,
    }


def scale_text(distance_m: float | None, ifov_mrad: float | None, length_unit: str) -> str:
    """'1 px ≈ 4 mm at 3.0 m' (or in inches and feet), empty when either is unknown."""
    if not distance_m or not ifov_mrad:
        return ""
    side_m = float(pixel_footprint_m(distance_m, ifov_mrad))
    if length_unit == "ft":
        size = f"{side_m / 0.0254:.2g} in" if side_m < 0.3048 else f"{side_m / 0.3048:.2g} ft"
        at = f"{distance_m / 0.3048:.1f} ft"
    else:
        size = f"{side_m * 1000:.2g} mm" if side_m < 1 else f"{side_m:.2g} m"
        at = f"{distance_m:.1f} m"
    size = size.replace("e+0", "e").replace(".0 ", " ")
    if "e" in size:  # :.2g writes 1.2e+02 for 120: print whole numbers instead
        number, unit = size.split(" ")
        size = f"{float(number):.0f} {unit}"
    return f"1 px ≈ {size} at {at}"


def _air_rows(survey: Survey, thermogram: Thermogram, unit: str) -> list[tuple[str, str]]:
    air = thermogram_air(thermogram)
    symbol = units.symbol(unit)

    def t(value):
        return f"{units.from_celsius(value, unit):.1f} {symbol}".replace("-", "−")

    rows = []
    logged = "logged at the time of the thermogram"
    recorded = "survey conditions"
    if survey.is_building:
        if air.indoor_c is not None:
            rh = f", {air.indoor_rh_pct:.0f} % RH" if air.indoor_rh_pct is not None else ""
            source = logged if air.indoor_logged else recorded
            rows.append(("Indoor air", f"{t(air.indoor_c)}{rh} ({source})"))
        if air.outdoor_c is not None:
            source = logged if air.outdoor_logged else recorded
            rows.append(("Outdoor air", f"{t(air.outdoor_c)} ({source})"))
    elif air.ambient_c is not None:
        source = logged if air.indoor_logged or air.indoor_c is None else recorded
        rows.append(("Air around the equipment", f"{t(air.ambient_c)} ({source})"))
    return rows


def _loads(thermogram: Thermogram) -> str:
    phases = [
        f"L{n} {value:g} A"
        for n, value in enumerate(
            (thermogram.load_l1_a, thermogram.load_l2_a, thermogram.load_l3_a), start=1
        )
        if value is not None
    ]
    if not phases:
        return ""
    how = thermogram.get_load_method_display() if thermogram.load_method else "method not recorded"
    return f"{', '.join(phases)} ({how.lower()})"


def thermogram_details(
    survey: Survey,
    thermogram: Thermogram,
    *,
    unit: str,
    length_unit: str,
    ifov_mrad: float | None,
    readings: list | None = None,
) -> dict:
    """Capture date and time, distance and scale, ε and reflected temperature with how each
    was determined, the air at the time, the load per phase, mark names and notes, and a
    profile chart for each line mark."""
    symbol = units.symbol(unit)
    rows = []
    if thermogram.captured_at:
        rows.append(("Taken", local_text(survey, thermogram.captured_at)))
    else:
        rows.append(("Taken", "time not recorded"))
    image_ifov = ifov_mrad
    if thermogram.distance_m:
        distance = (
            f"{thermogram.distance_m / 0.3048:.1f} ft"
            if length_unit == "ft"
            else f"{thermogram.distance_m:.1f} m"
        )
        scale = scale_text(thermogram.distance_m, image_ifov, length_unit)
        rows.append(("Distance", f"{distance}; {scale}" if scale else distance))
    else:
        rows.append(("Distance", "not recorded, so no spatial scale"))
    emissivity_how = (
        thermogram.get_emissivity_method_display().lower()
        if thermogram.emissivity_method
        else METHOD_NOT_RECORDED
    )
    rows.append(("Emissivity", f"{thermogram.emissivity:.2f} ({emissivity_how})"))
    reflected_how = (
        thermogram.get_reflected_method_display().lower()
        if thermogram.reflected_method
        else METHOD_NOT_RECORDED
    )
    reflected = f"{units.from_celsius(thermogram.reflected_c, unit):.1f} {symbol}"
    rows.append(("Reflected temperature", f"{reflected.replace('-', '−')} ({reflected_how})"))
    rows += _air_rows(survey, thermogram, unit)
    rises = _rises_over_air(survey, thermogram, readings or [], unit)
    if rises:
        rows.append(("Rise over the air", rises))
    loads = _loads(thermogram)
    if loads:
        rows.append(("Load per phase", loads))
    marks, profiles = [], []
    for mark in thermogram.marks.all():
        if mark.name or mark.note:
            marks.append({"label": mark.label, "name": mark.name, "note": mark.note})
        profile = (mark.stats or {}).get("profile") if mark.kind == "line" else None
        if profile and len(profile) >= 2:
            chart = profile_chart(
                mark, profile, unit=unit, pixel_m=_pixel_m(thermogram, image_ifov)
            )
            profiles.append({"label": mark.label, "name": mark.name, "chart": chart})
    return {"rows": rows, "marks": marks, "profiles": profiles}


def _rises_over_air(survey: Survey, thermogram: Thermogram, readings: list, unit: str) -> str:
    """Each mark's hottest corrected temperature over the air around the equipment, for
    electrical and mechanical surveys: 'A 13.6 K · B 51.0 K'."""
    if survey.is_building:
        return ""
    ambient_c = thermogram_air(thermogram).ambient_c
    if ambient_c is None:
        return ""
    label = units.difference_label(unit)
    parts = []
    for reading in readings:
        hottest = (reading.get("corrected") or {}).get("max")
        if hottest is None:
            continue
        rise = float(units.difference_from_kelvin(hottest - ambient_c, unit))
        parts.append(f"{reading.get('label')} {rise:.1f} {label}".replace("-", "−"))
    return " · ".join(parts)


def _pixel_m(thermogram: Thermogram, ifov_mrad: float | None) -> float | None:
    if not thermogram.distance_m or not ifov_mrad:
        return None
    return float(pixel_footprint_m(thermogram.distance_m, ifov_mrad))


def profile_chart(mark, profile: list, *, unit: str, pixel_m: float | None) -> str:
    distances = [float(point[0]) for point in profile]
    values = [
        None if point[1] is None else float(units.from_celsius(point[1], unit)) for point in profile
    ]
    if pixel_m:
        scale, axis = (pixel_m * 100, "cm") if pixel_m * distances[-1] < 2 else (pixel_m, "m")
        distances = [d * scale for d in distances]
    else:
        axis = "px"
    title = f"Line {mark.label}{f' ({mark.name})' if mark.name else ''}: apparent temperature"
    svg = profile_svg(distances, values, 520, 150, units.symbol(unit), axis, title=title)
    return mark_safe(svg)


def equipment_rows(survey: Survey, thermograms: list, findings: list) -> list[dict]:
    """Every asset the survey looked at (its thermograms and its round), with or without a
    finding, its loads and its re-inspection date and basis."""
    organization = survey.organization
    by_asset: dict[int, dict] = {}

    def row_for(asset):
        if asset.pk not in by_asset:
            months = asset.inspection_interval_months or organization.reinspection_interval_months
            by_asset[asset.pk] = {
                "asset": asset,
                "thermograms": [],
                "findings": [],
                "loads": [],
                "visited": False,
                "months": months,
                "basis": "the asset's interval"
                if asset.inspection_interval_months
                else "the firm's default interval",
                "next": add_months(survey.date, months),
            }
        return by_asset[asset.pk]

    for thermogram in thermograms:
        if thermogram.asset is not None:
            row = row_for(thermogram.asset)
            row["thermograms"].append(thermogram.sequence)
            row["visited"] = True
            loads = _loads(thermogram)
            if loads:
                row["loads"].append(loads)
    for finding in findings:
        asset = finding.asset or (finding.thermogram.asset if finding.thermogram else None)
        if asset is not None:
            row_for(asset)["findings"].append(finding)
    for stop in survey.round_stops.select_related("asset"):
        row_for(stop.asset)
    rows = sorted(by_asset.values(), key=lambda r: (r["asset"].round_order, r["asset"].name))
    for row in rows:
        levels = [f.level for f in row["findings"] if f.level is not None]
        row["worst"] = min(levels) if levels else None
        row["worst_label"] = Finding.Level(min(levels)).label if levels else ""
        if row["findings"] and row["worst"] in (1, 2):
            row["next_text"] = "after the repair, to verify it; then every " + _months(
                row["months"]
            )
        else:
            row["next_text"] = f"by {row['next']:%-d %B %Y} (every {_months(row['months'])})"
    return rows


def _months(months: int) -> str:
    return "month" if months == 1 else f"{months} months"


def plain_summary(survey: Survey, findings: list, context: dict) -> dict:
    organization = survey.organization
    levels = []
    for level in Finding.Level:
        items = [f for f in findings if f.level == level.value and f.status == Finding.Status.OPEN]
        if items:
            levels.append(
                {
                    "level": level.value,
                    "label": level.label,
                    "when": organization.level_time(level.value),
                    "findings": items,
                }
            )
    closed = [f for f in findings if f.status != Finding.Status.OPEN]
    not_examined = []
    if survey.scope_not_examined:
        not_examined.append(survey.scope_not_examined.strip().rstrip("."))
    round_rows = context.get("round") or {}
    for stop in round_rows.get("skipped", []):
        not_examined.append(f"{stop.asset}: {stop.skip_reason.strip().rstrip('.')}")
    for stop in round_rows.get("not_visited", []):
        not_examined.append(f"{stop.asset}: due, not visited")
    return {
        "levels": levels,
        "closed": closed,
        "open_count": sum(len(row["findings"]) for row in levels),
        "unlevelled": [f for f in findings if f.level is None and f.status == Finding.Status.OPEN],
        "shortfalls": context.get("conditions_shortfalls") or [],
        "not_examined": not_examined,
        "level_times": [
            (level.value, level.label, organization.level_time(level.value))
            for level in Finding.Level
        ],
    }


def glossary(survey: Survey) -> list[tuple[str, str]]:
    return [(term, text) for term, text, kinds in GLOSSARY if kinds is None or survey.kind in kinds]


def _picture(pictures: Pictures, field, name: str) -> str | None:
    """A stored logo or signature (a PNG the upload check wrote) as a report URL; None when
    it is missing or unreadable: the report goes on without it."""
    if not field:
        return None
    try:
        with field.open("rb") as handle:
            data = handle.read(LOGO_MAX_BYTES + 1)
    except OSError:
        return None
    if not data or len(data) > LOGO_MAX_BYTES:
        return None
    return pictures.put(name, data, "image/png")


def letterhead(survey: Survey, pictures: Pictures) -> dict:
    organization = survey.organization
    return {
        "name": organization.name,
        "address": organization.address,
        "address_line": ", ".join(
            line.strip() for line in organization.address.splitlines() if line.strip()
        ),
        "contact": organization.contact_line,
        "contact_lines": [
            v for v in (organization.phone, organization.email, organization.website) if v
        ],
        "logo": _picture(pictures, organization.logo, "letterhead-logo.png"),
    }


def signoff(version, reviewer: Member | None, pictures: Pictures, made_at) -> dict:
    """The issuing reviewer's sign-off; the date is the issue's (stamped when the render
    ends, so the render's own time, as on the cover, until then)."""
    if version.is_draft or reviewer is None:
        return {"signed": False}
    return {
        "signed": True,
        "name": reviewer.display_name,
        "qualification": reviewer.qualification_text,
        "date": version.issued_at or made_at,
        "signature": _picture(pictures, reviewer.signature, "signature.png"),
    }


def particulars_context(version, context: dict, pictures: Pictures) -> dict:
    """What the particulars' includes need; also adds `details` to each thermogram section."""
    survey = context["survey"]
    unit = context["unit"]
    thermograms = list(
        survey.thermograms.filter(status=Thermogram.Status.READY).select_related("asset")
    )
    all_findings = list(
        survey.findings.select_related("thermogram__asset", "asset").order_by("level", "id")
    )
    for finding in all_findings:
        finding.category_text = category_label(survey.kind, finding.category)
    instrument = instrument_record(survey, thermograms)
    for section in context["sections"]:
        thermogram = section["thermogram"]
        thermogram.survey = survey
        section["details"] = thermogram_details(
            survey,
            thermogram,
            unit=unit,
            length_unit=context["length_unit"],
            ifov_mrad=instrument["ifov_mrad"],
            readings=section.get("readings"),
        )
    return {
        "people": people(survey, context.get("reviewer")),
        "instrument_record": instrument,
        "letterhead": letterhead(survey, pictures),
        "signoff": signoff(version, context.get("reviewer"), pictures, context.get("generated_at")),
        "equipment": equipment_rows(survey, thermograms, all_findings)
        if not survey.is_building
        else [],
        "re_inspection_basis": RE_INSPECTION_BASIS,
        "plain_summary": plain_summary(survey, all_findings, context),
        "glossary": glossary(survey),
    }
