"""Pictures of a report, drawn at print size: thermograms with their marks and scale bar,
photos, summary thumbnails, the draft watermark and the asset trend chart.

Pictures go into the PDF as high-quality JPEG (quality 90, 4:4:4) at about 170 dpi of their
printed size: WeasyPrint re-encodes every PNG it embeds but copies JPEG through, and a
camera-size picture would only make the file slow and heavy. Measured on 12 thermograms with
photos (14 pages, a loaded 2-core machine, best of 3): WeasyPrint's part took 2.2 s with
JPEG and 5.8 s with PNG (2.7x), the file 2.8 MB against 5.8 MB.
"""

import functools
import io
import logging
import math
import warnings
from dataclasses import dataclass, field

from django.conf import settings
from django.utils.safestring import mark_safe
from PIL import Image, ImageDraw, ImageOps

from reports.fetcher import BASE_URL
from survey.charts import trend_svg
from survey.models import Thermogram
from survey.services.arrays import ThermogramNotReady, thermogram_temperatures
from survey.services.assets import asset_history, trend_in_unit, trend_points
from survey.thermal import auto_span, thermogram_to_photo, units, widen_span
from survey.thermal.drawing import draw_marks, font, render_picture, scale_bar_width_px

logger = logging.getLogger(__name__)

PRINT_DPI = 170
THERMOGRAM_WIDTH_MM = 100
# A thermogram taller than this at its printed width (a narrow strip) is drawn narrower,
# in white space: no picture is taller than a page's share, whatever the file's shape.
THERMOGRAM_MAX_HEIGHT_MM = 130
PHOTO_WIDTH_MM = 72
THUMBNAIL_WIDTH_MM = 34
JPEG_QUALITY = 90


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


def thermogram_picture(
    thermogram: Thermogram, width_px: int, unit: str = "C", extremes_c=()
) -> tuple[Image.Image, tuple[float, float]]:
    """The thermogram in its palette with labelled marks and a scale bar in `unit`,
    `width_px` wide, and the span (°C) its colours were drawn in.

    The span is the one the app shows (the fixed span, else the automatic one), widened so
    that it holds every mark's apparent extremes and the values in `extremes_c` (the marks'
    corrected extremes): no value printed beside the picture lies off its scale (issue 14).
    """
    temperatures = thermogram_temperatures(thermogram)
    marks = list(thermogram.marks.all())
    low, high = thermogram.span_low_c, thermogram.span_high_c
    if low is None or high is None or high <= low:
        low, high = auto_span(temperatures)
    low, high = printed_span(low, high, marks, extremes_c)
    picture = render_picture(
        temperatures,
        thermogram.palette,
        low,
        high,
        marks=marks,
        unit=unit,
        width_px=width_px,
        max_height_px=mm_to_px(THERMOGRAM_MAX_HEIGHT_MM),
    )
    return picture, (low, high)


def printed_span(low_c: float, high_c: float, marks, extremes_c=()) -> tuple[float, float]:
    """The span (low_c, high_c) widened to every mark's apparent extremes (cached in its
    statistics, prefetched: no query, this runs in a drawing thread) and to `extremes_c`."""
    values = [
        value
        for mark in marks
        for value in ((mark.stats or {}).get("min_c"), (mark.stats or {}).get("max_c"))
        if value is not None
    ]
    values += [value for value in extremes_c if value is not None]
    low, high = widen_span(low_c, high_c, values)
    return float(low), float(high)


def reading_extremes(readings: list[dict]) -> list[float]:
    """The apparent and corrected minimum and maximum of each reading of a thermogram."""
    values = []
    for reading in readings:
        for key in ("apparent", "corrected"):
            part = reading.get(key) or {}
            values += [part.get("min"), part.get("max"), part.get("mean")]
    return [float(v) for v in values if isinstance(v, int | float)]


class PictureError(Exception):
    """A thermogram or photo that cannot be drawn; the message says why, for the app's page."""


def draw_thermogram(
    thermogram: Thermogram,
    pictures: Pictures,
    *,
    thumbnail: bool,
    unit: str = "C",
    extremes_c=(),
) -> dict:
    """One thermogram's picture, photo and summary thumbnail, encoded, as report URLs.

    What cannot be drawn is left out and said in `problems` (for the version's notes):
    one damaged file must not stop the report. Runs in a worker thread: numpy's colouring
    and Pillow's resampling and JPEG encoder release the GIL, so two thermograms are drawn
    at once. Touches no database (the marks are prefetched) and only adds to
    `pictures.files`.
    """
    key, problems = thermogram.pk, []
    drawn = {"picture": None, "photo": None, "thumb": None, "span": None, "problems": problems}
    name = f"{thermogram.sequence}. {thermogram}"
    try:
        picture, drawn["span"] = thermogram_picture(
            thermogram, mm_to_px(THERMOGRAM_WIDTH_MM), unit, extremes_c
        )
    except ThermogramNotReady as error:
        problems.append(f"{name}: left out ({error})")
        picture = None
    except Exception:  # noqa: BLE001 - logged; the report goes on without this picture
        logger.exception("Thermogram %s could not be drawn", key)
        problems.append(f"{name}: left out (it could not be drawn; logged for the administrator).")
        picture = None
    if picture is not None:
        drawn["picture"] = pictures.add(f"thermogram-{key}", picture)
        if thumbnail:
            # Without the scale bar: its text would print at a third of its size, illegible.
            thermal_part = picture.crop(
                (0, 0, picture.width - scale_bar_width_px(picture.width), picture.height)
            )
            thumb = thumbnail_of(thermal_part, mm_to_px(THUMBNAIL_WIDTH_MM))
            drawn["thumb"] = pictures.add(f"thumb-{key}", thumb)
    try:
        photo = photo_picture(thermogram, mm_to_px(PHOTO_WIDTH_MM))
    except PictureError as error:
        problems.append(f"{name}: photo left out ({error})")
        photo = None
    if photo is not None:
        drawn["photo"] = pictures.add(f"photo-{key}", photo)
    return drawn


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
    word = Image.new("LA", (700, 180), (0, 0))
    ImageDraw.Draw(word).text(
        (350, 90), "DRAFT", font=font(150, bold=True), fill=(0, 36), anchor="mm"
    )
    return word.rotate(32, expand=True, resample=Image.Resampling.BICUBIC)


def photo_picture(thermogram: Thermogram, width_px: int) -> Image.Image | None:
    """The paired photo at print size, or None without one; PictureError when it cannot be
    read or declares more pixels than an upload may have (it is never decoded then)."""
    if not thermogram.photo:
        return None
    try:
        with thermogram.photo.open("rb") as handle, warnings.catch_warnings():
            warnings.simplefilter("error", Image.DecompressionBombWarning)
            image = Image.open(handle)
            stored_size = image.size
            if image.width * image.height > settings.THERMOGRAM_MAX_PIXELS:
                raise PictureError(
                    f"it declares {image.width} × {image.height} pixels, more than a photo "
                    "may have; upload it again."
                )
            image.draft("RGB", (width_px, width_px))
            image = ImageOps.exif_transpose(image).convert("RGB")
    except PictureError:
        raise
    except Exception:  # noqa: BLE001 - any damaged file: Pillow raises many kinds
        raise PictureError("it could not be read; upload it again.") from None
    image.thumbnail((width_px, width_px * 2), Image.Resampling.LANCZOS)
    if thermogram.photo_alignment:
        marks_on_photo(image, thermogram, stored_size)
    return image


def marks_on_photo(image: Image.Image, thermogram: Thermogram, stored_size) -> None:
    """Draw the thermogram's marks on its photo, in place, through the stored alignment
    (photo pixels to thermogram pixels, inverted); rectangles and ellipses become the
    polygons the alignment turns them into. Nothing is drawn when the alignment is unusable.
    """
    matrix = (thermogram.photo_alignment or {}).get("matrix")
    if not matrix:
        return
    shapes = []
    for mark in thermogram.marks.all():
        outline = _mark_outline(mark.kind, mark.points)
        if not outline:
            continue
        try:
            photo_points = thermogram_to_photo(matrix, outline).tolist()
        except ValueError:
            return
        kind = mark.kind if mark.kind in ("point", "line") else "polygon"
        shapes.append({"kind": kind, "points": photo_points, "label": mark.label})
    scale = image.width / stored_size[0]
    draw_marks(image, shapes, scale, image.height / stored_size[1] if stored_size[1] else scale)


def _mark_outline(kind: str, points) -> list:
    """A mark's outline in thermogram pixels: rectangles to their pixel edges, ellipses as
    48-sided polygons."""
    if not points:
        return []
    if kind == "rectangle" and len(points) >= 2:
        (x0, y0), (x1, y1) = points[0], points[1]
        left, right = min(x0, x1) - 0.5, max(x0, x1) + 0.5
        top, bottom = min(y0, y1) - 0.5, max(y0, y1) + 0.5
        return [[left, top], [right, top], [right, bottom], [left, bottom]]
    if kind == "ellipse" and len(points) >= 2:
        (x0, y0), (x1, y1) = points[0], points[1]
        cx, cy, rx, ry = (x0 + x1) / 2, (y0 + y1) / 2, abs(x1 - x0) / 2, abs(y1 - y0) / 2
        steps = 48
        return [
            [
                cx + rx * math.cos(2 * math.pi * i / steps),
                cy + ry * math.sin(2 * math.pi * i / steps),
            ]
            for i in range(steps)
        ]
    return [list(point) for point in points]


def thumbnail_of(picture: Image.Image, width_px: int) -> Image.Image:
    height = max(1, round(picture.height * width_px / picture.width))
    return picture.resize((width_px, height), Image.Resampling.LANCZOS)


def trend_chart(thermogram: Thermogram, unit: str = "C") -> str | None:
    """The asset's history across visits as an SVG chart in `unit`, when it has been seen
    before."""
    if thermogram.asset_id is None:
        return None
    visits = asset_history(thermogram.asset)
    points, _lines, label = trend_in_unit(trend_points(visits), [], unit)
    title = f"Rise at {thermogram.asset}"
    if sum(value is not None for _, value in points) < 2:
        points = [
            (visit["date"], units.from_celsius(visit["max_corrected_c"], unit)) for visit in visits
        ]
        label, title = units.symbol(unit), f"Hottest corrected temperature at {thermogram.asset}"
    if len(visits) < 2 or sum(value is not None for _, value in points) < 2:
        return None
    return mark_safe(trend_svg(points, 480, 200, label, title=title))
