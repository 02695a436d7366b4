"""Drawing thermograms: overlays, marks with their labels, scale bars, and encoding.

`render_picture` colours the thermogram (survey/thermal/palettes.py), scales it to the
output size first and draws marks, labels and the scale bar afterwards, so text and lines
stay sharp at any size. `nice_ticks` is the one tick algorithm of scale bars and charts.
"""

from __future__ import annotations

import functools
import io
import math
from collections.abc import Iterable, Sequence
from pathlib import Path

import numpy as np

from survey.thermal import units
from survey.thermal.palettes import auto_span, palette_ramp, render
from survey.thermal.psychrometrics import surface_rh

MARK_COLOUR = (0, 255, 0)
MARK_OUTLINE_COLOUR = (0, 64, 0)
MARK_HALO_COLOUR = (255, 255, 255)
"""A mark is drawn as a dark outline, a white halo inside it and the bright core: the dark
and light rings contrast in lightness, not hue, so the mark stays visible to red-green
colour-blind readers on every palette (a green core alone can sink into a red-yellow ramp
for them)."""
ISOTHERM_COLOUR = (0, 230, 255)
MOULD_RISK_COLOUR = (255, 160, 255)
CONDENSATION_COLOUR = (255, 0, 255)
"""Overlay colours: bright green, cyan, light pink and magenta lie far (CIELAB ΔE > 25)
from every palette ramp, so they stay readable on all of them and palette inversion
recognises them as "not a temperature"."""

_FONT_DIR = Path("/usr/share/fonts/truetype/dejavu")

MAX_PICTURE_SIDE_PX = 4096
"""Largest side of any drawn picture, in pixels: about 35 cm at 300 dpi, and at most 48 MB of
RGB, whatever the thermogram's shape."""

MIN_SCALE_BAR_PX = 120
"""Least height of a drawn scale bar: a picture flatter than this is drawn at the top of a
white box as tall as the bar, so the bar's ticks stay readable."""


# --- overlays -----------------------------------------------------------------------------


def isotherm_mask(temperatures_c: np.ndarray, low_c: float, high_c: float) -> np.ndarray:
    """Pixels whose temperature lies in the band low_c ≤ t ≤ high_c (NaN never does).

    Examples
    --------
    >>> isotherm_mask(np.array([19.0, 20.0, 21.5, np.nan]), 20.0, 21.5).tolist()
    [False, True, True, False]
    """
    if not high_c >= low_c:
        raise ValueError("high_c must be at or above low_c")
    t = np.asarray(temperatures_c)
    return (t >= low_c) & (t <= high_c)


def condensation_masks(
    temperatures_c: np.ndarray, t_air_c: float, rh_pct: float
) -> tuple[np.ndarray, np.ndarray]:
    """Mould-risk and condensation masks of a building surface for the given room air.

    Returns ``(mould_risk, condensation)``: pixels whose surface relative humidity
    (`survey.thermal.psychrometrics.surface_rh`) is ≥ 80 % and ≥ 100 % [ISO13788].
    NaN pixels, and pixels outside the range of the saturation formula (a flue above
    100 °C in a wall picture), are in neither.

    Examples
    --------
    >>> mould, wet = condensation_masks(np.array([20.0, 12.0, 5.0]), 20.0, 50.0)
    >>> mould.tolist(), wet.tolist()
    ([False, True, True], [False, False, True])
    """
    t = np.asarray(temperatures_c, dtype=np.float64)
    finite = np.isfinite(t)
    rh = np.full(t.shape, np.nan)
    rh[finite] = surface_rh(t_air_c, rh_pct, t[finite], out_of_range="nan")
    with np.errstate(invalid="ignore"):
        return rh >= 80.0, rh >= 100.0


def apply_overlay(rgb: np.ndarray, mask: np.ndarray, colour: Sequence[int]) -> np.ndarray:
    """Return a copy of `rgb` with the pixels of `mask` painted in `colour`.

    Examples
    --------
    >>> picture = np.zeros((1, 2, 3), np.uint8)
    >>> apply_overlay(picture, np.array([[True, False]]), ISOTHERM_COLOUR)[0].tolist()
    [[0, 230, 255], [0, 0, 0]]
    """
    mask = np.asarray(mask, dtype=bool)
    if mask.shape != rgb.shape[:2]:
        raise ValueError(f"overlay mask {mask.shape} does not match the picture {rgb.shape[:2]}")
    painted = rgb.copy()
    painted[mask] = np.asarray(colour, dtype=np.uint8)
    return painted


# --- drawing ------------------------------------------------------------------------------


@functools.lru_cache(maxsize=32)
def font(size_px: int, bold: bool = False):
    """A DejaVu Sans font of `size_px` pixels, or Pillow's built-in font at that size.

    Examples
    --------
    >>> font(20).size
    20
    """
    from PIL import ImageFont

    path = _FONT_DIR / ("DejaVuSans-Bold.ttf" if bold else "DejaVuSans.ttf")
    if path.exists():
        return ImageFont.truetype(str(path), size_px)
    return ImageFont.load_default(size=size_px)


def nice_step(low: float, high: float, target: int = 6) -> float:
    """The round step (1, 2, 2.5 or 5 × 10ⁿ) nearest to `target` ticks between low and high.

    Examples
    --------
    >>> nice_step(18.3, 31.7), nice_step(0.0, 12.0)
    (2.5, 2.5)
    """
    raw = (high - low) / max(target - 1, 1)
    power = 10.0 ** math.floor(math.log10(raw))
    return min((m * power for m in (1, 2, 2.5, 5, 10)), key=lambda s: abs(math.log(s / raw)))


def nice_ticks(low: float, high: float, target: int = 6, *, step: float | None = None):
    """Round tick values between low and high: the one tick algorithm of scale bars and charts.

    The step is `nice_step` unless given.

    Examples
    --------
    >>> nice_ticks(18.3, 31.7)
    [20.0, 22.5, 25.0, 27.5, 30.0]
    """
    if not high > low:
        return [low]
    step = step or nice_step(low, high, target)
    first = math.ceil(low / step - 1e-9) * step
    count = int(math.floor((high - first) / step + 1e-9)) + 1
    return [round(first + i * step, 10) for i in range(min(count, 50))]


def _format_tick(value: float, ticks: list[float]) -> str:
    step = ticks[1] - ticks[0] if len(ticks) > 1 else 1.0
    decimals = 0 if float(step).is_integer() else max(0, -math.floor(math.log10(step)) + 1)
    decimals = min(decimals, 2)
    text = f"{value:.{decimals}f}"
    if decimals == 2 and text.endswith("0"):
        text = text[:-1]
    return text.replace("-", "−")


def _mark_field(mark, name, default=None):
    if isinstance(mark, dict):
        return mark.get(name, default)
    return getattr(mark, name, default)


def draw_marks(image, marks: Iterable, scale_x: float, scale_y: float) -> None:
    """Draw marks and their labels onto a PIL image in place.

    Each mark is a dict or an object with ``kind``, ``points`` (thermogram pixel
    coordinates, pixel centres at integers), optional ``label`` and ``single_pixel``.
    `scale_x`, `scale_y` are output pixels per thermogram pixel. Lines are drawn in
    `MARK_COLOUR` over a dark outline so they read on every palette.

    Examples
    --------
    >>> from PIL import Image
    >>> image = Image.new("RGB", (40, 40))
    >>> draw_marks(image, [{"kind": "rectangle", "points": [[2, 2], [7, 7]]}], 4.0, 4.0)
    >>> image.getpixel((8, 20)) == MARK_COLOUR
    True
    """
    from PIL import ImageDraw

    draw = ImageDraw.Draw(image)
    width = max(2, round(min(image.size) / 200))
    label_font = font(max(11, round(min(image.size) / 22)), bold=True)
    # The widest ring's half width: every drawn coordinate stays this far inside the
    # picture, so a mark at the image edge is drawn whole instead of clipped.
    inset = (width + 4) / 2
    right, bottom = image.size[0] - 1 - inset, image.size[1] - 1 - inset

    def inside(x, y):
        return (min(max(x, inset), right), min(max(y, inset), bottom))

    def place(x, y):
        return ((float(x) + 0.5) * scale_x, (float(y) + 0.5) * scale_y)

    def centred(box, stroke):
        # Pillow draws a box's outline inwards from the box: grown by half the stroke, each
        # ring lies centred on the mark's edge like the lines', dark and light on both sides.
        grow = stroke / 2
        return [box[0] - grow, box[1] - grow, box[2] + grow, box[3] + grow]

    for mark in marks:
        kind = _mark_field(mark, "kind")
        points = [place(x, y) for x, y in _mark_field(mark, "points", [])]
        if not points:
            continue
        rings = (
            (MARK_OUTLINE_COLOUR, width + 4),
            (MARK_HALO_COLOUR, width + 2),
            (MARK_COLOUR, width),
        )
        for colour, stroke in rings:
            if kind == "point":
                (x, y) = points[0]
                half = (0.5 if _mark_field(mark, "single_pixel", False) else 1.5) * scale_x
                arm = max(half + 3 * width, 4 * width)
                hy = (0.5 if _mark_field(mark, "single_pixel", False) else 1.5) * scale_y
                for end, start in (
                    ((x - arm, y), (x - half, y)),
                    ((x + half, y), (x + arm, y)),
                    ((x, y - arm), (x, y - hy)),
                    ((x, y + hy), (x, y + arm)),
                ):
                    draw.line([inside(*end), inside(*start)], fill=colour, width=stroke)
                box = [*inside(x - half, y - hy), *inside(x + half, y + hy)]
                draw.rectangle(centred(box, stroke), outline=colour, width=stroke)
            elif kind in ("rectangle", "ellipse") and len(points) >= 2:
                (x0, y0), (x1, y1) = points[0], points[1]
                box = [min(x0, x1), min(y0, y1), max(x0, x1), max(y0, y1)]
                if kind == "rectangle":
                    # The pixels whose centres are inside reach half a pixel further out.
                    box = [box[0] - scale_x / 2, box[1] - scale_y / 2]
                    box += [max(x0, x1) + scale_x / 2, max(y0, y1) + scale_y / 2]
                box = centred([*inside(box[0], box[1]), *inside(box[2], box[3])], stroke)
                if kind == "rectangle":
                    draw.rectangle(box, outline=colour, width=stroke)
                else:
                    draw.ellipse(box, outline=colour, width=stroke)
            elif kind == "polygon":
                ring = [inside(*p) for p in points + [points[0]]]
                draw.line(ring, fill=colour, width=stroke, joint="curve")
            elif kind == "line":
                draw.line([inside(*p) for p in points], fill=colour, width=stroke, joint="curve")
        label = _mark_field(mark, "label")
        if label:
            if kind == "line":
                anchor_x, anchor_y = points[0]  # a label names where the profile starts
            else:
                anchor_x = min(p[0] for p in points) + (2 * width if kind == "point" else 0)
                anchor_y = min(p[1] for p in points) - (2 * width if kind == "point" else 0)
            text_x = min(max(anchor_x + width, 0), image.size[0] - label_font.size)
            text_y = max(anchor_y - label_font.size - width, 0)
            draw.text(
                (text_x, text_y),
                str(label),
                font=label_font,
                fill=MARK_COLOUR,
                stroke_width=max(1, width // 2 + 1),
                stroke_fill=MARK_OUTLINE_COLOUR,
            )


def _scale_bar(ramp, low_c, high_c, unit, height_px, width_px):
    """The scale bar strip: the palette from low (bottom) to high (top) with ticks."""
    from PIL import Image, ImageDraw

    strip = Image.new("RGB", (width_px, height_px), (255, 255, 255))
    draw = ImageDraw.Draw(strip)
    text_font = font(max(10, min(round(height_px / 24), round(width_px / 4.2))))
    size = text_font.size
    margin_top = round(size * 2.2)
    margin_bottom = round(size * 0.9)
    bar_left = round(width_px * 0.1)
    bar_right = bar_left + max(6, round(width_px * 0.28))
    bar_top, bar_bottom = margin_top, height_px - margin_bottom
    bar_height = max(bar_bottom - bar_top, 2)
    column = Image.fromarray(np.ascontiguousarray(ramp[::-1][:, None, :]))
    strip.paste(
        column.resize((bar_right - bar_left, bar_height), Image.Resampling.NEAREST),
        (bar_left, bar_top),
    )
    draw.rectangle([bar_left - 1, bar_top - 1, bar_right, bar_bottom], outline=(34, 34, 34))
    low_d, high_d = units.from_celsius(low_c, unit), units.from_celsius(high_c, unit)
    ticks = nice_ticks(low_d, high_d, target=max(2, min(8, bar_height // (size * 2))))
    draw.text((bar_left, size * 0.4), f"°{unit}", font=font(size, bold=True), fill=(34, 34, 34))
    tick_end = bar_right + max(3, size // 3)
    # A clear gap after the tick: a label's leading minus sign must not read as the tick.
    text_left = tick_end + max(4, size // 3)
    for value in ticks:
        y = bar_bottom - (value - low_d) / (high_d - low_d) * bar_height
        draw.line([(bar_right, y), (tick_end, y)], fill=(34, 34, 34), width=1)
        draw.text(
            (text_left, y),
            _format_tick(value, ticks),
            font=text_font,
            fill=(34, 34, 34),
            anchor="lm",
        )
    return strip


def scale_bar_width_px(width_px: int) -> int:
    """The width of the scale bar strip on the right of a `width_px` wide picture.

    Examples
    --------
    >>> scale_bar_width_px(669)
    94
    """
    return max(56, round(width_px * 0.14))


def render_picture(
    temperatures_c: np.ndarray,
    palette: str | np.ndarray = "black-red-yellow",
    low_c: float | None = None,
    high_c: float | None = None,
    *,
    marks: Iterable = (),
    overlays: Iterable[tuple[np.ndarray, Sequence[int]]] = (),
    scale_bar: bool = True,
    unit: str = "C",
    width_px: int | None = None,
    max_height_px: int = MAX_PICTURE_SIDE_PX,
):
    """Draw a thermogram as a PIL RGB image with marks, overlays and a scale bar.

    Parameters
    ----------
    temperatures_c : H×W float °C
    palette : palette name or N×3 ramp
    low_c, high_c : float, optional
        Span in °C; `auto_span` when either is None.
    marks : iterable of dicts or objects with ``kind``, ``points``, ``label``
        Drawn with their labels (A, B, C…) in `MARK_COLOUR`.
    overlays : iterable of (mask, colour)
        Boolean H×W masks painted before scaling, for example
        ``(isotherm_mask(t, 30, 35), ISOTHERM_COLOUR)`` or the masks of
        `condensation_masks` with `MOULD_RISK_COLOUR` and `CONDENSATION_COLOUR`.
    scale_bar : bool
        Append a scale bar strip on the right with ticks in `unit`.
    unit : {"C", "F"}
        Unit of the scale bar's ticks.
    width_px : int, optional
        Total output width in pixels (thermogram plus scale bar), at most
        `MAX_PICTURE_SIDE_PX`; the height follows the thermogram's aspect ratio. Default:
        2 output pixels per thermogram pixel, at least 640 and at most
        `MAX_PICTURE_SIDE_PX` pixels wide.
    max_height_px : int
        Largest output height. A thermogram that would be drawn taller is drawn narrower
        instead, in the middle of white space (it keeps its aspect ratio, the whole picture
        its width and the scale bar its place), so the picture's size is bounded in both
        directions whatever the thermogram's shape.

    Returns
    -------
    PIL.Image.Image (mode "RGB"). Encode it with `encode_png`.

    Examples
    --------
    >>> marks = [{"kind": "point", "points": [[5, 5]], "label": "A"}]
    >>> image = render_picture(np.full((30, 40), 20.0), marks=marks, width_px=400)
    >>> image.size
    (400, 258)
    """
    from PIL import Image

    unit = str(unit).upper().lstrip("°")
    if unit not in ("C", "F"):
        raise ValueError("unit must be C or F")
    t = np.asarray(temperatures_c, dtype=np.float32)
    if t.ndim != 2 or t.size == 0:
        raise ValueError("temperatures_c must be a non-empty 2-D array")
    if low_c is None or high_c is None:
        auto_low, auto_high = auto_span(t)
        low_c = auto_low if low_c is None else low_c
        high_c = auto_high if high_c is None else high_c
    ramp = palette_ramp(palette)
    rgb = render(t, ramp, low_c, high_c)
    for mask, colour in overlays:
        rgb = apply_overlay(rgb, mask, colour)
    height, width = t.shape
    if width_px is None:
        width_px = max(640, 2 * width + (round(0.16 * 2 * width) if scale_bar else 0))
        width_px = min(width_px, MAX_PICTURE_SIDE_PX)
    width_px = int(width_px)
    if width_px > MAX_PICTURE_SIDE_PX:
        raise ValueError(f"width_px must be at most {MAX_PICTURE_SIDE_PX}, not {width_px}")
    max_height_px = min(int(max_height_px), MAX_PICTURE_SIDE_PX)
    if scale_bar and max_height_px < MIN_SCALE_BAR_PX:
        raise ValueError(f"max_height_px must be at least {MIN_SCALE_BAR_PX} with a scale bar")
    strip_px = scale_bar_width_px(width_px) if scale_bar else 0
    picture_px = width_px - strip_px
    if picture_px < 16:
        raise ValueError(f"width_px {width_px} is too small for a picture with a scale bar")
    area_px = picture_px
    picture_height = max(1, round(height * picture_px / width))
    if picture_height > max_height_px:
        # Too tall at this width (a narrow strip): drawn narrower, keeping its shape, in the
        # middle of its usual area, so the whole picture keeps its width on the page.
        picture_px = max(1, round(width * max_height_px / height))
        picture_height = max_height_px
    resample = Image.Resampling.NEAREST if picture_px >= width else Image.Resampling.BOX
    picture = Image.fromarray(rgb).resize((picture_px, picture_height), resample)
    draw_marks(picture, marks, picture_px / width, picture_height / height)
    if not scale_bar and area_px == picture_px:
        return picture
    canvas_height = max(picture_height, MIN_SCALE_BAR_PX if scale_bar else 1)
    canvas = Image.new("RGB", (width_px, canvas_height), (255, 255, 255))
    canvas.paste(picture, ((area_px - picture_px) // 2, 0))
    if scale_bar:
        strip = _scale_bar(ramp, low_c, high_c, unit, canvas_height, strip_px)
        canvas.paste(strip, (area_px, 0))
    return canvas


def encode_png(image, *, compress_level: int = 6) -> bytes:
    """Encode a PIL image (or an H×W×3 uint8 array) as PNG bytes.

    Examples
    --------
    >>> encode_png(np.zeros((2, 2, 3), np.uint8))[:4]
    b'\\x89PNG'
    """
    from PIL import Image

    if isinstance(image, np.ndarray):
        image = Image.fromarray(image)
    buffer = io.BytesIO()
    image.save(buffer, format="PNG", compress_level=compress_level)
    return buffer.getvalue()


# Plan markers: white discs with a black rim read on drawings and aerial photos alike; wet
# areas in blue (0, 114, 178) with a white halo, a colour red-green colour-blind readers
# tell from the black and white of the markers.
PLAN_MARKER_FILL = (255, 255, 255)
PLAN_MARKER_RIM = (20, 20, 20)
PLAN_WET_COLOUR = (0, 114, 178)


def draw_plan(plan, placements: Iterable, wet_areas: Iterable, *, max_width_px: int = 1600):
    """A roof plan with numbered thermogram positions and labelled wet-area outlines.

    Parameters
    ----------
    plan : PIL.Image.Image
        The plan as uploaded (not changed: a copy is drawn on).
    placements : iterable of (x_frac, y_frac, label)
        Thermogram positions as fractions of the plan's width and height from the top-left.
    wet_areas : iterable of (x_frac, y_frac, label)
        Wet-area outlines, drawn as a ring around the position with the label beside it.
    max_width_px : int
        The copy is shrunk to at most this width first.

    Returns
    -------
    PIL.Image.Image
        An RGB copy with the drawing.

    Examples
    --------
    >>> from PIL import Image
    >>> out = draw_plan(Image.new("RGB", (200, 100), "grey"), [(0.5, 0.5, "1")], [])
    >>> out.size, out.getpixel((94, 50)) == PLAN_MARKER_RIM  # the marker's rim, 6 px left
    ((200, 100), True)
    """
    from PIL import ImageDraw

    if max_width_px < 1:
        raise ValueError("max_width_px must be at least 1")
    image = plan.convert("RGB")
    if image.width > max_width_px:
        height = max(1, round(image.height * max_width_px / image.width))
        image = image.resize((max_width_px, height))
    draw = ImageDraw.Draw(image)
    size = max(image.size)
    radius = max(6, round(size / 70))
    rim = max(2, round(size / 500))
    label_font = font(max(10, round(radius * 1.3)), bold=True)
    for x_frac, y_frac, label in wet_areas:
        x, y = x_frac * image.width, y_frac * image.height
        ring = radius * 3
        box = [x - ring, y - ring, x + ring, y + ring]
        draw.ellipse(box, outline=(255, 255, 255), width=rim * 3)
        draw.ellipse(box, outline=PLAN_WET_COLOUR, width=rim * 2)
        text_x = min(max(x + ring + rim, 0), image.width - label_font.size)
        text_y = min(max(y - label_font.size / 2, 0), image.height - label_font.size)
        if text_x + draw.textlength(str(label), font=label_font) > image.width:
            text_x = max(x - ring - rim - draw.textlength(str(label), font=label_font), 0)
        draw.text(
            (text_x, text_y),
            str(label),
            font=label_font,
            fill=PLAN_WET_COLOUR,
            stroke_width=rim + 1,
            stroke_fill=(255, 255, 255),
        )
    for x_frac, y_frac, label in placements:
        x, y = x_frac * image.width, y_frac * image.height
        box = [x - radius, y - radius, x + radius, y + radius]
        draw.ellipse(box, fill=PLAN_MARKER_FILL, outline=PLAN_MARKER_RIM, width=rim)
        number_font = font(max(8, round(radius * (1.2 if len(str(label)) < 3 else 0.8))), True)
        draw.text((x, y), str(label), font=number_font, fill=PLAN_MARKER_RIM, anchor="mm")
    return image
