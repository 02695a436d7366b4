"""Build a report's PDF: collect the survey's numbers, draw pictures at print size, lay out.

Pictures go into the PDF as high-quality JPEG (quality 90, 4:4:4) at about 170 dpi of their
printed size: WeasyPrint re-encodes every PNG it embeds but copies JPEG through, and a
camera-size picture would only make the file slow and heavy. Measured on 12 thermograms with
photos (14 pages, a loaded 2-core machine, best of 3): WeasyPrint's part took 2.2 s with
JPEG and 5.8 s with PNG (2.7x), the file 2.8 MB against 5.8 MB.
"""

import contextlib
import functools
import gc
import hashlib
import io
import json
import math
import threading
from collections import Counter
from collections.abc import Callable
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field

from django.template.loader import render_to_string
from django.utils import timezone
from django.utils.safestring import mark_safe
from PIL import Image, ImageOps

from reports.fetcher import BASE_URL, LocalOnlyFetcher
from reports.models import ReportVersion
from survey.models import Finding, Survey, Thermogram

PRINT_DPI = 170
THERMOGRAM_WIDTH_MM = 100
PHOTO_WIDTH_MM = 72
THUMBNAIL_WIDTH_MM = 34
JPEG_QUALITY = 90
TOP_FINDINGS = 5
DRAWING_THREADS = 2
GC_THRESHOLD = 10_000

Progress = Callable[[str, int], None]


def mm_to_px(mm: float, dpi: int = PRINT_DPI) -> int:
    return max(1, round(mm / 25.4 * dpi))


@dataclass
class Pictures:
    """Pictures made for one render, served to WeasyPrint by LocalOnlyFetcher."""

    image_format: str = "jpeg"
    files: dict[str, tuple[bytes, str]] = field(default_factory=dict)

    def add(self, name: str, image: Image.Image, *, lossless: bool = False) -> str:
        buffer = io.BytesIO()
        if self.image_format == "png" or lossless:
            image.save(buffer, "PNG")
            name, mime = f"{name}.png", "image/png"
        else:
            # 4:4:4 keeps the thin mark outlines and labels sharp.
            image.convert("RGB").save(buffer, "JPEG", quality=JPEG_QUALITY, subsampling=0)
            name, mime = f"{name}.jpg", "image/jpeg"
        return self.put(name, buffer.getvalue(), mime)

    def put(self, name: str, data: bytes, mime: str) -> str:
        self.files[name] = (data, mime)
        return f"{BASE_URL}generated/{name}"


# --- numbers -------------------------------------------------------------------------------


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
    return {
        thermogram.pk: json_safe(_thermogram_readings(thermogram))
        for thermogram in thermograms
        if thermogram.is_ready and thermogram.marks.all()
    }


def _thermogram_readings(thermogram: Thermogram) -> list[dict]:
    """survey.services.readings.thermogram_readings, on the thermogram's prefetched marks."""
    from survey.services.readings import mark_readings

    marks = sorted(thermogram.marks.all(), key=lambda m: (len(m.label), m.label))
    by_pk = {mark.pk: mark for mark in marks}
    for mark in marks:
        mark.thermogram = thermogram
        if mark.reference_mark_id in by_pk:
            mark.reference_mark = by_pk[mark.reference_mark_id]
    # Referenced marks first, so each reference's readings are computed once.
    referenced = {m.reference_mark_id for m in marks if m.reference_mark_id}
    by_id: dict[int, dict] = {}
    for mark in sorted(marks, key=lambda m: m.pk not in referenced):
        by_id[mark.pk] = mark_readings(mark, by_id=by_id)
    return [by_id[mark.pk] for mark in marks]


def content_digest(results: dict) -> str:
    """sha256 of the survey results in canonical JSON: what the report was built from."""
    canonical = json.dumps(results, sort_keys=True, separators=(",", ":"), ensure_ascii=True)
    return hashlib.sha256(canonical.encode()).hexdigest()


# --- pictures ------------------------------------------------------------------------------


def thermogram_picture(thermogram: Thermogram, width_px: int) -> Image.Image:
    """The thermogram in its palette with labelled marks and a scale bar, `width_px` wide."""
    from survey.services.arrays import thermogram_temperatures
    from survey.thermal.render import render_picture

    low, high = thermogram.span_low_c, thermogram.span_high_c
    if low is None or high is None or high <= low:
        low = high = None  # render_picture picks the automatic span
    return render_picture(
        thermogram_temperatures(thermogram),
        thermogram.palette,
        low,
        high,
        marks=list(thermogram.marks.all()),
        width_px=width_px,
    )


def _draw_thermogram(thermogram: Thermogram, pictures: Pictures, *, thumbnail: bool) -> dict:
    """One thermogram's picture, photo and summary thumbnail, encoded, as report URLs.

    Runs in a worker thread: numpy's colouring and Pillow's resampling and JPEG encoder
    release the GIL, so two thermograms are drawn at once. Touches no database (the marks
    are prefetched) and only adds to `pictures.files`.
    """
    picture = thermogram_picture(thermogram, mm_to_px(THERMOGRAM_WIDTH_MM))
    photo = photo_picture(thermogram, mm_to_px(PHOTO_WIDTH_MM))
    key = thermogram.pk
    thumb = thumbnail_of(picture, mm_to_px(THUMBNAIL_WIDTH_MM)) if thumbnail else None
    return {
        "picture": pictures.add(f"thermogram-{key}", picture),
        "photo": pictures.add(f"photo-{key}", photo) if photo else None,
        "thumb": pictures.add(f"thumb-{key}", thumb) if thumb else None,
    }


@functools.cache
def draft_watermark_png() -> bytes:
    """The DRAFT watermark as PNG, made once per process (the same for every report)."""
    buffer = io.BytesIO()
    draft_watermark().save(buffer, "PNG")
    return buffer.getvalue()


def draft_watermark() -> Image.Image:
    """A transparent picture of the word DRAFT: a picture, so the PDF's text stays clean.

    About 100 dpi at its printed width: a pale word of 4 cm letters needs no more, and
    every pixel is decoded and compressed again when the PDF is written.
    """
    from PIL import ImageDraw

    from survey.thermal.render import font

    word = Image.new("LA", (700, 180), (0, 0))
    ImageDraw.Draw(word).text(
        (350, 90), "DRAFT", font=font(150, bold=True), fill=(0, 36), anchor="mm"
    )
    return word.rotate(32, expand=True, resample=Image.Resampling.BICUBIC)


def photo_picture(thermogram: Thermogram, width_px: int) -> Image.Image | None:
    if not thermogram.photo:
        return None
    try:
        with thermogram.photo.open("rb") as handle:
            image = ImageOps.exif_transpose(Image.open(handle))
            image.draft("RGB", (width_px, width_px))
            image = image.convert("RGB")
    except (OSError, ValueError):
        return None
    image.thumbnail((width_px, width_px * 2), Image.Resampling.LANCZOS)
    return image


def thumbnail_of(picture: Image.Image, width_px: int) -> Image.Image:
    height = max(1, round(picture.height * width_px / picture.width))
    return picture.resize((width_px, height), Image.Resampling.LANCZOS)


# --- context -------------------------------------------------------------------------------

LEVELS = [(level.value, level.label) for level in Finding.Level]

CONDITION_ROWS = [
    ("indoor_air_c", "Indoor air", "{:.1f} °C"),
    ("indoor_rh_pct", "Indoor relative humidity", "{:.0f} %"),
    ("outdoor_air_c", "Outdoor air", "{:.1f} °C"),
    ("outdoor_rh_pct", "Outdoor relative humidity", "{:.0f} %"),
    ("ambient_air_c", "Air around the equipment", "{:.1f} °C"),
    ("wind_m_s", "Wind", "{:.1f} m/s"),
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

REFERENCES = {
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


def conditions_rows(survey: Survey) -> list[tuple[str, str]]:
    conditions = getattr(survey, "conditions", None)
    if conditions is None:
        return []
    rows = []
    for name, label, fmt in CONDITION_ROWS:
        value = getattr(conditions, name)
        if value is not None:
            rows.append((label, fmt.format(value)))
    difference = conditions.inside_outside_difference_c
    if difference is not None:
        rows.insert(3, ("Inside–outside difference", f"{difference:.1f} K"))
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


def conditions_check_rows(survey: Survey) -> list[dict]:
    from survey.criteria import conditions_check

    return json_safe(conditions_check(survey))


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
    return {
        "settings_used": sorted(pairs.items()),
        "criteria_tables": list(tables.values()),
        "load_pct": load_pct,
        "load_factor": (100.0 / load_pct) ** 2 if load_pct else None,
        "any_transmittance": any(t.transmittance < 1 for t in thermograms),
    }


def trend_chart(thermogram: Thermogram) -> str | None:
    """The asset's history across visits as an SVG chart, when it has been seen before."""
    if thermogram.asset_id is None:
        return None
    from survey.charts import trend_svg
    from survey.services.assets import asset_history, trend_points

    visits = asset_history(thermogram.asset)
    points, unit, title = trend_points(visits), "K", f"Rise at {thermogram.asset}"
    if sum(value is not None for _, value in points) < 2:
        points = [(visit["date"], visit["max_corrected_c"]) for visit in visits]
        unit, title = "°C", f"Hottest corrected temperature at {thermogram.asset}"
    if len(visits) < 2 or sum(value is not None for _, value in points) < 2:
        return None
    return mark_safe(trend_svg(points, 480, 200, unit, title=title))


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


def cautions(survey: Survey, *, heat_loss: bool) -> list[str]:
    from survey.cautions import cautions_for

    return list(cautions_for(survey.kind, heat_loss=True if heat_loss else None))


def build_context(version: ReportVersion, pictures: Pictures, progress: Progress) -> dict:
    report = version.report
    survey = Survey.objects.select_related(
        "site__client", "organization", "thermographer__user", "reviewer__user"
    ).get(pk=report.survey_id)
    progress("Collecting the survey's numbers", 5)
    thermograms = list(
        survey.thermograms.filter(status=Thermogram.Status.READY)
        .select_related("asset")
        .prefetch_related("marks")
    )
    findings = list(
        survey.findings.select_related("thermogram", "asset", "criteria_table").prefetch_related(
            "marks"
        )
    )
    from survey.criteria import category_label

    by_thermogram: dict[int, list[Finding]] = {}
    for finding in findings:
        finding.category_text = category_label(survey.kind, finding.category)
        by_thermogram.setdefault(finding.thermogram_id, []).append(finding)
    readings = readings_by_thermogram(survey, thermograms)
    from reports.services import survey_results

    results = survey_results(survey, readings=readings)
    digest = content_digest(results)

    counts = Counter(f.level for f in findings)
    ranked = sorted(findings, key=_urgency)
    # Only the summary's top findings show a thumbnail: only their thermograms need one.
    thumbnailed = {f.thermogram_id for f in ranked[:TOP_FINDINGS]}
    sections, thumbs = [], {}
    shown = [t for t in thermograms if t.pk in readings or t.pk in by_thermogram]
    with ThreadPoolExecutor(max_workers=DRAWING_THREADS) as pool:
        drawn = pool.map(
            lambda t: _draw_thermogram(t, pictures, thumbnail=t.pk in thumbnailed), shown
        )
        for index, thermogram in enumerate(shown, start=1):
            progress(f"Drawing thermogram {index} of {len(shown)}", 10 + 60 * index // len(shown))
            drawing = next(drawn)
            if drawing["thumb"]:
                thumbs[thermogram.pk] = drawing["thumb"]
            sections.append(
                {
                    "thermogram": thermogram,
                    "anchor": f"thermogram-{thermogram.pk}",
                    "picture": drawing["picture"],
                    "photo": drawing["photo"],
                    "readings": readings.get(thermogram.pk, []),
                    "findings": sorted(by_thermogram.get(thermogram.pk, []), key=_urgency),
                    "trend": trend_chart(thermogram),
                }
            )

    open_ranked = [f for f in ranked if f.status == Finding.Status.OPEN and f.level is not None]
    first_level = open_ranked[0].level if open_ranked else None
    heat_loss, heat_loss_total = heat_loss_rows(survey)
    reference_keys = ["all"]
    reference_keys += ["building"] if survey.is_building else []
    reference_keys += [survey.kind] if survey.kind in REFERENCES else []
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
        "level_counts": [(level, label, counts.get(level, 0)) for level, label in LEVELS],
        "unlevelled_count": counts.get(None, 0),
        "finding_count": len(findings),
        "top_findings": [
            {"finding": f, "thumb": thumbs.get(f.thermogram_id)} for f in ranked[:TOP_FINDINGS]
        ],
        "act_first": [f for f in open_ranked if f.level == first_level],
        "conditions": conditions_rows(survey),
        "conditions_check": results["conditions_check"],
        "method": method_context(survey, thermograms, findings),
        "sections": sections,
        "heat_loss": heat_loss,
        "heat_loss_total": heat_loss_total,
        "cautions": cautions(survey, heat_loss=bool(heat_loss)),
        "references": [ref for key in reference_keys for ref in REFERENCES[key]],
        "thermogram_count": len(thermograms),
        "_results": results,
    }


def _reviewer(version: ReportVersion, survey: Survey):
    issuer = getattr(version.issued_by, "membership", None) if version.issued_by else None
    return issuer or survey.reviewer


def _urgency(finding: Finding) -> tuple:
    return (finding.level or 9, finding.created_at)


# --- rendering -----------------------------------------------------------------------------


@dataclass
class RenderedReport:
    pdf: bytes
    page_count: int
    content_sha256: str


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
        progress("Laying out the pages", 75)
        html = render_to_string("reports/pdf/report.html", context)
        document = HTML(
            string=html, base_url=BASE_URL, url_fetcher=LocalOnlyFetcher(pictures.files)
        ).render()
        progress("Writing the PDF", 90)
        pdf = document.write_pdf()
        rendered = RenderedReport(
            pdf=pdf, page_count=len(document.pages), content_sha256=context["content_sha256"]
        )
        # Free the render's own garbage now (some 200,000 objects in reference cycles for
        # 50 thermograms): with the raised thresholds nothing else would before the next
        # render's peak, and a worker would hold two documents at once (350 MB, not 220).
        del document, context, html
        gc.collect()
    return rendered
