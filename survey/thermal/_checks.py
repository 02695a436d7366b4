"""Argument checks shared by the calculation modules.

Every check raises ``ValueError`` whose message starts with the parameter name, so a form or
an API can show it next to the right field.
"""

import numpy as np

from survey.thermal.constants import ABSOLUTE_ZERO_C


def as_array(value, name: str, *, allow_nan: bool = False) -> np.ndarray:
    """Return ``value`` as a float array; refuse text, infinities and (by default) NaN."""
    array = _float_array(value, name)
    if allow_nan:
        _finite_bounds(array, name)
    elif not np.isfinite(array).all():
        raise ValueError(f"{name} must be a number, got NaN or an infinite value.")
    return array


def _float_array(value, name: str) -> np.ndarray:
    try:
        return np.asarray(value, dtype=np.float64)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a number or an array of numbers.") from None


def nan_bounds(array: np.ndarray) -> tuple[float, float]:
    """Smallest and largest value ignoring NaN (NaN, NaN when there is none)."""
    if array.size == 0:
        return np.nan, np.nan
    # fmin/fmax skip NaN without the copy that nanmin makes: whole images stay fast.
    return float(np.fmin.reduce(array, axis=None)), float(np.fmax.reduce(array, axis=None))


def _finite_bounds(array: np.ndarray, name: str) -> tuple[float, float]:
    smallest, largest = nan_bounds(array)
    if np.isinf(smallest) or np.isinf(largest):
        raise ValueError(f"{name} must be finite, got an infinite value.")
    return smallest, largest


def temperature(
    value, name: str, *, allow_nan: bool = False, within: tuple[float, float] | None = None
) -> np.ndarray:
    """A temperature in °C: finite, above absolute zero and optionally within a range.

    With ``allow_nan`` NaN marks a pixel without data and passes through; the checks then
    read only the smallest and largest value, two fast passes over a whole image.
    """
    array = _float_array(value, name)
    if not allow_nan and not np.isfinite(array).all():
        raise ValueError(f"{name} must be a number, got NaN or an infinite value.")
    smallest, largest = _finite_bounds(array, name)
    if smallest <= ABSOLUTE_ZERO_C:
        raise ValueError(f"{name} must be above absolute zero (−273.15 °C).")
    if within is not None and (smallest < within[0] or largest > within[1]):
        raise ValueError(f"{name} must be within [{within[0]:g}, {within[1]:g}] °C.")
    return array


def in_range(
    value,
    name: str,
    low: float,
    high: float,
    *,
    low_inclusive: bool = True,
    high_inclusive: bool = True,
    unit: str = "",
) -> np.ndarray:
    """A finite number within [low, high] (or the open ends asked for)."""
    array = as_array(value, name)
    below = array < low if low_inclusive else array <= low
    above = array > high if high_inclusive else array >= high
    if below.any() or above.any():
        left = "[" if low_inclusive else "("
        right = "]" if high_inclusive else ")"
        raise ValueError(f"{name} must be within {left}{low:g}, {high:g}{right}{unit}.")
    return array


def positive(value, name: str, unit: str = "") -> np.ndarray:
    """A finite number greater than zero."""
    array = as_array(value, name)
    if (array <= 0).any():
        raise ValueError(f"{name} must be greater than 0{unit}.")
    return array


def choice(value, name: str, options: tuple[str, ...]) -> str:
    """One of a fixed set of text options."""
    if value not in options:
        listed = ", ".join(repr(option) for option in options)
        raise ValueError(f"{name} must be one of {listed}, got {value!r}.")
    return value


def result(array: np.ndarray):
    """Return a Python float for 0-d results, otherwise the array."""
    return float(array) if np.ndim(array) == 0 else array
