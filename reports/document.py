"""A report's PDF: gather the survey's results and pictures, fill the template, lay it out.

The numbers come from reports/results.py, the pictures from reports/pictures.py;
WeasyPrint lays out templates/reports/pdf/report.html and reads pictures only from memory
(reports/fetcher.py).
"""

import contextlib
import gc
import hashlib
import math
import threading
from collections import Counter
from collections.abc import Callable
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass

from django.template.loader import render_to_string
from django.utils import timezone

from reports.fetcher import BASE_URL, LocalOnlyFetcher
from reports.kinds import envelope_context, roof_context
from reports.models import ReportVersion
from reports.particulars import particulars_context
from reports.pictures import (
    Pictures,
    draft_watermark_png,
    draw_thermogram,
    reading_extremes,
    trend_chart,
)
from reports.results import (
    readings_by_thermogram,
    results_file,
    results_file_name,
    survey_results,
)
from reports.typography import printed_number, typeset
from survey.captions import mark_caption
from survey.cautions import cautions_for
from survey.conditions import conditions_check
from survey.models import Finding, Survey, Thermogram
from survey.services.criteria_tables import survey_criteria_tables, table_basis
from survey.services.findings import verification_text
from survey.services.instruments import survey_ifov
from survey.services.readings import design_conditions
from survey.services.rounds import round_progress
from survey.severity import category_label
from survey.thermal import units

TOP_FINDINGS = 5
DRAWING_THREADS = 2
GC_THRESHOLD = 10_000

Progress = Callable[[str, int], None]


LEVELS = [(level.value, level.label) for level in Finding.Level]

# Formats: "temperature" and "speed" are shown in the report's units.
CONDITION_ROWS = [
    ("indoor_air_c", "Indoor air", "temperature"),
    ("indoor_rh_pct", "Indoor relative humidity", "{:.0f} %"),
    ("outdoor_air_c", "Outdoor air", "temperature"),
    ("outdoor_rh_pct", "Outdoor relative humidity", "{:.0f} %"),
    ("ambient_air_c", "Air around the equipment", "temperature"),
    ("wind_m_s", "Wind", "speed"),
    ("hours_since_sun", "Hours since direct sun", "{:.0f} h"),
    ("delta_t_hours", "Hours the inside–outside difference had held", "{:.0f} h"),
    ("load_pct", "Electrical load (share of rating)", "{:.0f} %"),
]
CONDITION_FLAGS = [
    ("sky", "Sky"),
    ("precipitation", "Precipitation"),
    ("surfaces_dry", "Surfaces dry"),
    ("sunny_day_before", "Sunny day before"),
    ("equipment_steady", "Equipment at steady load"),
    ("covers_opened_by_qualified", "Covers opened by a qualified person"),
]

REPORT_SOURCES = {
    "all": [
        "ISO 18434-1, Condition monitoring and diagnostics of machines — Thermography — "
        "Part 1: General procedures (terms of the measurement equation).",
        "ISO 10878, Non-destructive testing — Infrared thermography — Vocabulary.",
        "ASTM E1862, Standard practice for measuring and compensating for reflected "
        "temperature using infrared imaging radiometers.",
        "ASTM E1933, Standard practice for measuring and compensating for emissivity using "
        "infrared imaging radiometers.",
    ],
    "building": [
        "EN 13187 / ISO 6781, Thermal performance of buildings — Qualitative detection of "
        "thermal irregularities in building envelopes — Infrared method.",
        "ASTM C1060, Standard practice for thermographic inspection of insulation "
        "installations in envelope cavities of frame buildings.",
        "ISO 13788, Hygrothermal performance of building components — Internal surface "
        "temperature to avoid critical surface humidity (temperature factor, 80 % surface RH).",
        "ASHRAE Handbook — Fundamentals, psychrometrics (saturation vapour pressure, dew point).",
    ],
    "roof": [
        "ASTM C1153, Standard practice for location of wet insulation in roofing systems "
        "using infrared imaging.",
    ],
    "electrical": [
        "ASTM E1934, Standard guide for examining electrical and mechanical equipment with "
        "infrared thermography.",
        "NETA Maintenance Testing Specifications, thermographic survey: suggested actions "
        "by temperature difference.",
        "NFPA 70B, Standard for electrical equipment maintenance.",
        "NFPA 70E, Standard for electrical safety in the workplace.",
    ],
    "mechanical": [
        "ASTM E1934, Standard guide for examining electrical and mechanical equipment with "
        "infrared thermography.",
    ],
    "heat_loss": [
        "Churchill, S. W. and Chu, H. H. S. (1975), correlating equations for laminar and "
        "turbulent free convection, Int. J. Heat Mass Transfer 18.",
        "Incropera, F. P. et al., Fundamentals of Heat and Mass Transfer (convection "
        "correlations, radiation exchange).",
    ],
}


def _formatted(value: float, fmt: str, unit: str, speed_unit: str) -> str:
    if fmt == "temperature":
        return f"{units.from_celsius(value, unit):.1f} {units.symbol(unit)}"
    if fmt == "speed":
        return f"{units.speed_from_m_s(value, speed_unit):.1f} {units.speed_symbol(speed_unit)}"
    return fmt.format(value)


def span_text(span_c: tuple[float, float] | None, unit: str) -> dict | None:
    """A picture's colour span in the report's unit, rounded outwards to 0.1 so the printed
    ends still hold every printed mark value."""
    if span_c is None:
        return None
    low, high = (units.from_celsius(value, unit) for value in span_c)
    return {
        "low": printed_number(math.floor(round(low * 10, 6)) / 10, 1),
        "high": printed_number(math.ceil(round(high * 10, 6)) / 10, 1),
        "symbol": units.symbol(unit),
    }


def conditions_rows(
    survey: Survey, unit: str = "C", speed_unit: str = "m_s"
) -> list[tuple[str, str]]:
    conditions = getattr(survey, "conditions", None)
    if conditions is None:
        return []
    rows = []
    for name, label, fmt in CONDITION_ROWS:
        value = getattr(conditions, name)
        if value is not None:
            rows.append((label, _formatted(value, fmt, unit, speed_unit)))
    difference = conditions.inside_outside_difference_c
    if difference is not None:
        shown = units.difference_from_kelvin(difference, unit)
        rows.insert(3, ("Inside–outside difference", f"{shown:.1f} {units.difference_label(unit)}"))
    for name, label in CONDITION_FLAGS:
        value = getattr(conditions, name)
        if value in (None, ""):
            continue
        if isinstance(value, bool):
            rows.append((label, "yes" if value else "no"))
        else:
            rows.append((label, getattr(conditions, f"get_{name}_display")()))
    if conditions.notes:
        rows.append(("Notes", conditions.notes))
    return rows


def method_context(survey: Survey, thermograms: list, findings: list) -> dict:
    pairs = Counter()
    for thermogram in thermograms:
        pairs[(thermogram.emissivity, thermogram.reflected_c)] += 1
        for mark in thermogram.marks.all():
            if mark.emissivity is not None or mark.reflected_c is not None:
                pairs[(mark.effective_emissivity, mark.effective_reflected_c)] += 1
    tables = {}
    for finding in findings:
        if finding.criteria_table_id:
            tables[finding.criteria_table_id] = finding.criteria_table
    conditions = getattr(survey, "conditions", None)
    load_pct = conditions.load_pct if conditions else None
    exponents = sorted({f.load_exponent for f in findings if f.load_exponent is not None})
    ifov_mrad, ifov_source = survey_ifov(survey)
    return {
        "settings_used": sorted(pairs.items()),
        "criteria_tables": list(tables.values()),
        "load_pct": load_pct,
        "exponents": [f"{n:g}" for n in exponents],
        "ifov_mrad": ifov_mrad,
        "ifov_source": ifov_source,
        "design": design_conditions(survey),
        "any_transmittance": any(t.transmittance < 1 for t in thermograms),
    }


def heat_loss_rows(survey: Survey) -> tuple[list[dict], dict]:
    rows = []
    totals = {"watts": 0.0, "kwh_per_year": 0.0, "cost_per_year": 0.0, "currency": ""}
    for estimate in survey.heat_loss_estimates.all():
        inputs, results = estimate.inputs or {}, estimate.results or {}
        row = {
            "label": estimate.label,
            "area_m2": inputs.get("area_m2"),
            "surface_c": inputs.get("t_surface_c"),
            "air_c": inputs.get("t_air_c"),
            "reference_c": inputs.get("t_reference_c"),
            "flux_w_m2": results.get("total_w_m2"),
            "watts": results.get("watts"),
            "kwh_per_year": results.get("kwh_per_year"),
            "cost_per_year": results.get("cost_per_year") if inputs.get("price_per_kwh") else None,
            "currency": inputs.get("currency", ""),
        }
        rows.append(row)
        for key in ("watts", "kwh_per_year", "cost_per_year"):
            if isinstance(row[key], int | float):
                totals[key] += row[key]
        totals["currency"] = totals["currency"] or row["currency"]
    totals["count"] = len(rows)
    totals["has_cost"] = any(row["cost_per_year"] is not None for row in rows)
    return rows, totals


def logged_conditions_context(survey: Survey, thermograms: list, unit: str = "C") -> dict | None:
    """The loggers' chart and each thermogram's logged air, for the report's conditions
    (templates/reports/pdf/_logged_conditions.html); None when the survey has no log."""
    from django.utils.safestring import mark_safe

    from survey.services import loggers

    logs = loggers.survey_log_summary(survey)
    if not logs:
        return None
    rows = []
    for thermogram in thermograms:
        thermogram.survey = survey
        logged = loggers.thermogram_logged_conditions(thermogram)
        rows.append(
            {
                "sequence": thermogram.sequence,
                "title": str(thermogram),
                "taken": loggers.local_text(survey, thermogram.captured_at),
                "inside": logged["inside"],
                "outside": logged["outside"],
                "label": logged["label"] or "no capture time",
            }
        )
    svg = loggers.survey_logger_chart(survey, unit=unit, width=640, height=230)
    return {
        "logs": logs,
        "zone": loggers.survey_time_zone_name(survey),
        "chart": mark_safe(svg) if svg else None,
        "thermograms": rows,
    }


def cautions(survey: Survey, *, heat_loss: bool) -> list[str]:
    return list(cautions_for(survey.kind, heat_loss=True if heat_loss else None))


def build_context(version: ReportVersion, pictures: Pictures, progress: Progress) -> dict:
    report = version.report
    survey = Survey.objects.select_related(
        "site__client", "organization", "thermographer__user", "reviewer__user", "camera"
    ).get(pk=report.survey_id)
    progress("Collecting the survey's numbers", 5)
    thermograms = list(
        survey.thermograms.filter(status=Thermogram.Status.READY)
        .select_related("asset")
        .prefetch_related("marks")
    )
    findings = list(
        survey.findings.select_related(
            "thermogram__asset", "asset", "criteria_table"
        ).prefetch_related("marks", "moisture_checks")
    )
    by_thermogram: dict[int, list[Finding]] = {}
    for finding in findings:
        finding.category_text = category_label(survey.kind, finding.category)
        finding.verified_text = verification_text(finding)
        for mark in finding.marks.all():
            if finding.thermogram is not None and mark.thermogram_id == finding.thermogram_id:
                mark.thermogram = finding.thermogram
            mark.caption = mark_caption(mark)
        by_thermogram.setdefault(finding.thermogram_id, []).append(finding)
    readings = readings_by_thermogram(survey, thermograms)
    results = survey_results(survey, readings=readings)
    export = results_file(results)
    digest = hashlib.sha256(export).hexdigest()

    open_findings = [f for f in findings if f.status == Finding.Status.OPEN]
    counts = Counter(f.level for f in open_findings)
    ranked = sorted(findings, key=_urgency)
    # Only the summary's top findings show a thumbnail: only their thermograms need one.
    thumbnailed = {f.thermogram_id for f in ranked[:TOP_FINDINGS]}
    sections, thumbs, problems = [], {}, []
    shown = [t for t in thermograms if t.pk in readings or t.pk in by_thermogram]
    with ThreadPoolExecutor(max_workers=DRAWING_THREADS) as pool:
        drawn = pool.map(
            lambda t: draw_thermogram(
                t,
                pictures,
                thumbnail=t.pk in thumbnailed,
                unit=version.temperature_unit,
                extremes_c=reading_extremes(readings.get(t.pk, [])),
            ),
            shown,
        )
        for index, thermogram in enumerate(shown, start=1):
            progress(f"Drawing thermogram {index} of {len(shown)}", 10 + 60 * index // len(shown))
            drawing = next(drawn)
            if drawing["thumb"]:
                thumbs[thermogram.pk] = drawing["thumb"]
            problems += drawing["problems"]
            sections.append(
                {
                    "thermogram": thermogram,
                    "anchor": f"thermogram-{thermogram.pk}",
                    "picture": drawing["picture"],
                    "photo": drawing["photo"],
                    "span": span_text(drawing["span"], version.temperature_unit),
                    "readings": readings.get(thermogram.pk, []),
                    "findings": sorted(by_thermogram.get(thermogram.pk, []), key=_urgency),
                    "trend": trend_chart(thermogram, version.temperature_unit),
                }
            )

    open_ranked = [f for f in ranked if f.status == Finding.Status.OPEN and f.level is not None]
    first_level = open_ranked[0].level if open_ranked else None
    heat_loss, heat_loss_total = heat_loss_rows(survey)
    reference_keys = ["all"]
    reference_keys += ["building"] if survey.is_building else []
    reference_keys += [survey.kind] if survey.kind in REPORT_SOURCES else []
    reference_keys += ["heat_loss"] if heat_loss else []
    return {
        "version": version,
        "report": report,
        "survey": survey,
        "organization": survey.organization,
        "client": survey.site.client,
        "site": survey.site,
        "thermographer": survey.thermographer,
        "reviewer": _reviewer(version, survey),
        "is_draft": version.is_draft,
        "generated_at": timezone.now(),
        "watermark": pictures.put("draft.png", draft_watermark_png(), "image/png")
        if version.is_draft
        else None,
        "content_sha256": digest,
        "results_file_name": results_file_name(survey.pk),
        "_results_file": export,
        "level_counts": [(level, label, counts.get(level, 0)) for level, label in LEVELS],
        "unlevelled_count": counts.get(None, 0),
        "finding_count": len(findings),
        "open_count": len(open_findings),
        "repaired_count": sum(f.status == Finding.Status.REPAIRED for f in findings),
        "verified_count": sum(f.status == Finding.Status.VERIFIED for f in findings),
        "top_findings": [
            {"finding": f, "thumb": thumbs.get(f.thermogram_id)} for f in ranked[:TOP_FINDINGS]
        ],
        "act_first": [f for f in open_ranked if f.level == first_level],
        "conditions": conditions_rows(survey, version.temperature_unit, version.speed_unit),
        "conditions_check": (
            checks := conditions_check(
                survey, unit=version.temperature_unit, speed_unit=version.speed_unit
            )
        ),
        "conditions_shortfalls": [row for row in checks if row["status"] != "met"],
        "logged_conditions": logged_conditions_context(
            survey, thermograms, version.temperature_unit
        ),
        "unit": version.temperature_unit,
        "unit_symbol": units.symbol(version.temperature_unit),
        "diff_label": units.difference_label(version.temperature_unit),
        "length_unit": version.length_unit,
        "length_symbol": units.length_symbol(version.length_unit),
        "independently_reviewed": version.is_draft or version.independently_reviewed,
        "round": round_rows(survey),
        "method": method_context(survey, thermograms, findings),
        "criteria_provenance": criteria_provenance(version, survey),
        "sections": sections,
        "heat_loss": heat_loss,
        "heat_loss_total": heat_loss_total,
        "roof": roof_context(survey, thermograms, findings, pictures),
        "building": envelope_context(survey, version.temperature_unit),
        "cautions": cautions(survey, heat_loss=bool(heat_loss)),
        "references": [ref for key in reference_keys for ref in REPORT_SOURCES[key]],
        "thermogram_count": len(thermograms),
        "_results": results,
        "_problems": problems,
    }


def criteria_provenance(version: ReportVersion, survey: Survey) -> list[dict]:
    """The criteria tables behind the findings, with the basis the firm gives them and who
    reviewed them, or who accepted them unreviewed when the version was issued."""
    issuer = _reviewer(version, survey) if version.unreviewed_criteria_accepted_at else None
    rows = []
    for table in survey_criteria_tables(survey):
        reviewer = table.reviewed_by
        rows.append(
            {
                "table": table,
                "basis": table_basis(table),
                "reviewer": reviewer.display_name if reviewer else "a former member",
                "accepted_by": issuer.display_name if issuer else None,
                "accepted_at": version.unreviewed_criteria_accepted_at,
            }
        )
    return rows


def round_rows(survey: Survey) -> dict[str, list]:
    """The survey's round, if it was one: assets visited, skipped (with the reason given)
    and not visited without a reason."""
    rows = {"visited": [], "skipped": [], "not_visited": []}
    for item in round_progress(survey):
        if item.status == "visited":
            rows["visited"].append(item.stop)
        elif item.status == "skipped":
            rows["skipped"].append(item.stop)
        else:
            rows["not_visited"].append(item.stop)
    return rows


def _reviewer(version: ReportVersion, survey: Survey):
    issuer = getattr(version.issued_by, "membership", None) if version.issued_by else None
    return issuer or survey.reviewer


def _urgency(finding: Finding) -> tuple:
    return (finding.level or 9, finding.created_at)


@dataclass
class RenderedReport:
    pdf: bytes
    page_count: int
    content_sha256: str
    # What had to be left out (a thermogram or photo that could not be drawn) and why.
    notes: str = ""


_collections_lock = threading.Lock()
_collections_state = {"depth": 0, "saved": (700, 10, 10)}


@contextlib.contextmanager
def fewer_collections(threshold: int = GC_THRESHOLD):
    """Run Python's cyclic garbage collector less often while a report is made.

    A 50-thermogram render allocates millions of objects that stay alive until it ends
    (rows, readings, WeasyPrint's boxes); with the default thresholds the collector walks
    all of them again and again: five full collections, 0.7–1.5 s of a 4–5 s render,
    measured with gc.callbacks. render_pdf collects once at its end instead. The
    thresholds are global: renders overlapping in threads (eager Celery in a threaded web
    server) share one raise, and the last one out puts the old values back.
    """
    with _collections_lock:
        if _collections_state["depth"] == 0:
            old = gc.get_threshold()
            _collections_state["saved"] = old
            gc.set_threshold(max(old[0], threshold), max(old[1], 20), max(old[2], 20))
        _collections_state["depth"] += 1
    try:
        yield
    finally:
        with _collections_lock:
            _collections_state["depth"] -= 1
            if _collections_state["depth"] == 0:
                gc.set_threshold(*_collections_state["saved"])


ARCHIVAL_VARIANT = "pdf/a-3b"


def pdf_options(version: ReportVersion, context: dict) -> dict:
    """WeasyPrint's output options: an issued version is archival PDF/A-3b, tagged for
    accessibility, with the survey results file it was made from attached as an associated
    file (relationship Data); a draft stays a plain PDF (it carries the watermark).

    Cost, measured on one laid-out document of 40 thermograms (27 pages, 15 MB) on the
    shared 2-core machine, three writes of each: write_pdf took 0.3–0.7 s plain and
    0.8–1.2 s as tagged PDF/A-3b (the structure tree), about 0.5 s more; the process's peak
    resident memory rose by 42 MB at the first tagged write (230 to 272 MB, a test process)
    and not after; the file is 0.6 % larger. The layout before it is the same for both.
    """
    if version.is_draft:
        return {}
    from weasyprint import Attachment

    results = Attachment(
        string=context["_results_file"],
        name=context["results_file_name"],
        description="Survey results this report was made from (JSON)",
        relationship="Data",
    )
    return {"pdf_variant": ARCHIVAL_VARIANT, "pdf_tags": True, "attachments": [results]}


def render_pdf(
    version: ReportVersion,
    *,
    progress: Progress | None = None,
    image_format: str = "jpeg",
) -> RenderedReport:
    """Render one version's PDF in memory; `progress(stage, percent)` is told along the way."""
    from weasyprint import HTML

    progress = progress or (lambda stage, pct: None)
    pictures = Pictures(image_format=image_format)
    with fewer_collections():
        context = build_context(version, pictures, progress)
        context.update(particulars_context(version, context, pictures))
        progress("Laying out the pages", 75)
        html = typeset(render_to_string("reports/pdf/report.html", context))
        document = HTML(
            string=html, base_url=BASE_URL, url_fetcher=LocalOnlyFetcher(pictures.files)
        ).render()
        progress("Writing the PDF", 90)
        pdf = document.write_pdf(**pdf_options(version, context))
        rendered = RenderedReport(
            pdf=pdf,
            page_count=len(document.pages),
            content_sha256=context["content_sha256"],
            notes="\n".join(context["_problems"]),
        )
        # Free the render's own garbage now (some 200,000 objects in reference cycles for
        # 50 thermograms): with the raised thresholds nothing else would before the next
        # render's peak, and a worker would hold two documents at once (350 MB, not 220).
        del document, context, html
        gc.collect()
    return rendered
