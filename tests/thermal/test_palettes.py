"""Palettes: colour science, ramps, colouring, spans, palette inversion, scale-bar sampling."""

import io

import numpy as np
import pytest
from PIL import Image, ImageDraw

from survey.thermal.drawing import (
    CONDENSATION_COLOUR,
    ISOTHERM_COLOUR,
    MARK_COLOUR,
    MARK_OUTLINE_COLOUR,
    MOULD_RISK_COLOUR,
    draw_marks,
    font,
)
from survey.thermal.palettes import (
    NO_DATA_COLOUR,
    PALETTES,
    auto_span,
    centred_span,
    invert_palette,
    ramp_from_scale_bar,
    render,
    srgb_to_lab,
)
from tests.thermal.thermal_fields import ramp_field


def test_palettes_have_our_plain_names():
    """The five palettes carry the names of DESIGN.md."""
    assert set(PALETTES) == {
        "black-red-yellow",
        "grey white-warm",
        "grey black-warm",
        "perceptual",
        "blue-white-red",
    }


@pytest.mark.parametrize("name", sorted(PALETTES))
def test_palettes_are_256_distinct_read_only_colours(name):
    """Each ramp has 256 distinct uint8 colours (needed for exact inversion) and is frozen."""
    ramp = PALETTES[name]
    assert ramp.shape == (256, 3) and ramp.dtype == np.uint8
    assert len(np.unique(ramp, axis=0)) == 256
    with pytest.raises(ValueError):
        ramp[0, 0] = 1


@pytest.mark.parametrize("name", ["black-red-yellow", "grey white-warm", "perceptual"])
def test_palettes_heat_ramps_rise_in_lightness(name):
    """Warm reads lighter on the heat ramps: CIELAB L* never falls along the ramp."""
    lightness = srgb_to_lab(PALETTES[name])[:, 0]
    assert np.all(np.diff(lightness) > -0.05)


def test_palettes_perceptual_is_colour_blind_safe():
    """The perceptual ramp rises strictly in lightness, evenly, and stays on the blue–yellow axis.

    Lightness alone orders it for every kind of colour vision; a* stays small (|a*| ≤ 25),
    so red–green confusion cannot reorder it (common practice for colour-blind-safe maps,
    no single source).
    """
    lab = srgb_to_lab(PALETTES["perceptual"])
    steps = np.diff(lab[:, 0])
    assert np.all(steps > 0)
    assert steps.max() < 3 * steps.mean()
    assert np.abs(lab[:, 1]).max() <= 25
    assert lab[0, 2] < -20 and lab[-1, 2] > 40  # blue at the cold end, yellow at the warm end


def test_srgb_to_lab_check_values():
    """Pure sRGB red, green and blue match published CIELAB (D65) values."""
    # From memory, as listed by common colour calculators (e.g. Lindbloom's): red
    # (53.24, 80.09, 67.20), green (87.73, −86.18, 83.18), blue (32.30, 79.19, −107.86).
    lab = srgb_to_lab(np.array([[255, 0, 0], [0, 255, 0], [0, 0, 255]]))
    expected = [[53.24, 80.09, 67.20], [87.73, -86.18, 83.18], [32.30, 79.19, -107.86]]
    np.testing.assert_allclose(lab, expected, atol=0.05)


@pytest.mark.parametrize(
    "colour",
    [
        NO_DATA_COLOUR,
        MARK_COLOUR,
        MARK_OUTLINE_COLOUR,
        ISOTHERM_COLOUR,
        MOULD_RISK_COLOUR,
        CONDENSATION_COLOUR,
    ],
)
def test_overlay_colours_lie_on_no_ramp(colour):
    """Overlay and no-data colours are ΔE > 25 from every ramp colour, so they stay readable."""
    target = srgb_to_lab(np.array(colour))
    for ramp in PALETTES.values():
        distance = np.sqrt(((srgb_to_lab(ramp) - target) ** 2).sum(axis=1)).min()
        assert distance > 25


# --- render and span -----------------------------------------------------------------------


def test_render_maps_span_ends_and_nan():
    """The span ends take the ramp's end colours, beyond them clip, NaN is no-data."""
    t = np.array([[10.0, 40.0, 0.0, 99.0, np.nan]], np.float32)
    ramp = PALETTES["black-red-yellow"]
    rgb = render(t, "black-red-yellow", 10.0, 40.0)
    assert rgb.dtype == np.uint8 and rgb.shape == (1, 5, 3)
    assert rgb[0].tolist() == [
        ramp[0].tolist(),
        ramp[-1].tolist(),
        ramp[0].tolist(),
        ramp[-1].tolist(),
        list(NO_DATA_COLOUR),
    ]


def test_render_picks_the_nearest_ramp_entry():
    """A temperature maps to the nearest of 256 evenly spaced entries."""
    ramp = PALETTES["grey white-warm"]
    # 0–255 °C over 256 entries: 100.4 °C → entry 100, 100.6 °C → 101 (exact arithmetic).
    rgb = render(np.array([[100.4, 100.6]]), ramp, 0.0, 255.0)
    assert rgb[0, :, 0].tolist() == [100, 101]


@pytest.mark.parametrize(
    "low, high, message",
    [(20.0, 20.0, "above"), (30.0, 20.0, "above"), (float("nan"), 20.0, "finite")],
)
def test_render_refuses_bad_span(low, high, message):
    """An empty, reversed or NaN span is a ValueError."""
    with pytest.raises(ValueError, match=message):
        render(np.zeros((2, 2)), "perceptual", low, high)


def test_render_refuses_unknown_palette():
    """An unknown palette name lists the known ones."""
    with pytest.raises(ValueError, match="black-red-yellow"):
        render(np.zeros((2, 2)), "rainbow", 0, 1)


def test_auto_span_is_1st_to_99th_percentile():
    """auto_span equals numpy's percentiles of the finite pixels (numpy as reference)."""
    rng = np.random.default_rng(7)
    t = rng.normal(20, 3, (120, 160)).astype(np.float32)
    t[0, 0] = 500.0  # a hot dead pixel must not stretch the span
    t[1, 1] = np.nan
    finite = t[np.isfinite(t)]
    low, high = auto_span(t)
    assert (low, high) == pytest.approx(tuple(np.percentile(finite, [1, 99])))
    assert high < 30


def test_auto_span_refuses_all_nan():
    """No finite pixel, no span."""
    with pytest.raises(ValueError, match="no finite"):
        auto_span(np.full((2, 2), np.nan))


def test_centred_span_is_symmetric_about_the_reference():
    """The differential span is centred on the reference temperature."""
    low, high = centred_span(np.array([15.0, 22.0, 26.0]), 20.0)
    assert (low, high) == (14.0, 26.0)


# --- palette inversion ---------------------------------------------------------------------


@pytest.mark.parametrize("name", sorted(PALETTES))
def test_invert_palette_within_half_a_step(name):
    """Render a known field, invert it: every pixel within half a palette step."""
    low, high = 10.0, 40.0
    truth = ramp_field(8, 1000, low - 2, high + 2)
    recovered = invert_palette(render(truth, name, low, high), name, low, high)
    inside = (truth >= low) & (truth <= high)
    half_step = (high - low) / 255 / 2
    assert np.isfinite(recovered).all()
    assert np.abs(recovered - truth)[inside].max() <= half_step + 1e-5
    # Beyond the span the picture saturates: the inversion returns the span's end.
    assert recovered[~inside].min() == pytest.approx(low)
    assert recovered[~inside].max() == pytest.approx(high)


@pytest.mark.parametrize("name", sorted(PALETTES))
def test_invert_palette_turns_marks_and_text_into_nan(name):
    """Marks and anti-aliased text drawn on a picture come back as NaN, not as temperatures."""
    low, high = 10.0, 40.0
    truth = ramp_field(120, 256, low, high)
    clean = render(truth, name, low, high)
    image = Image.fromarray(clean)
    draw_marks(
        image,
        [
            {"kind": "rectangle", "points": [[20, 20], [90, 70]], "label": "A"},
            {"kind": "point", "points": [[150, 60]], "label": "B"},
            {"kind": "line", "points": [[30, 100], [230, 90]], "label": "C"},
        ],
        1.0,
        1.0,
    )
    ImageDraw.Draw(image).text((120, 5), "23.4 °C max", font=font(14), fill=MARK_COLOUR)
    drawn = np.asarray(image)
    changed = (drawn != clean).any(axis=2)
    assert changed.sum() > 500
    recovered = invert_palette(drawn, name, low, high)
    assert np.isnan(recovered[changed]).all()
    half_step = (high - low) / 255 / 2
    assert np.nanmax(np.abs(recovered - truth)) <= half_step + 1e-5
    assert np.isfinite(recovered).mean() > 0.8


def test_invert_palette_tolerates_jpeg_compression():
    """A JPEG (quality 92) of a smooth field inverts within 2 % of the span for most pixels."""
    low, high = 10.0, 40.0
    truth = ramp_field(64, 256, low, high)
    buffer = io.BytesIO()
    Image.fromarray(render(truth, "perceptual", low, high)).save(buffer, "JPEG", quality=92)
    data = buffer.getvalue()
    picture = np.asarray(Image.open(io.BytesIO(data)).convert("RGB"))
    recovered = invert_palette(picture, "perceptual", low, high)
    error = np.abs(recovered - truth)
    assert np.isfinite(recovered).mean() > 0.95
    assert np.nanpercentile(error, 95) < 0.02 * (high - low)


def test_invert_palette_no_data_colour_is_nan():
    """The no-data colour of our own pictures inverts to NaN."""
    t = ramp_field(8, 32)
    t[3:5, 10:12] = np.nan
    recovered = invert_palette(render(t, "grey white-warm", 10, 40), "grey white-warm", 10, 40)
    assert np.isnan(recovered[3:5, 10:12]).all()


def test_ramp_from_scale_bar_reads_vertical_and_horizontal_bars():
    """A tall bar reads bottom to top, a wide bar left to right, ignoring a frame."""
    ramp = PALETTES["black-red-yellow"]
    vertical = np.zeros((256, 10, 3), np.uint8)
    vertical[:, 1:9] = ramp[::-1][:, None, :]  # warm at the top, black frame columns
    np.testing.assert_array_equal(ramp_from_scale_bar(vertical, (0, 0, 10, 256)), ramp)
    horizontal = np.repeat(ramp[None], 6, axis=0)
    np.testing.assert_array_equal(ramp_from_scale_bar(horizontal, (0, 0, 256, 6)), ramp)


def test_ramp_from_scale_bar_refuses_bad_boxes():
    """Boxes outside the picture or too short are refused with a message."""
    picture = np.zeros((50, 50, 3), np.uint8)
    with pytest.raises(ValueError, match="does not lie inside"):
        ramp_from_scale_bar(picture, (40, 0, 60, 50))
    with pytest.raises(ValueError, match="too short"):
        ramp_from_scale_bar(picture, (0, 0, 3, 4))


# --- overlays ------------------------------------------------------------------------------
