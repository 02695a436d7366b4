"""Palettes: colour science, the ramps, colouring temperatures and reading them back.

Palettes are colour ramps of our own construction, cold to warm, each 256 distinct colours
so that a rendered picture can be turned back into temperatures (`invert_palette`), also
from a scale bar sampled out of the picture itself (`ramp_from_scale_bar`). Drawing marks,
labels and scale bars on top is survey/thermal/drawing.py.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

RAMP_SIZE = 256

NO_DATA_COLOUR = (80, 128, 96)
"""Pixels without a temperature: a muted grey-green that lies on no palette ramp."""

DEFAULT_MAX_DELTA_E = 12.0


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


def widen_span(low_c: float, high_c: float, values_c) -> tuple[float, float]:
    """The span (low_c, high_c) widened just enough to include every finite value given.

    Used for the "include every mark's extremes" span rule: an automatic span clips the
    hottest and coldest percent of pixels, which may be exactly the marked hot spot.

    Examples
    --------
    >>> widen_span(20.0, 30.0, [18.5, 35.0, float("nan")])
    (18.5, 35.0)
    >>> widen_span(20.0, 30.0, [])
    (20.0, 30.0)
    """
    values = np.asarray(values_c, dtype=np.float64).ravel()
    finite = values[np.isfinite(values)]
    if finite.size == 0:
        return float(low_c), float(high_c)
    return float(min(low_c, finite.min())), float(max(high_c, finite.max()))


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
