"""Palettes, rendering, palette inversion, overlays and drawn pictures."""

import io

import numpy as np
import pytest
from PIL import Image, ImageDraw

from survey.thermal.render import (
    CONDENSATION_COLOUR,
    ISOTHERM_COLOUR,
    MARK_COLOUR,
    MARK_OUTLINE_COLOUR,
    MOULD_RISK_COLOUR,
    NO_DATA_COLOUR,
    PALETTES,
    apply_overlay,
    auto_span,
    centred_span,
    condensation_masks,
    draw_marks,
    encode_jpeg,
    encode_png,
    font,
    invert_palette,
    isotherm_mask,
    nice_ticks,
    preview,
    ramp_from_scale_bar,
    render,
    render_picture,
    srgb_to_lab,
    thumbnail,
)


def ramp_field(height=64, width=256, low=10.0, high=40.0):
    """A field rising left to right across the whole span, float32 °C."""
    row = np.linspace(low, high, width, dtype=np.float64)
    return np.repeat(row[None, :], height, axis=0).astype(np.float32)


# --- palettes ------------------------------------------------------------------------------


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
    data = encode_jpeg(render(truth, "perceptual", low, high))
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


def test_isotherm_mask_is_an_inclusive_band():
    """Pixels between the two temperatures inclusive; NaN never."""
    t = np.array([[19.9, 20.0, 25.0, 25.1, np.nan]])
    assert isotherm_mask(t, 20.0, 25.0).tolist() == [[False, True, True, False, False]]


def test_condensation_masks_against_reference_surface_rh():
    """Surface RH thresholds 80 % / 100 % (ISO 13788) on REFERENCES.md check values."""
    # psychrolib-computed surface RH for air 20 °C 50 %: 12 °C surface → 83.4 % (mould risk),
    # 15 °C → 68.6 % (none); for air 22 °C 55 % a 10 °C surface → 118 % (condensation).
    mould, wet = condensation_masks(np.array([[12.0, 15.0, np.nan]]), 20.0, 50.0)
    assert mould.tolist() == [[True, False, False]] and not wet.any()
    mould, wet = condensation_masks(np.array([10.0]), 22.0, 55.0)
    assert mould.tolist() == [True] and wet.tolist() == [True]


def test_apply_overlay_paints_only_the_mask():
    """Mask pixels take the colour; the rest keep the picture."""
    rgb = render(ramp_field(4, 4), "grey white-warm", 10, 40)
    painted = apply_overlay(rgb, np.eye(4, dtype=bool), ISOTHERM_COLOUR)
    assert painted[1, 1].tolist() == list(ISOTHERM_COLOUR)
    np.testing.assert_array_equal(painted[0, 1:], rgb[0, 1:])
    with pytest.raises(ValueError, match="does not match"):
        apply_overlay(rgb, np.zeros((3, 3), bool), ISOTHERM_COLOUR)


# --- drawn pictures ------------------------------------------------------------------------


def test_nice_ticks_are_round_and_inside():
    """Ticks are multiples of 1, 2, 2.5 or 5 × 10ⁿ inside the span (common practice)."""
    assert nice_ticks(18.3, 31.7) == [20.0, 22.5, 25.0, 27.5, 30.0]
    assert nice_ticks(-4.0, 4.0) == [-4.0, -2.0, 0.0, 2.0, 4.0]
    assert nice_ticks(0.115, 0.19) == [0.12, 0.14, 0.16, 0.18]


def test_render_picture_scales_before_drawing():
    """Thermogram pixels become sharp blocks and the label grows with the output size."""
    t = ramp_field(60, 80)
    marks = [{"kind": "rectangle", "points": [[10, 10], [30, 25]], "label": "A"}]
    sizes = []
    for width_px in (400, 1600):
        image = render_picture(t, "perceptual", 10, 40, marks=marks, width_px=width_px)
        assert image.mode == "RGB" and image.size[0] == width_px
        pixels = np.asarray(image)
        green = np.all(pixels == MARK_COLOUR, axis=2)
        ys, xs = np.nonzero(green[: image.size[1] // 6])  # the label sits above the mark
        sizes.append(ys.max() - ys.min())
    assert sizes[1] > 3 * sizes[0]
    # Nearest-neighbour upscaling: a thermogram pixel is a block of one colour.
    big = np.asarray(render_picture(t, "perceptual", 10, 40, scale_bar=False, width_px=800))
    assert (big[400:410, 700:710] == big[400, 700]).all()


def test_render_picture_marks_land_on_their_pixels():
    """A rectangle's outline is drawn around the pixels it covers, at any scale."""
    t = ramp_field(50, 100)
    image = render_picture(
        t,
        "grey white-warm",
        10,
        40,
        marks=[{"kind": "rectangle", "points": [[20, 10], [60, 40]]}],
        scale_bar=False,
        width_px=500,
    )
    pixels = np.asarray(image)
    green = np.all(pixels == MARK_COLOUR, axis=2)
    ys, xs = np.nonzero(green)
    # 5 output pixels per thermogram pixel: pixels 20..60 span x 100..305.
    assert abs(xs.min() - 100) <= 3 and abs(xs.max() - 305) <= 3
    assert abs(ys.min() - 50) <= 3 and abs(ys.max() - 205) <= 3


def test_render_picture_scale_bar_in_fahrenheit():
    """The scale bar's ticks follow the display unit; the picture keeps its width."""
    t = ramp_field(60, 80, 0.0, 100.0)
    celsius = render_picture(t, "black-red-yellow", 0, 100, unit="C", width_px=600)
    fahrenheit = render_picture(t, "black-red-yellow", 0, 100, unit="F", width_px=600)
    assert celsius.size == fahrenheit.size
    strip = slice(600 - 84, 600)
    assert not np.array_equal(np.asarray(celsius)[:, strip], np.asarray(fahrenheit)[:, strip])
    with pytest.raises(ValueError, match="unit"):
        render_picture(t, unit="K")


def test_render_picture_uses_auto_span_and_draws_overlays():
    """Without a span the picture uses auto_span; overlay masks are painted."""
    t = ramp_field(40, 60)
    mask = isotherm_mask(t, 20.0, 22.0)
    image = render_picture(t, overlays=[(mask, ISOTHERM_COLOUR)], scale_bar=False, width_px=60)
    assert np.all(np.asarray(image)[mask] == ISOTHERM_COLOUR)


def test_preview_is_png_and_thumbnail_is_jpeg():
    """preview returns PNG bytes at the asked width, thumbnail JPEG bytes fitted in the box."""
    t = ramp_field(120, 160)
    data = preview(
        t, "perceptual", marks=[{"kind": "point", "points": [[5, 5]], "label": "A"}], width_px=700
    )
    image = Image.open(io.BytesIO(data))
    assert image.format == "PNG" and image.size[0] == 700
    small = Image.open(io.BytesIO(thumbnail(t, "perceptual", size_px=100)))
    assert small.format == "JPEG" and small.size == (100, 75)


def test_encoders_accept_arrays_and_images():
    """encode_png round-trips pixels exactly; encode_jpeg gives a JPEG."""
    rgb = render(ramp_field(10, 10), "perceptual", 10, 40)
    decoded = np.asarray(Image.open(io.BytesIO(encode_png(Image.fromarray(rgb)))))
    np.testing.assert_array_equal(decoded, rgb)
    assert encode_jpeg(rgb)[:3] == b"\xff\xd8\xff"
