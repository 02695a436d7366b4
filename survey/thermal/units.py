"""Temperature units: °C (what is stored and computed), °F and K, and rounding for display.

A temperature and a temperature difference convert differently: 20 °C is 68 °F, but a
20 K difference is 36 °F. Every function takes a float, a numpy array or None (None for "not
recorded" comes back as None) and the unit as ``"C"``, ``"F"`` or ``"K"``. The JavaScript
twin of this module is static/js/workspace/units.js.
"""

import math
import re

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


def difference_label(unit: str) -> str:
    """How a temperature difference is labelled on pages and reports: K, or Δ°F.

    A rise shown in °F is a difference of Fahrenheit degrees, not a temperature: the Δ
    keeps a reader from taking "21.6 Δ°F" for a reading of 21.6 °F.

    Examples
    --------
    >>> difference_label("C"), difference_label("F")
    ('K', 'Δ°F')
    """
    return "Δ°F" if _check(unit) == FAHRENHEIT else "K"


# --- wind speed and distance ------------------------------------------------------------------

METRES_PER_SECOND, MILES_PER_HOUR = "m_s", "mph"
METRES, FEET = "m", "ft"
#: One international mile per hour in m/s: 1609.344 m per 3600 s, exact by definition
#: (the international yard and pound agreement of 1959).
MPH_IN_M_S = 0.44704
#: One international foot in metres, exact by the same definition.
FOOT_IN_M = 0.3048

_SPEED_SYMBOLS = {METRES_PER_SECOND: "m/s", MILES_PER_HOUR: "mph"}
_LENGTH_SYMBOLS = {METRES: "m", FEET: "ft"}


def _check_speed(unit: str) -> str:
    if unit not in _SPEED_SYMBOLS:
        raise ValueError(f"speed unit must be m_s or mph, not {unit!r}.")
    return unit


def _check_length(unit: str) -> str:
    if unit not in _LENGTH_SYMBOLS:
        raise ValueError(f"length unit must be m or ft, not {unit!r}.")
    return unit


def speed_from_m_s(value_m_s, unit: str):
    """A speed in m/s expressed in `unit` (``"m_s"`` or ``"mph"``).

    Examples
    --------
    >>> speed_from_m_s(0.44704, "mph"), speed_from_m_s(5.0, "m_s")
    (1.0, 5.0)
    """
    unit = _check_speed(unit)
    if value_m_s is None:
        return None
    return value_m_s / MPH_IN_M_S if unit == MILES_PER_HOUR else value_m_s


def speed_to_m_s(value, unit: str):
    """A speed given in `unit`, in m/s.

    Examples
    --------
    >>> round(speed_to_m_s(10.0, "mph"), 5)
    4.4704
    """
    unit = _check_speed(unit)
    if value is None:
        return None
    return value * MPH_IN_M_S if unit == MILES_PER_HOUR else value


def length_from_m(value_m, unit: str):
    """A length in metres expressed in `unit` (``"m"`` or ``"ft"``).

    Examples
    --------
    >>> length_from_m(0.3048, "ft"), length_from_m(3.0, "m")
    (1.0, 3.0)
    """
    unit = _check_length(unit)
    if value_m is None:
        return None
    return value_m / FOOT_IN_M if unit == FEET else value_m


def length_to_m(value, unit: str):
    """A length given in `unit`, in metres.

    Examples
    --------
    >>> round(length_to_m(10.0, "ft"), 4)
    3.048
    """
    unit = _check_length(unit)
    if value is None:
        return None
    return value * FOOT_IN_M if unit == FEET else value


def speed_symbol(unit: str) -> str:
    return _SPEED_SYMBOLS[_check_speed(unit)]


def length_symbol(unit: str) -> str:
    return _LENGTH_SYMBOLS[_check_length(unit)]


# --- numbers inside sentences -------------------------------------------------------------------

# "21.5 °C" (a temperature) and "12.3 K", "±1.2 K", "+0.4 K", "1–3 K" (differences), as the
# judgement rules and criteria tables write them.
_NUMBER = r"[-−]?\d+(?:\.\d+)?"
_TEMPERATURE_TEXT = re.compile(rf"(?<![\w.])({_NUMBER})\s?°C\b")
_DIFFERENCE_TEXT = re.compile(rf"(?<![\w.])([±+]?)({_NUMBER})(?:([–-])(\d+(?:\.\d+)?))?\s?K\b")


def _decimals(text: str) -> int:
    return len(text.partition(".")[2])


def _number(text: str) -> float:
    return float(text.replace("−", "-"))


def text_in_unit(text: str, unit: str) -> str:
    """A sentence with its °C temperatures and K differences rewritten in `unit`.

    For °F, "21.5 °C" becomes "70.7 °F" and "12.3 K" becomes "22.1 Δ°F"; each number keeps
    its decimals (at least one for °F, so a rounded threshold does not look exact).

    Examples
    --------
    >>> text_in_unit("Hottest 65.2 °C; rise 12.3 K (1–3 K band), margin −1.5 K.", "F")
    'Hottest 149.4 °F; rise 22.1 Δ°F (1.8–5.4 Δ°F band), margin −2.7 Δ°F.'
    >>> text_in_unit("Outdoor -4 °C, ±2.0 K", "F")
    'Outdoor 24.8 °F, ±3.6 Δ°F'
    >>> text_in_unit("Rise 12.3 K", "C")
    'Rise 12.3 K'
    """
    if _check(unit) != FAHRENHEIT or not text:
        return text

    def temperature(match: re.Match) -> str:
        value = from_celsius(_number(match[1]), unit)
        return f"{value:.{max(_decimals(match[1]), 1)}f} °F"

    def difference(match: re.Match) -> str:
        sign, first, dash, second = match[1], match[2], match[3], match[4]
        negative = first.startswith(("-", "−"))
        value = difference_from_kelvin(abs(_number(first)), unit)
        shown = f"{'−' if negative else ''}{value:.{max(_decimals(first), 1)}f}"
        if dash:
            upper = difference_from_kelvin(_number(second), unit)
            shown += f"{dash}{upper:.{max(_decimals(second), 1)}f}"
        return f"{sign}{shown} Δ°F"

    return _DIFFERENCE_TEXT.sub(difference, _TEMPERATURE_TEXT.sub(temperature, text))
