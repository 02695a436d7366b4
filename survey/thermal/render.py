"""Pictures of thermograms: palettes, rendering, palette inversion, overlays and drawing.

Palettes are colour ramps of our own construction, cold to warm, each 256 distinct colours
so that a rendered picture can be turned back into temperatures (`invert_palette`).

Drawing (`render_picture`, `preview`, `thumbnail`) scales the rendered thermogram to the
output size first and draws marks, labels and the scale bar afterwards, so text and lines
stay sharp at any size.
"""

from __future__ import annotations

import functools
import io
import math
from collections.abc import Iterable, Sequence
from pathlib import Path

import numpy as np

RAMP_SIZE = 256

NO_DATA_COLOUR = (80, 128, 96)
"""Pixels without a temperature: a muted grey-green that lies on no palette ramp."""

MARK_COLOUR = (0, 255, 0)
MARK_OUTLINE_COLOUR = (0, 64, 0)
ISOTHERM_COLOUR = (0, 230, 255)
MOULD_RISK_COLOUR = (255, 160, 255)
CONDENSATION_COLOUR = (255, 0, 255)
"""Overlay colours: bright green, cyan, light pink and magenta lie far (CIELAB ΔE > 25)
from every palette ramp, so they stay readable on all of them and palette inversion
recognises them as "not a temperature"."""

DEFAULT_MAX_DELTA_E = 12.0

_FONT_DIR = Path("/usr/share/fonts/truetype/dejavu")


# --- colour science -----------------------------------------------------------------------

# sRGB (IEC 61966-2-1) primaries with the D65 white point: linear RGB -> CIE XYZ.
_RGB_TO_XYZ = np.array(
    [
        [0.4124564, 0.3575761, 0.1804375],
        [0.2126729, 0.7151522, 0.0721750],
        [0.0193339, 0.1191920, 0.9503041],
    ]
)
_XYZ_TO_RGB = np.linalg.inv(_RGB_TO_XYZ)
_D65_WHITE = _RGB_TO_XYZ.sum(axis=1)
_LAB_EPSILON = (6 / 29) ** 3


def srgb_to_lab(rgb: np.ndarray) -> np.ndarray:
    """Convert sRGB colours (uint8 or floats 0–255, last axis of 3) to CIELAB (D65).

    Notes
    -----
    sRGB decoding per IEC 61966-2-1, then CIE 1976 L*a*b* with the D65 white [CIE15].

    Examples
    --------
    >>> srgb_to_lab(np.array([255, 255, 255])).round(2).tolist()
    [100.0, 0.0, 0.0]
    """
    c = np.asarray(rgb, dtype=np.float64) / 255.0
    linear = np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)
    xyz = linear @ _RGB_TO_XYZ.T / _D65_WHITE
    f = np.where(xyz > _LAB_EPSILON, np.cbrt(xyz), xyz / (3 * (6 / 29) ** 2) + 4 / 29)
    lightness = 116 * f[..., 1] - 16
    a = 500 * (f[..., 0] - f[..., 1])
    b = 200 * (f[..., 1] - f[..., 2])
    return np.stack([lightness, a, b], axis=-1) + 0.0  # + 0.0 turns -0.0 into 0.0


def _lab_to_linear_rgb(lab: np.ndarray) -> np.ndarray:
    lab = np.asarray(lab, dtype=np.float64)
    fy = (lab[..., 0] + 16) / 116
    f = np.stack([fy + lab[..., 1] / 500, fy, fy - lab[..., 2] / 200], axis=-1)
    xyz = np.where(f > 6 / 29, f**3, 3 * (6 / 29) ** 2 * (f - 4 / 29)) * _D65_WHITE
    return xyz @ _XYZ_TO_RGB.T


def _linear_to_srgb8(linear: np.ndarray) -> np.ndarray:
    c = np.clip(linear, 0.0, 1.0)
    encoded = np.where(c <= 0.0031308, 12.92 * c, 1.055 * c ** (1 / 2.4) - 0.055)
    return np.rint(encoded * 255).astype(np.uint8)


# --- palettes -----------------------------------------------------------------------------


def _ramp_through(anchors: Sequence[Sequence[int]], positions: Sequence[float] | None = None):
    """Interpolate RGB anchors to RAMP_SIZE colours.

    Without `positions` the anchors are spaced by their RGB distance (L1), so that every
    step changes the colour by about the same amount and all 256 colours stay distinct.
    """
    anchors = np.asarray(anchors, dtype=np.float64)
    if positions is None:
        steps = np.abs(np.diff(anchors, axis=0)).sum(axis=1)
        positions = np.concatenate([[0.0], np.cumsum(steps)]) / steps.sum()
    t = np.linspace(0.0, 1.0, RAMP_SIZE)
    channels = [np.interp(t, positions, anchors[:, k]) for k in range(3)]
    return np.rint(np.stack(channels, axis=1)).astype(np.uint8)


def _perceptual_ramp() -> np.ndarray:
    """Our colour-blind-safe ramp: a straight line in CIELAB from dark blue to light yellow.

    Lightness rises linearly from 15 to 92 so that order is read from lightness alone,
    which every kind of colour vision perceives; the hue runs along the blue–yellow axis
    that red–green colour-blind readers still see. The line was chosen to stay inside the
    sRGB gamut, so steps are even (about 0.3 ΔE). Rounding to 8 bits can repeat a colour
    or dip lightness by a hair; each entry therefore takes, among its rounded colour and
    the colours one or two levels away in each channel, the one nearest the target that is
    unused and lighter than the entry before. That keeps all 256 colours distinct (for
    palette inversion) and lightness strictly rising.
    """
    t = np.linspace(0.0, 1.0, RAMP_SIZE)[:, None]
    lab = np.hstack([15.0 + 77.0 * t, 20.0 * (1 - t) - 10.0 * t, -40.0 * (1 - t) + 65.0 * t])
    rounded = _linear_to_srgb8(_lab_to_linear_rgb(lab)).astype(np.int16)
    steps = (-2, -1, 0, 1, 2)
    nudges = np.array([[r, g, b] for r in steps for g in steps for b in steps])
    colours = np.empty((RAMP_SIZE, 3), dtype=np.uint8)
    used: set[tuple[int, int, int]] = set()
    previous_lightness = -1.0
    for i in range(RAMP_SIZE):
        candidates = np.clip(rounded[i] + nudges, 0, 255)
        candidate_lab = srgb_to_lab(candidates)
        allowed = np.array([tuple(c) not in used for c in candidates.tolist()]) & (
            candidate_lab[:, 0] > previous_lightness
        )
        distances = np.where(allowed, ((candidate_lab - lab[i]) ** 2).sum(axis=1), np.inf)
        best = int(np.argmin(distances))
        colours[i] = candidates[best]
        used.add(tuple(candidates[best].tolist()))
        previous_lightness = candidate_lab[best, 0]
    return colours


def _frozen(ramp: np.ndarray) -> np.ndarray:
    ramp.setflags(write=False)
    return ramp


PALETTES: dict[str, np.ndarray] = {
    "black-red-yellow": _frozen(
        _ramp_through(
            [(0, 0, 0), (128, 0, 0), (230, 20, 0), (255, 128, 0), (255, 230, 0), (255, 255, 255)]
        )
    ),
    "grey white-warm": _frozen(_ramp_through([(0, 0, 0), (255, 255, 255)])),
    "grey black-warm": _frozen(_ramp_through([(255, 255, 255), (0, 0, 0)])),
    "perceptual": _frozen(_perceptual_ramp()),
    "blue-white-red": _frozen(
        _ramp_through([(30, 60, 170), (255, 255, 255), (170, 25, 30)], positions=[0, 0.5, 1])
    ),
}
"""Palette name -> RAMP_SIZE×3 uint8 ramp, cold to warm. `blue-white-red` is for
differentials: centre the span on the reference temperature (see `centred_span`)."""


def palette_ramp(palette: str | np.ndarray) -> np.ndarray:
    """Return the N×3 uint8 ramp of a palette name, or check and return a given ramp.

    Examples
    --------
    >>> palette_ramp("grey white-warm")[[0, -1]].tolist()
    [[0, 0, 0], [255, 255, 255]]
    """
    if isinstance(palette, str):
        try:
            return PALETTES[palette]
        except KeyError:
            raise ValueError(f"Unknown palette {palette!r}; choose one of: {', '.join(PALETTES)}.")
    ramp = np.asarray(palette)
    if ramp.ndim != 2 or ramp.shape[1] != 3 or ramp.shape[0] < 2:
        raise ValueError("palette must be a name or an N×3 colour ramp with N ≥ 2")
    return np.clip(ramp, 0, 255).astype(np.uint8)


# --- rendering ----------------------------------------------------------------------------


def _check_span(low_c: float, high_c: float) -> tuple[float, float]:
    low_c, high_c = float(low_c), float(high_c)
    if not (math.isfinite(low_c) and math.isfinite(high_c)):
        raise ValueError("low_c and high_c must be finite temperatures")
    if high_c <= low_c:
        raise ValueError(f"high_c ({high_c}) must be above low_c ({low_c})")
    return low_c, high_c


def palette_indices(temperatures_c: np.ndarray, size: int, low_c: float, high_c: float):
    """Index of the ramp entry of each pixel (0…size-1), and `size` for NaN pixels.

    Examples
    --------
    >>> palette_indices(np.array([0.0, 0.5, 1.0, np.nan]), 256, 0.0, 1.0).tolist()
    [0, 128, 255, 256]
    """
    low_c, high_c = _check_span(low_c, high_c)
    t = np.asarray(temperatures_c, dtype=np.float32)
    scaled = (t - np.float32(low_c)) * np.float32((size - 1) / (high_c - low_c))
    np.clip(scaled, 0, size - 1, out=scaled)
    scaled += np.float32(0.5)  # round to the nearest entry when truncating below
    # NaN stays NaN through clip; send it to the extra no-data entry.
    scaled[np.isnan(scaled)] = size
    return scaled.astype(np.intp)


def render(
    temperatures_c: np.ndarray, palette: str | np.ndarray, low_c: float, high_c: float
) -> np.ndarray:
    """Colour a temperature array with a palette: H×W float °C -> H×W×3 uint8 RGB.

    Temperatures below `low_c` or above `high_c` take the end colours; NaN pixels take
    `NO_DATA_COLOUR`. One table lookup per pixel.

    Examples
    --------
    >>> render(np.array([[0.0, 10.0, np.nan]]), "grey white-warm", 0.0, 10.0).tolist()
    [[[0, 0, 0], [255, 255, 255], [80, 128, 96]]]
    """
    ramp = palette_ramp(palette)
    lut = np.vstack([ramp, np.array([NO_DATA_COLOUR], dtype=np.uint8)])
    return lut[palette_indices(temperatures_c, len(ramp), low_c, high_c)]


def auto_span(
    temperatures_c: np.ndarray, low_pct: float = 1.0, high_pct: float = 99.0
) -> tuple[float, float]:
    """A robust display span: the 1st and 99th percentiles of the finite temperatures.

    A few hot or dead pixels then do not squash the picture's contrast. A flat field
    gets a span of ±0.5 °C around its value so that the span is never empty.

    Examples
    --------
    >>> auto_span(np.arange(101, dtype=np.float32))
    (1.0, 99.0)
    >>> auto_span(np.full((2, 2), 20.0))
    (19.5, 20.5)
    """
    t = np.asarray(temperatures_c, dtype=np.float32).ravel()
    finite = t[np.isfinite(t)]
    if finite.size == 0:
        raise ValueError("temperatures_c has no finite value to take a span from")
    low, high = np.percentile(finite, [low_pct, high_pct])
    low, high = float(low), float(high)
    if high - low < 1e-6:
        return low - 0.5, high + 0.5
    return low, high


def centred_span(temperatures_c: np.ndarray, reference_c: float) -> tuple[float, float]:
    """A span symmetric about `reference_c` for the `blue-white-red` differential palette.

    Examples
    --------
    >>> centred_span(np.array([18.0, 21.0, 30.0]), 20.0)
    (10.0, 30.0)
    """
    low, high = auto_span(temperatures_c, 0.0, 100.0)
    half = max(abs(high - reference_c), abs(reference_c - low), 0.5)
    return reference_c - half, reference_c + half


# --- palette inversion --------------------------------------------------------------------


def invert_palette(
    rgb: np.ndarray,
    palette: str | np.ndarray,
    low_c: float,
    high_c: float,
    *,
    max_delta_e: float = DEFAULT_MAX_DELTA_E,
    margin_px: int = 1,
) -> np.ndarray:
    """Estimate temperatures from a false-colour picture by nearest palette colour.

    Each pixel's colour is matched to the nearest colour of the ramp in CIELAB; ramp
    entry i of N stands for ``low_c + i/(N-1)·(high_c - low_c)``. Pixels farther than
    `max_delta_e` (CIE76 ΔE) from every ramp colour — text, marks, overlays — become NaN,
    and so do their neighbours within `margin_px`, whose colours are blended by
    anti-aliasing or compression. Text drawn in a colour that is itself on the ramp (for
    example white on `black-red-yellow`) cannot be told apart and reads as a temperature.

    Parameters
    ----------
    rgb : H×W×3 uint8
    palette : palette name or N×3 ramp (for example from `ramp_from_scale_bar`)
    low_c, high_c : float
        Temperatures of the ramp's cold and warm ends, °C.

    Returns
    -------
    H×W float32 °C, an estimate (resolution one ramp step), NaN where no colour matches.

    Examples
    --------
    >>> picture = render(np.array([[20.0, 25.0, 30.0]]), "perceptual", 20.0, 30.0)
    >>> invert_palette(picture, "perceptual", 20.0, 30.0).astype(float).round(2).tolist()
    [[20.0, 25.02, 30.0]]
    """
    low_c, high_c = _check_span(low_c, high_c)
    ramp = palette_ramp(palette)
    rgb = np.asarray(rgb)
    if rgb.ndim != 3 or rgb.shape[2] < 3:
        raise ValueError("rgb must be an H×W×3 colour picture")
    rgb = rgb[..., :3].astype(np.uint8, copy=False)
    keys = (
        (rgb[..., 0].astype(np.uint32) << 16) | (rgb[..., 1].astype(np.uint32) << 8) | rgb[..., 2]
    )
    colours, inverse = np.unique(keys.ravel(), return_inverse=True)
    unique_rgb = np.stack([(colours >> 16) & 255, (colours >> 8) & 255, colours & 255], axis=1)
    unique_lab = srgb_to_lab(unique_rgb)
    ramp_lab = srgb_to_lab(ramp)
    best = np.empty(len(colours), dtype=np.intp)
    best_distance = np.empty(len(colours))
    chunk = 4096  # bounds the distance matrix at chunk × N floats
    for start in range(0, len(colours), chunk):
        block = unique_lab[start : start + chunk]
        squared = ((block[:, None, :] - ramp_lab[None, :, :]) ** 2).sum(axis=2)
        nearest = squared.argmin(axis=1)
        best[start : start + chunk] = nearest
        best_distance[start : start + chunk] = np.sqrt(squared[np.arange(len(block)), nearest])
    temperatures = low_c + best * ((high_c - low_c) / (len(ramp) - 1))
    temperatures[best_distance > max_delta_e] = np.nan
    result = temperatures[inverse].reshape(rgb.shape[:2]).astype(np.float32)
    if margin_px > 0:
        result[_grow(np.isnan(result), margin_px)] = np.nan
    return result


def _grow(mask: np.ndarray, pixels: int) -> np.ndarray:
    """Dilate a boolean mask by `pixels` in every direction (square neighbourhood)."""
    grown = mask.copy()
    for _ in range(pixels):
        step = grown.copy()
        step[1:, :] |= grown[:-1, :]
        step[:-1, :] |= grown[1:, :]
        step[:, 1:] |= grown[:, :-1]
        step[:, :-1] |= grown[:, 1:]
        step[1:, 1:] |= grown[:-1, :-1]
        step[1:, :-1] |= grown[:-1, 1:]
        step[:-1, 1:] |= grown[1:, :-1]
        step[:-1, :-1] |= grown[1:, 1:]
        grown = step
    return grown


def ramp_from_scale_bar(rgb: np.ndarray, box: Sequence[int]) -> np.ndarray:
    """Sample a colour ramp, cold to warm, from the scale bar of a false-colour picture.

    `box` is the bar's (left, top, right, bottom) pixel box, right and bottom exclusive
    (as in Pillow's crop). A tall box is read from bottom (cold) to top (warm), a wide box
    from left (cold) to right (warm). Each ramp entry is the median colour across the
    middle half of the bar's width, which ignores a frame drawn round it.

    Examples
    --------
    >>> bar = np.zeros((8, 2, 3), dtype=np.uint8)
    >>> bar[:, :, 0] = np.arange(70, -1, -10)[:, None]  # warm (70) at the top
    >>> ramp_from_scale_bar(bar, (0, 0, 2, 8))[:, 0].tolist()
    [0, 10, 20, 30, 40, 50, 60, 70]
    """
    rgb = np.asarray(rgb)
    height, width = rgb.shape[:2]
    try:
        left, top, right, bottom = (int(v) for v in box)
    except (TypeError, ValueError):
        raise ValueError("The scale bar box needs four whole numbers: left, top, right, bottom.")
    if not (0 <= left < right <= width and 0 <= top < bottom <= height):
        raise ValueError(
            f"The scale bar box {tuple(box)} does not lie inside the {width}×{height} picture."
        )
    bar = rgb[top:bottom, left:right, :3].astype(np.float64)
    if bottom - top >= right - left:
        across = bar.shape[1]
        middle = bar[:, across // 4 : max(across // 4 + 1, across - across // 4)]
        ramp = np.median(middle, axis=1)[::-1]
    else:
        across = bar.shape[0]
        middle = bar[across // 4 : max(across // 4 + 1, across - across // 4)]
        ramp = np.median(middle, axis=0)
    if len(ramp) < 8:
        raise ValueError("The scale bar box is too short: it must be at least 8 pixels long.")
    return np.rint(ramp).astype(np.uint8)


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
    NaN pixels are in neither.

    Examples
    --------
    >>> mould, wet = condensation_masks(np.array([20.0, 12.0, 5.0]), 20.0, 50.0)
    >>> mould.tolist(), wet.tolist()
    ([False, True, True], [False, False, True])
    """
    from survey.thermal.psychrometrics import surface_rh

    t = np.asarray(temperatures_c, dtype=np.float64)
    finite = np.isfinite(t)
    rh = np.full(t.shape, np.nan)
    rh[finite] = surface_rh(t_air_c, rh_pct, t[finite])
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


def nice_ticks(low: float, high: float, target: int = 6) -> list[float]:
    """Round tick values (steps of 1, 2, 2.5 or 5 × 10ⁿ) between low and high.

    Examples
    --------
    >>> nice_ticks(18.3, 31.7)
    [20.0, 22.5, 25.0, 27.5, 30.0]
    """
    if not high > low:
        return [low]
    raw = (high - low) / max(target - 1, 1)
    power = 10.0 ** math.floor(math.log10(raw))
    step = min((m * power for m in (1, 2, 2.5, 5, 10)), key=lambda s: abs(math.log(s / raw)))
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

    def place(x, y):
        return ((float(x) + 0.5) * scale_x, (float(y) + 0.5) * scale_y)

    for mark in marks:
        kind = _mark_field(mark, "kind")
        points = [place(x, y) for x, y in _mark_field(mark, "points", [])]
        if not points:
            continue
        for colour, stroke in ((MARK_OUTLINE_COLOUR, width + 2), (MARK_COLOUR, width)):
            if kind == "point":
                (x, y) = points[0]
                half = (0.5 if _mark_field(mark, "single_pixel", False) else 1.5) * scale_x
                arm = max(half + 3 * width, 4 * width)
                draw.line([(x - arm, y), (x - half, y)], fill=colour, width=stroke)
                draw.line([(x + half, y), (x + arm, y)], fill=colour, width=stroke)
                draw.line([(x, y - arm), (x, y - half)], fill=colour, width=stroke)
                draw.line([(x, y + half), (x, y + arm)], fill=colour, width=stroke)
                hy = (0.5 if _mark_field(mark, "single_pixel", False) else 1.5) * scale_y
                draw.rectangle([x - half, y - hy, x + half, y + hy], outline=colour, width=stroke)
            elif kind in ("rectangle", "ellipse") and len(points) >= 2:
                (x0, y0), (x1, y1) = points[0], points[1]
                box = [min(x0, x1), min(y0, y1), max(x0, x1), max(y0, y1)]
                if kind == "rectangle":
                    # The pixels whose centres are inside reach half a pixel further out.
                    box = [box[0] - scale_x / 2, box[1] - scale_y / 2]
                    box += [max(x0, x1) + scale_x / 2, max(y0, y1) + scale_y / 2]
                    draw.rectangle(box, outline=colour, width=stroke)
                else:
                    draw.ellipse(box, outline=colour, width=stroke)
            elif kind == "polygon":
                draw.line(points + [points[0]], fill=colour, width=stroke, joint="curve")
            elif kind == "line":
                draw.line(points, fill=colour, width=stroke, joint="curve")
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
    to_display = (lambda c: c * 9 / 5 + 32) if unit == "F" else (lambda c: c)
    low_d, high_d = to_display(low_c), to_display(high_c)
    ticks = nice_ticks(low_d, high_d, target=max(2, min(8, bar_height // (size * 2))))
    draw.text((bar_left, size * 0.4), f"°{unit}", font=font(size, bold=True), fill=(34, 34, 34))
    for value in ticks:
        y = bar_bottom - (value - low_d) / (high_d - low_d) * bar_height
        draw.line([(bar_right, y), (bar_right + max(3, size // 3), y)], fill=(34, 34, 34), width=1)
        draw.text(
            (bar_right + max(5, size // 2), y),
            _format_tick(value, ticks),
            font=text_font,
            fill=(34, 34, 34),
            anchor="lm",
        )
    return strip


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
        Total output width in pixels (thermogram plus scale bar); the height follows the
        thermogram's aspect ratio. Default: 2 output pixels per thermogram pixel, at least
        640 pixels wide.

    Returns
    -------
    PIL.Image.Image (mode "RGB"). Encode it with `encode_png` or `encode_jpeg`.

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
    width_px = int(width_px)
    strip_px = max(56, round(width_px * 0.14)) if scale_bar else 0
    picture_px = width_px - strip_px
    if picture_px < 16:
        raise ValueError(f"width_px {width_px} is too small for a picture with a scale bar")
    picture_height = max(1, round(height * picture_px / width))
    resample = Image.Resampling.NEAREST if picture_px >= width else Image.Resampling.BOX
    picture = Image.fromarray(rgb).resize((picture_px, picture_height), resample)
    draw_marks(picture, marks, picture_px / width, picture_height / height)
    if not scale_bar:
        return picture
    canvas = Image.new("RGB", (width_px, picture_height), (255, 255, 255))
    canvas.paste(picture, (0, 0))
    canvas.paste(_scale_bar(ramp, low_c, high_c, unit, picture_height, strip_px), (picture_px, 0))
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


def encode_jpeg(image, *, quality: int = 88) -> bytes:
    """Encode a PIL image (or an H×W×3 uint8 array) as JPEG bytes.

    Examples
    --------
    >>> encode_jpeg(np.zeros((8, 8, 3), np.uint8))[:3]
    b'\\xff\\xd8\\xff'
    """
    from PIL import Image

    if isinstance(image, np.ndarray):
        image = Image.fromarray(image)
    buffer = io.BytesIO()
    image.convert("RGB").save(buffer, format="JPEG", quality=quality)
    return buffer.getvalue()


def preview(
    temperatures_c: np.ndarray,
    palette: str | np.ndarray = "black-red-yellow",
    low_c: float | None = None,
    high_c: float | None = None,
    *,
    marks: Iterable = (),
    overlays: Iterable[tuple[np.ndarray, Sequence[int]]] = (),
    unit: str = "C",
    width_px: int = 960,
) -> bytes:
    """PNG bytes of the web preview: the thermogram with marks and a scale bar.

    Same arguments as `render_picture`; `width_px` is the total width (default 960).

    Examples
    --------
    >>> preview(np.full((30, 40), 20.0), width_px=300)[:4]
    b'\\x89PNG'
    """
    image = render_picture(
        temperatures_c,
        palette,
        low_c,
        high_c,
        marks=marks,
        overlays=overlays,
        scale_bar=True,
        unit=unit,
        width_px=width_px,
    )
    return encode_png(image)


def thumbnail(
    temperatures_c: np.ndarray,
    palette: str | np.ndarray = "black-red-yellow",
    low_c: float | None = None,
    high_c: float | None = None,
    *,
    size_px: int = 240,
) -> bytes:
    """JPEG bytes of a small picture without marks or scale bar, fitted in size_px².

    Examples
    --------
    >>> from PIL import Image
    >>> Image.open(io.BytesIO(thumbnail(np.full((120, 160), 20.0), size_px=80))).size
    (80, 60)
    """
    t = np.asarray(temperatures_c, dtype=np.float32)
    if t.ndim != 2 or t.size == 0:
        raise ValueError("temperatures_c must be a non-empty 2-D array")
    height, width = t.shape
    factor = size_px / max(height, width)
    image = render_picture(
        t, palette, low_c, high_c, scale_bar=False, width_px=max(16, round(width * factor))
    )
    return encode_jpeg(image, quality=85)
