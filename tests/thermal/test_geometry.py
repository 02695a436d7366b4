"""Pixel footprint and area on the target."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from survey.thermal.geometry import instantaneous_fov_mrad, pixel_area_m2, pixel_footprint_m
from tests.hypothesis_profiles import examples


def test_instantaneous_fov_of_a_24_degree_320_pixel_camera():
    """24° over 320 pixels is 1.309 mrad per pixel."""
    # Source: docs/references.md § Geometry [computed]: IFOV = HFOV/pixels = 1.309 mrad.
    assert instantaneous_fov_mrad(24.0, 320) == pytest.approx(1.309, abs=0.0005)


def test_pixel_footprint_at_5_m():
    """1.309 mrad at 5 m covers 6.54 mm."""
    # Source: docs/references.md § Geometry [computed]: footprint ≈ distance × IFOV,
    # 6.54 mm at 5 m.
    assert pixel_footprint_m(5.0, 1.309) == pytest.approx(0.00654, abs=0.000005)


def test_pixel_area_is_count_times_footprint_squared():
    """100 pixels of 6.545 mm side cover 100 × footprint² face-on."""
    # Source: docs/references.md § Geometry: area = pixels × footprint² / cos θ; by hand
    # 100 × 0.0065450² m².
    assert pixel_area_m2(100, 5.0, 1.309) == pytest.approx(100 * 0.006545**2, rel=1e-9)


@pytest.mark.parametrize(("angle_deg", "factor"), [(0.0, 1.0), (60.0, 2.0), (45.0, math.sqrt(2))])
def test_pixel_area_grows_on_an_oblique_surface(angle_deg, factor):
    """An oblique view enlarges the true area by 1/cos θ."""
    # Source: docs/references.md § Geometry: area = pixels × footprint² / cos θ;
    # cos 60° = 1/2, cos 45° = 1/√2.
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
