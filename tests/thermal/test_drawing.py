"""Drawing: overlays, marks, scale bars, ticks and encoding of pictures."""

import io

import numpy as np
import pytest
from PIL import Image

from survey.thermal.drawing import (
    ISOTHERM_COLOUR,
    MARK_COLOUR,
    MAX_PICTURE_SIDE_PX,
    MIN_SCALE_BAR_PX,
    apply_overlay,
    condensation_masks,
    encode_png,
    isotherm_mask,
    nice_ticks,
    render_picture,
)
from survey.thermal.palettes import render
from tests.thermal.thermal_fields import ramp_field


def test_isotherm_mask_is_an_inclusive_band():
    """Pixels between the two temperatures inclusive; NaN never."""
    t = np.array([[19.9, 20.0, 25.0, 25.1, np.nan]])
    assert isotherm_mask(t, 20.0, 25.0).tolist() == [[False, True, True, False, False]]


def test_condensation_masks_against_reference_surface_rh():
    """Surface RH thresholds 80 % / 100 % (ISO 13788) on the psychrometric check values."""
    # Source: docs/references.md § Psychrometrics, psychrolib-computed surface RH for air
    # 20 °C 50 %: 12 °C surface → 83.4 % (mould risk), 15 °C → 68.6 % (none); for air
    # 22 °C 55 % a 10 °C surface → 118 % (condensation).
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


def test_encoders_accept_arrays_and_images():
    """encode_png round-trips pixels exactly, from an array or a picture."""
    rgb = render(ramp_field(10, 10), "perceptual", 10, 40)
    decoded = np.asarray(Image.open(io.BytesIO(encode_png(Image.fromarray(rgb)))))
    np.testing.assert_array_equal(decoded, rgb)
    assert encode_png(rgb) == encode_png(Image.fromarray(rgb))


def test_condensation_masks_leave_a_pixel_above_the_formula_range_out():
    """A 150 °C flue pixel in a wall picture is in neither mask instead of refusing the image."""
    # Expected masks from the definition (ISO 13788: mould at surface RH >= 80 %,
    # condensation at >= 100 %); 20 °C / 50 % air makes a 5 °C surface condense
    # (docs/references.md § Psychrometrics).
    mould, wet = condensation_masks(np.array([150.0, 20.0, 5.0]), 20.0, 50.0)
    assert mould.tolist() == [False, False, True]
    assert wet.tolist() == [False, False, True]


# --- extreme shapes: every drawn picture is bounded in both directions ---------------------


def test_render_picture_fits_a_tall_narrow_thermogram_under_its_height_limit():
    """A 2-pixel-wide strip would be drawn a hundred thousand pixels tall at full width:
    it is drawn narrower instead, in white space, within the size asked for."""
    tall = np.linspace(10.0, 30.0, 400, dtype=np.float32)[:, None].repeat(2, axis=1)
    marks = [{"kind": "line", "points": [[0, 0], [1, 399]], "label": "A"}]
    image = render_picture(tall, marks=marks, width_px=680, max_height_px=880)
    assert image.width == 680 and image.height <= 880
    # The strip is drawn in the middle of the picture's area: its top row is its coldest,
    # its bottom row its warmest, and both are drawn.
    middle = (680 - 95) // 2  # 95 px: the scale bar's share, 14 % of 680
    assert image.getpixel((middle, 0)) != image.getpixel((middle, image.height - 1))
    assert image.getpixel((0, image.height // 2)) == (255, 255, 255)


def test_render_picture_bounds_the_height_by_default():
    """Without a height limit the picture still stays within MAX_PICTURE_SIDE_PX."""
    tall = np.full((400, 2), 20.0, dtype=np.float32)
    image = render_picture(tall, width_px=680)
    assert image.width <= 680 and image.height <= MAX_PICTURE_SIDE_PX


def test_render_picture_draws_a_scale_bar_beside_a_wide_flat_thermogram():
    """A 4000 × 2 strip is two pixels tall at print width: the scale bar keeps a readable
    height (the picture sits at the top of a white box as tall as the bar)."""
    wide = np.linspace(10.0, 30.0, 4000, dtype=np.float32)[None, :].repeat(2, axis=0)
    marks = [{"kind": "point", "points": [[2000, 1]], "label": "A"}]
    image = render_picture(wide, marks=marks, width_px=680, max_height_px=880)
    assert image.width == 680 and MIN_SCALE_BAR_PX <= image.height <= 880
    with pytest.raises(ValueError, match="at most"):
        render_picture(wide, width_px=MAX_PICTURE_SIDE_PX + 1)


def test_draw_plan_marks_positions_and_wet_areas_on_a_copy():
    """A white disc with a dark rim at each thermogram's place, a blue ring around each wet
    area, drawn on a copy shrunk to the asked width; the original is untouched."""
    from PIL import Image

    from survey.thermal.drawing import (
        PLAN_MARKER_RIM,
        PLAN_WET_COLOUR,
        draw_plan,
    )

    plan = Image.new("RGB", (2000, 1000), (200, 200, 200))
    out = draw_plan(plan, [(0.25, 0.5, "1")], [(0.75, 0.5, "W1 5.6 ± 0.2 m²")], max_width_px=1000)
    assert out.size == (1000, 500) and plan.getpixel((500, 500)) == (200, 200, 200)
    radius, rim = max(6, round(1000 / 70)), max(2, round(1000 / 500))
    assert out.getpixel((250 - radius + rim // 2, 250)) == PLAN_MARKER_RIM
    ring = 3 * radius  # the wet ring's radius: three markers
    colours = {out.getpixel((750 - ring + dx, 250)) for dx in range(0, 3 * rim)}
    assert PLAN_WET_COLOUR in colours


def test_draw_plan_refuses_a_zero_width():
    from PIL import Image

    from survey.thermal.drawing import draw_plan

    with pytest.raises(ValueError, match="max_width_px"):
        draw_plan(Image.new("RGB", (10, 10)), [], [], max_width_px=0)


def test_draw_marks_keeps_a_mark_at_the_image_edge_whole():
    """A rectangle around the whole thermogram shows its core line on all four sides."""
    from survey.thermal.drawing import draw_marks

    image = Image.new("RGB", (200, 150), (128, 128, 128))
    draw_marks(image, [{"kind": "rectangle", "points": [[0, 0], [39, 29]]}], 5.0, 5.0)
    pixels = np.asarray(image).astype(int)
    green = np.all(pixels == MARK_COLOUR, axis=2)
    # Across each side at its middle, from the image edge inwards: the mark's outer dark
    # ring is inside the picture, then its core.
    for line in (pixels[75], pixels[75, ::-1], pixels[:, 100], pixels[::-1, 100]):
        core = np.nonzero(np.all(line == MARK_COLOUR, axis=1))[0]
        assert core.size and core.min() < 10
        assert line[: core.min()].mean(axis=1).min() < 40, "the outer ring is drawn whole"
    assert green[:, :8].sum() > 100 and green[:, -8:].sum() > 100


@pytest.mark.parametrize("kind", ["rectangle", "ellipse", "line"])
def test_draw_marks_rings_the_core_with_dark_and_light_on_both_sides(kind):
    """Across a mark's edge: dark, light, core, light, dark. The lightness contrast (not the
    hue) is what a red-green colour-blind reader sees (common practice, no source)."""
    from survey.thermal.drawing import draw_marks

    image = Image.new("RGB", (200, 200), (128, 128, 128))
    points = [[10, 10], [30, 30]] if kind != "line" else [[20, 5], [20, 35]]
    draw_marks(image, [{"kind": kind, "points": points}], 5.0, 5.0)
    row = np.asarray(image)[102].astype(int)  # across the left edge (or the line) mid-height
    lightness = row.mean(axis=1)
    core = np.nonzero(np.all(row == MARK_COLOUR, axis=1))[0]
    assert core.size
    left, right = core.min(), core.max()
    assert lightness[left - 3 : left].max() > 240 and lightness[right + 1 : right + 4].max() > 240
    assert lightness[max(left - 6, 0) : left].min() < 40
    assert lightness[right + 1 : right + 7].min() < 40


def test_render_picture_keeps_a_gap_between_a_tick_and_its_minus_sign():
    """Each scale tick ends, then blank paper at least as long as the tick, then the label's
    "−": the minus never continues the tick line (common practice, no source)."""
    t = np.linspace(-12.0, 8.0, 60 * 80, dtype=np.float32).reshape(60, 80)
    image = render_picture(t, "grey white-warm", -12.0, 8.0, width_px=669)
    strip = np.asarray(image)[:, 669 - 94 :].mean(axis=2)
    dark = strip < 120
    bar_right = np.nonzero(dark[image.size[1] // 2])[0].max()  # the bar's right frame
    checked = 0
    for row in np.nonzero(dark[:, bar_right + 2])[0]:
        runs = dark[row, bar_right + 1 :]
        tick = np.argmin(runs)  # the first blank pixel after the tick
        gap = np.argmax(runs[tick:]) if runs[tick:].any() else 99
        # At least as long as the tick: the "−" cannot read as the tick drawn on.
        assert gap >= tick, f"row {row}: the label starts {gap} px after a {tick} px tick"
        checked += 1
    assert checked >= 3
