"""Temperature units: temperatures convert with an offset, differences without."""

import numpy as np
import pytest

from survey.thermal import units


@pytest.mark.parametrize(
    ("celsius", "fahrenheit", "kelvin"),
    [
        # Source: definitions of the scales (0 °C = 32 °F = 273.15 K; 100 °C = 212 °F;
        # −40 is the same on both the Celsius and the Fahrenheit scale).
        (0.0, 32.0, 273.15),
        (100.0, 212.0, 373.15),
        (-40.0, -40.0, 233.15),
    ],
)
def test_from_celsius_fixed_points(celsius, fahrenheit, kelvin):
    """The fixed points of the scales convert both ways."""
    assert units.from_celsius(celsius, "F") == pytest.approx(fahrenheit, abs=1e-12)
    assert units.from_celsius(celsius, "K") == pytest.approx(kelvin, abs=1e-12)
    assert units.to_celsius(fahrenheit, "F") == pytest.approx(celsius, abs=1e-12)
    assert units.to_celsius(kelvin, "K") == pytest.approx(celsius, abs=1e-12)


def test_difference_from_kelvin_has_no_offset():
    """A 10 K difference is 18 °F (9/5 by definition), not 50 °F."""
    assert units.difference_from_kelvin(10.0, "F") == pytest.approx(18.0)
    assert units.difference_to_kelvin(18.0, "F") == pytest.approx(10.0)
    assert units.difference_from_kelvin(10.0, "C") == 10.0


def test_from_celsius_broadcasts_and_keeps_none():
    """Arrays convert element by element; None (not recorded) stays None."""
    np.testing.assert_allclose(units.from_celsius(np.array([0.0, 100.0]), "F"), [32.0, 212.0])
    assert units.from_celsius(None, "F") is None
    assert units.to_celsius(None, "K") is None


def test_from_celsius_refuses_an_unknown_unit():
    """A unit other than C, F or K raises ValueError naming the unit."""
    with pytest.raises(ValueError, match="unit"):
        units.from_celsius(1.0, "R")


def test_symbol_and_difference_symbol():
    """A difference is written in K next to °C, in °F next to °F."""
    assert [units.symbol(u) for u in "CFK"] == ["°C", "°F", "K"]
    assert [units.difference_symbol(u) for u in "CFK"] == ["K", "°F", "K"]


def test_rounded_drops_what_is_not_a_number():
    """NaN, infinities and None become None; numbers come back as rounded Python floats."""
    assert units.rounded(float("inf")) is None
    assert units.rounded(np.float32(1.23456), 3) == 1.235
    assert type(units.rounded(np.float64(2.0))) is float
