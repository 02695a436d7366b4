"""Temperature units: °C (what is stored and computed), °F and K, and rounding for display.

A temperature and a temperature difference convert differently: 20 °C is 68 °F, but a
20 K difference is 36 °F. Every function takes a float, a numpy array or None (None for "not
recorded" comes back as None) and the unit as ``"C"``, ``"F"`` or ``"K"``. The JavaScript
twin of this module is static/js/workspace/units.js.
"""

import math

from survey.thermal.constants import ZERO_CELSIUS_K

CELSIUS, FAHRENHEIT, KELVIN = "C", "F", "K"
UNITS = (CELSIUS, FAHRENHEIT, KELVIN)

# A kelvin is 9/5 of a degree Fahrenheit (definition of the Fahrenheit scale); written as
# `* 9 / 5` and `* 5 / 9` everywhere so Python and JavaScript round alike.
#: 0 °C in °F (definition of the Fahrenheit scale).
ZERO_CELSIUS_F = 32.0

_SYMBOLS = {CELSIUS: "°C", FAHRENHEIT: "°F", KELVIN: "K"}
_DIFFERENCE_SYMBOLS = {CELSIUS: "K", FAHRENHEIT: "°F", KELVIN: "K"}


def _check(unit: str) -> str:
    if unit not in UNITS:
        raise ValueError(f"unit must be one of C, F or K, not {unit!r}.")
    return unit


def from_celsius(value_c, unit: str):
    """A temperature in °C expressed in `unit`.

    Examples
    --------
    >>> from_celsius(20.0, "F"), from_celsius(-40.0, "F"), from_celsius(0.0, "K")
    (68.0, -40.0, 273.15)
    """
    unit = _check(unit)
    if value_c is None:
        return None
    if unit == FAHRENHEIT:
        return value_c * 9 / 5 + ZERO_CELSIUS_F
    if unit == KELVIN:
        return value_c + ZERO_CELSIUS_K
    return value_c


def to_celsius(value, unit: str):
    """A temperature given in `unit`, in °C.

    Examples
    --------
    >>> round(to_celsius(68.0, "F"), 10), round(to_celsius(300.0, "K"), 2)
    (20.0, 26.85)
    """
    unit = _check(unit)
    if value is None:
        return None
    if unit == FAHRENHEIT:
        return (value - ZERO_CELSIUS_F) * 5 / 9
    if unit == KELVIN:
        return value - ZERO_CELSIUS_K
    return value


def difference_from_kelvin(value_k, unit: str):
    """A temperature difference in K expressed in `unit` (no offset).

    Examples
    --------
    >>> difference_from_kelvin(20.0, "F"), difference_from_kelvin(20.0, "C")
    (36.0, 20.0)
    """
    unit = _check(unit)
    if value_k is None:
        return None
    return value_k * 9 / 5 if unit == FAHRENHEIT else value_k


def difference_to_kelvin(value, unit: str):
    """A temperature difference given in `unit`, in K (no offset).

    Examples
    --------
    >>> difference_to_kelvin(36.0, "F")
    20.0
    """
    unit = _check(unit)
    if value is None:
        return None
    return value * 5 / 9 if unit == FAHRENHEIT else value


def symbol(unit: str) -> str:
    """How a temperature in `unit` is written: °C, °F or K."""
    return _SYMBOLS[_check(unit)]


def difference_symbol(unit: str) -> str:
    """How a temperature difference is written when temperatures are shown in `unit`."""
    return _DIFFERENCE_SYMBOLS[_check(unit)]


def rounded(value, digits: int = 2) -> float | None:
    """`value` as a float rounded to `digits`, or None when missing or not finite.

    The one rounding helper for numbers that are stored, shown or sent as JSON.

    Examples
    --------
    >>> rounded(21.456), rounded(float("nan")), rounded(None), rounded(0.1234, 3)
    (21.46, None, None, 0.123)
    """
    if value is None:
        return None
    value = float(value)
    return round(value, digits) if math.isfinite(value) else None
