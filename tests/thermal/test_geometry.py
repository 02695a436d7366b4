"""Pixel footprint and area on the target."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from survey.thermal.geometry import (
    ifov_from_fov_mrad,
    instantaneous_fov_mrad,
    masked_area_m2,
    pixel_area_m2,
    pixel_footprint_from_fov_m,
    pixel_footprint_m,
)
from survey.thermal.marks import mark_mask
from tests.hypothesis_profiles import examples


def test_instantaneous_fov_of_a_24_degree_320_pixel_camera():
    """24° over 320 pixels is 1.309 mrad per pixel."""
    # Source: docs/references.md § Geometry and wet areas: IFOV = HFOV/pixels = 1.309 mrad.
    assert instantaneous_fov_mrad(24.0, 320) == pytest.approx(1.309, abs=0.0005)


def test_pixel_footprint_at_5_m():
    """1.309 mrad at 5 m covers 6.54 mm."""
    # Source: docs/references.md § Geometry and wet areas: distance × IFOV → 6.54 mm at 5 m.
    assert pixel_footprint_m(5.0, 1.309) == pytest.approx(0.00654, abs=0.000005)


def test_pixel_area_is_count_times_footprint_squared():
    """100 pixels of 6.545 mm side cover 100 × footprint² face-on."""
    # Source: area = pixels × footprint² / cos θ (practice); by hand 100 × 0.0065450² m².
    assert pixel_area_m2(100, 5.0, 1.309) == pytest.approx(100 * 0.006545**2, rel=1e-9)


@pytest.mark.parametrize(("angle_deg", "factor"), [(0.0, 1.0), (60.0, 2.0), (45.0, math.sqrt(2))])
def test_pixel_area_grows_on_an_oblique_surface(angle_deg, factor):
    """An oblique view enlarges the true area by 1/cos θ."""
    # Source: area = pixels × footprint² / cos θ (practice); cos 60° = 1/2, cos 45° = 1/√2.
    face_on = pixel_area_m2(50, 3.0, 2.0)
    assert pixel_area_m2(50, 3.0, 2.0, view_angle_deg=angle_deg) == pytest.approx(
        face_on * factor, rel=1e-12
    )


@pytest.mark.parametrize(
    ("call", "parameter"),
    [
        (lambda: pixel_footprint_m(0.0, 1.3), "distance_m"),
        (lambda: pixel_footprint_m(5.0, -1.0), "ifov_mrad"),
        (lambda: pixel_footprint_m(float("nan"), 1.0), "distance_m"),
        (lambda: pixel_area_m2(-1, 5.0, 1.3), "pixel_count"),
        (lambda: pixel_area_m2(10, 5.0, 1.3, view_angle_deg=90.0), "view_angle_deg"),
        (lambda: instantaneous_fov_mrad(0.0, 320), "field_of_view_deg"),
        (lambda: instantaneous_fov_mrad(24.0, 0), "pixels"),
    ],
)
def test_geometry_invalid_input_raises_naming_the_parameter(call, parameter):
    """Invalid input raises ValueError whose message names the parameter."""
    # Source: DESIGN.md contract (ValueError naming the parameter).
    with pytest.raises(ValueError, match=parameter):
        call()


@settings(max_examples=examples(50), deadline=None)
@given(
    distances=st.lists(st.floats(min_value=0.1, max_value=100.0), min_size=1, max_size=5),
    ifov_mrad=st.floats(min_value=0.1, max_value=10.0),
)
def test_pixel_footprint_is_proportional_to_distance_and_broadcasts(distances, ifov_mrad):
    """The footprint of an array of distances is distance × IFOV element by element."""
    # Source: small-angle geometry (property, no number).
    result = pixel_footprint_m(np.array(distances), ifov_mrad)
    assert result.shape == (len(distances),)
    assert np.allclose(result, np.array(distances) * ifov_mrad / 1000.0, rtol=1e-12)


# --- pinhole lens -----------------------------------------------------------------------------


@pytest.mark.parametrize("fov_deg", [24.0, 45.0, 90.0])
@pytest.mark.parametrize(("distance_m", "pixels"), [(5.0, 320), (12.0, 640)])
def test_pixel_footprint_from_fov_is_the_pinhole_width_over_n(fov_deg, distance_m, pixels):
    """Each pixel covers 2·d·tan(FOV/2)/N of a face-on plane."""
    # Source: pinhole (central projection) camera, Hartley & Zisserman, Multiple View
    # Geometry, 2nd ed., ch. 6 (from memory): a plane at distance d spans 2·d·tan(FOV/2).
    expected = 2.0 * distance_m * math.tan(math.radians(fov_deg) / 2.0) / pixels
    assert pixel_footprint_from_fov_m(distance_m, fov_deg, pixels) == pytest.approx(
        expected, rel=1e-12
    )
    assert pixel_footprint_m(distance_m, ifov_from_fov_mrad(fov_deg, pixels)) == pytest.approx(
        expected, rel=1e-12
    )


@pytest.mark.parametrize("fov_deg", [24.0, 45.0, 90.0])
def test_pixel_footprint_from_fov_matches_rays_through_the_pixel_edges(fov_deg):
    """Rays through evenly spaced detector edges meet a face-on plane evenly, 2·d·tan/N apart."""
    # Source: ray–plane intersection computed here with numpy: the detector (focal length
    # 1) has N + 1 pixel edges evenly spaced over 2·tan(FOV/2); each ray from the pinhole
    # is scaled until it meets the plane z = d.
    distance_m, pixels = 7.0, 160
    half_width = math.tan(math.radians(fov_deg) / 2.0)
    edges = np.linspace(-half_width, half_width, pixels + 1)
    rays = np.stack([edges, np.zeros_like(edges), np.ones_like(edges)], axis=1)
    rays /= np.linalg.norm(rays, axis=1, keepdims=True)
    hits = rays * (distance_m / rays[:, 2:3])
    sides = np.diff(hits[:, 0])
    assert np.allclose(sides, sides.mean(), rtol=1e-9)
    assert pixel_footprint_from_fov_m(distance_m, fov_deg, pixels) == pytest.approx(
        sides.mean(), rel=1e-12
    )


@pytest.mark.parametrize(
    ("fov_deg", "understatement"),
    [
        # Source: (FOV/2)/tan(FOV/2) − 1 by hand: −1.5 % at 24°, −5.2 % at 45°, −21.5 % at
        # 90°, the "−5 % at 45°, −21 % at 90°".
        (24.0, -0.015),
        (45.0, -0.052),
        (90.0, -0.215),
    ],
)
def test_fov_over_n_understates_the_pinhole_footprint(fov_deg, understatement):
    """The data-sheet FOV/N is short of the pinhole footprint by the stated fraction."""
    angular = pixel_footprint_m(5.0, instantaneous_fov_mrad(fov_deg, 320))
    pinhole = pixel_footprint_from_fov_m(5.0, fov_deg, 320)
    assert angular / pinhole - 1.0 == pytest.approx(understatement, abs=0.001)


def test_ifov_from_fov_of_a_24_degree_320_pixel_camera():
    """24° over 320 pixels is 1.3285 mrad per metre on a face-on plane."""
    # Source: 2·tan(12°)/320 × 1000 = 1.32848 mrad by hand (tan 12° = 0.212557).
    assert ifov_from_fov_mrad(24.0, 320) == pytest.approx(1.32848, abs=1e-5)


# --- wet area -----------------------------------------------------------------------------------

# A 5 × 6 thermogram whose mark is the rectangle of rows 1–3, columns 1–4 (12 pixels), two
# of them without data (NaN), drawn here with X:
#     row 1:  c c c X
#     row 2:  c X c c
#     row 3:  c c c c
# Counted by hand: 10 pixels; 18 pixel sides between a counted pixel and one that is not
# (outside the mark or NaN), going pixel by pixel: 2+2+2 / 2+1+2 / 2+2+1+2.
HAND_MASK_COUNT, HAND_MASK_EDGES = 10, 18


def hand_counted_thermogram():
    temperatures = np.full((5, 6), 12.0)
    temperatures[1, 4] = np.nan
    temperatures[2, 2] = np.nan
    temperatures[4, 5] = np.nan  # outside the mark: ignored
    mask = mark_mask((5, 6), "rectangle", [(1, 1), (4, 3)])
    return temperatures, mask


def test_masked_area_counts_valid_pixels_of_a_hand_counted_mask_once():
    """10 valid pixels at 10 m and 2 mrad cover 10 × (0.02 m)² = 0.004 m²."""
    # Source: the hand count above; footprint 10 m × 2 mrad = 0.02 m (small angle).
    temperatures, mask = hand_counted_thermogram()
    assert mask.sum() == 12
    result = masked_area_m2(temperatures, 10.0, 2.0, mask=mask)
    assert result.pixel_count == HAND_MASK_COUNT
    assert result.missing_count == 2
    assert result.edge_count == HAND_MASK_EDGES
    assert result.area_m2 == pytest.approx(10 * 0.02**2, rel=1e-12)


def test_masked_area_interval_follows_the_stated_edge_and_distance_model():
    """± half a pixel along 18 sides and 10 ± 0.5 m: 1 × (0.019 m)² to 19 × (0.021 m)²."""
    # Source: the stated model by hand: low (10 − 9) px at 9.5 m, high (10 + 9) px at
    # 10.5 m, footprint d × 2 mrad.
    temperatures, mask = hand_counted_thermogram()
    result = masked_area_m2(temperatures, 10.0, 2.0, mask=mask, distance_u_m=0.5)
    assert result.low_m2 == pytest.approx(1 * 0.019**2, rel=1e-12)
    assert result.high_m2 == pytest.approx(19 * 0.021**2, rel=1e-12)
    assert result.u_m2 == pytest.approx(19 * 0.021**2 - 0.004, rel=1e-12)


def test_masked_area_of_50_valid_pixels_is_not_zero():
    """A 100-pixel mark with 50 NaN pixels covers 50 pixels, not 0 (no double subtraction)."""
    # Source: hand count: the mark's 100 pixels minus 50 without data, subtracted once.
    temperatures = np.full((12, 12), 8.0)
    temperatures[1:11, 1:6] = np.nan  # the left half of the mark has no data
    mask = np.zeros((12, 12), dtype=bool)
    mask[1:11, 1:11] = True
    result = masked_area_m2(temperatures, 20.0, 1.5, mask=mask)
    assert result.pixel_count == 50
    assert result.area_m2 == pytest.approx(50 * (20.0 * 0.0015) ** 2, rel=1e-12)


def test_masked_area_reads_a_boolean_mask_and_the_oblique_factor():
    """A boolean 3 × 4 block viewed at 60° covers twice its face-on area."""
    # Source: 12 pixels × footprint² / cos 60° (cos 60° = 1/2), area / cos θ (practice);
    # edges of a 3 × 4 block: 2 × (3 + 4) = 14 sides.
    mask = np.zeros((6, 7), dtype=bool)
    mask[1:4, 2:6] = True
    face_on = masked_area_m2(mask, 4.0, 1.0)
    oblique = masked_area_m2(mask, 4.0, 1.0, view_angle_deg=60.0)
    assert face_on.pixel_count == 12 and face_on.edge_count == 14
    assert face_on.area_m2 == pytest.approx(12 * 0.004**2, rel=1e-12)
    assert oblique.area_m2 == pytest.approx(2.0 * face_on.area_m2, rel=1e-12)


def test_masked_area_with_the_pinhole_ifov_of_a_wide_lens():
    """Through ifov_from_fov_mrad the area of a 90° lens is the pinhole area."""
    # Source: 2·d·tan(45°)/N = 2·d/N by hand (tan 45° = 1): 4 m, 320 px → 0.025 m.
    mask = np.ones((2, 2), dtype=bool)
    result = masked_area_m2(mask, 4.0, ifov_from_fov_mrad(90.0, 320))
    assert result.area_m2 == pytest.approx(4 * 0.025**2, rel=1e-12)


@pytest.mark.parametrize(
    ("call", "parameter"),
    [
        (lambda: masked_area_m2(np.ones(4), 5.0, 1.0), "mask_or_temperatures"),
        (lambda: masked_area_m2(np.ones((2, 2)), 5.0, 1.0, mask=np.ones((3, 3), bool)), "mask"),
        (lambda: masked_area_m2(np.ones((2, 2)), 0.0, 1.0), "distance_m"),
        (lambda: masked_area_m2(np.ones((2, 2)), 5.0, -1.0), "ifov_mrad"),
        (lambda: masked_area_m2(np.ones((2, 2)), 5.0, 1.0, distance_u_m=5.0), "distance_u_m"),
        (lambda: masked_area_m2(np.ones((2, 2)), 5.0, 1.0, edge_u_px=2.0), "edge_u_px"),
        (lambda: masked_area_m2(np.ones((2, 2)), 5.0, 1.0, view_angle_deg=90.0), "view_angle"),
        (lambda: ifov_from_fov_mrad(180.0, 320), "fov_deg"),
        (lambda: ifov_from_fov_mrad(24.0, 0), "pixels"),
        (lambda: pixel_footprint_from_fov_m(-1.0, 24.0, 320), "distance_m"),
    ],
)
def test_pinhole_and_area_invalid_input_raises_naming_the_parameter(call, parameter):
    """Invalid input raises ValueError whose message names the parameter."""
    # Source: DESIGN.md contract (ValueError naming the parameter).
    with pytest.raises(ValueError, match=parameter):
        call()
