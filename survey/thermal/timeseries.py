"""Survey conditions from logged series: values at capture times and over windows.

A logger records at intervals; between two readings the air is taken to change linearly
(the usual reading of a logged series, and exact at the readings). Where the log has a gap
longer than ``max_gap_s``, or outside the logged period, there are *no logged conditions*:
NaN, never an extrapolation.

Times are POSIX seconds (UTC), as :class:`survey.thermal.logger.LoggerSeries` holds them.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

DEFAULT_MAX_GAP_S = 2 * 3600.0
"""Longest interval between two readings still interpolated: two hours (our choice; loggers
left for a survey typically record every 5 to 30 minutes)."""

DEFAULT_MIN_COVERAGE = 0.95
"""Share of a window the log must cover for a minimum or maximum over it to be claimed."""

_LOOKBACK_LIMIT_S = 14 * 86400.0


def _series(times_s, values, name: str) -> tuple[np.ndarray, np.ndarray]:
    """Finite readings of a series, times strictly increasing."""
    t = np.asarray(times_s, dtype=np.float64).ravel()
    v = np.asarray(values, dtype=np.float64).ravel()
    if t.shape != v.shape:
        raise ValueError(f"{name}: times and values differ in length ({len(t)} and {len(v)}).")
    if not np.isfinite(t).all():
        raise ValueError(f"{name}: times must be finite.")
    if np.any(np.diff(t) <= 0):
        raise ValueError(f"{name}: times must increase strictly (sort the log first).")
    keep = np.isfinite(v)
    return t[keep], v[keep]


def _interpolate(t: np.ndarray, v: np.ndarray, at: np.ndarray, max_gap_s: float) -> np.ndarray:
    out = np.full(at.shape, np.nan)
    if len(t) == 0:
        return out
    right = np.searchsorted(t, at, side="right")
    left = right - 1
    exact = (left >= 0) & (t[np.clip(left, 0, len(t) - 1)] == at)
    inside = (left >= 0) & (right < len(t))
    li = np.clip(left, 0, len(t) - 1)
    ri = np.clip(right, 0, len(t) - 1)
    span = t[ri] - t[li]
    usable = inside & (span <= max_gap_s) & (span > 0)
    fraction = np.where(usable, (at - t[li]) / np.where(span > 0, span, 1.0), 0.0)
    out = np.where(usable, v[li] + fraction * (v[ri] - v[li]), out)
    return np.where(exact, v[li], out)


def interpolate_at(times_s, values, at_s, *, max_gap_s: float = DEFAULT_MAX_GAP_S):
    """Logged values at given times, linearly interpolated.

    Parameters
    ----------
    times_s, values : 1-D array_like
        The log: POSIX seconds, strictly increasing, and readings (NaN readings are left
        out, so the next readings on either side are used, within ``max_gap_s``).
    at_s : float or array_like
        Times wanted, POSIX seconds.
    max_gap_s : float
        Longest interval between the two readings around a time still interpolated.

    Returns
    -------
    float or ndarray
        The values; NaN before the first reading, after the last, or inside a longer gap.

    Examples
    --------
    >>> interpolate_at([0, 600, 1200], [20.0, 21.0, 23.0], [300, 900, 1200, 1500])
    array([20.5, 22. , 23. ,  nan])
    """
    gap = float(max_gap_s)
    if not gap > 0:
        raise ValueError("max_gap_s must be greater than 0 s.")
    t, v = _series(times_s, values, "log")
    at = np.asarray(at_s, dtype=np.float64)
    result = _interpolate(t, v, at.ravel(), gap).reshape(at.shape)
    return float(result) if result.ndim == 0 else result


def conditions_at(series, at_s: float, *, max_gap_s: float = DEFAULT_MAX_GAP_S) -> dict | None:
    """Air temperature, RH and wind of one logger at one time, or None outside the log.

    ``series`` is a :class:`survey.thermal.logger.LoggerSeries` (or any object with
    ``times_s``, ``temperature_c``, ``rh_pct`` and ``wind_m_s``). The result holds
    ``t_air_c``, ``rh_pct`` and ``wind_m_s`` (None where that column was not logged or
    has no reading near the time); None when the temperature has none, so the caller
    says "no logged conditions".

    Examples
    --------
    >>> from types import SimpleNamespace
    >>> log = SimpleNamespace(times_s=[0.0, 600.0], temperature_c=[20.0, 21.0],
    ...                       rh_pct=[50.0, 54.0], wind_m_s=None)
    >>> conditions_at(log, 150.0), conditions_at(log, 900.0)
    ({'t_air_c': 20.25, 'rh_pct': 51.0, 'wind_m_s': None}, None)
    """
    temperature = interpolate_at(series.times_s, series.temperature_c, at_s, max_gap_s=max_gap_s)
    if math.isnan(temperature):
        return None
    result = {"t_air_c": temperature, "rh_pct": None, "wind_m_s": None}
    for key, values in (("rh_pct", series.rh_pct), ("wind_m_s", series.wind_m_s)):
        if values is not None:
            value = interpolate_at(series.times_s, values, at_s, max_gap_s=max_gap_s)
            result[key] = None if math.isnan(value) else value
    return result


@dataclass(frozen=True)
class WindowResult:
    """A quantity over the window [start_s, end_s] before a capture.

    ``value`` is the claim (None when the logs cover less than the required share of the
    window); ``observed`` the same over whatever part is covered (None when nothing is);
    ``at_s`` when it occurred; ``coverage`` the covered share, 0–1.
    """

    value: float | None
    observed: float | None
    at_s: float | None
    coverage: float
    start_s: float
    end_s: float


def _window(logs, start: float, end: float, gap: float):
    """Breakpoints of the window, each log's interpolant there, and the covered share.

    Between two neighbouring breakpoints every log is either defined throughout or not at
    all (its readings are among the breakpoints), so the covered length is the sum of the
    intervals whose midpoints all logs cover, and a piecewise-linear function's extremes
    over the covered part lie on breakpoints.
    """
    points = [np.array([start, end])]
    for t, _ in logs:
        points.append(t[(t > start) & (t < end)])
    breaks = np.unique(np.concatenate(points))
    values = [_interpolate(t, v, breaks, gap) for t, v in logs]
    middles = (breaks[:-1] + breaks[1:]) / 2
    covered = np.ones(len(middles), dtype=bool)
    for t, v in logs:
        covered &= np.isfinite(_interpolate(t, v, middles, gap))
    length = end - start
    coverage = float(np.diff(breaks)[covered].sum() / length) if length > 0 else 0.0
    return breaks, values, coverage


def _check_window(hours: float, max_gap_s: float, min_coverage: float) -> tuple[float, float]:
    span = float(hours) * 3600.0
    if not 0 < span <= _LOOKBACK_LIMIT_S:
        raise ValueError("hours must be greater than 0 and at most 336 (14 days).")
    if not float(max_gap_s) > 0:
        raise ValueError("max_gap_s must be greater than 0 s.")
    if not 0.0 <= float(min_coverage) <= 1.0:
        raise ValueError("min_coverage must be within [0, 1].")
    return span, float(max_gap_s)


def held_difference(
    inside_times_s,
    inside_c,
    outside_times_s,
    outside_c,
    at_s: float,
    *,
    hours: float = 24.0,
    max_gap_s: float = DEFAULT_MAX_GAP_S,
    min_coverage: float = DEFAULT_MIN_COVERAGE,
) -> WindowResult:
    """The smallest inside − outside temperature difference over the hours before a time.

    Parameters
    ----------
    inside_times_s, inside_c : 1-D array_like
        Indoor log: POSIX seconds and °C.
    outside_times_s, outside_c : 1-D array_like
        Outdoor log.
    at_s : float
        Capture time, POSIX seconds: the window is [at − hours, at].
    hours : float
        Window length, h (for example the 24 or 48 h an envelope survey asks for).
    max_gap_s : float
        Longer gaps between readings count as not logged.
    min_coverage : float
        Share of the window both logs must cover for the minimum to be claimed.

    Returns
    -------
    WindowResult
        ``value``: the minimum difference, K, actually held through the window (the
        minimum of the two interpolated logs' difference, not a typed duration).

    Notes
    -----
    Both logs are linear between readings, so their difference is linear between the
    union of their reading times, and its minimum over the window lies at one of those
    times or at the window's ends: the minimum is exact, not sampled.

    Examples
    --------
    >>> r = held_difference([0, 3600, 7200], [20, 20, 20], [0, 3600, 7200], [5, 8, 6],
    ...                     7200, hours=2)
    >>> r.value, r.at_s, r.coverage
    (12.0, 3600.0, 1.0)
    """
    span, gap = _check_window(hours, max_gap_s, min_coverage)
    inside = _series(inside_times_s, inside_c, "inside log")
    outside = _series(outside_times_s, outside_c, "outside log")
    end = float(at_s)
    start = end - span
    breaks, (t_in, t_out), coverage = _window([inside, outside], start, end, gap)
    difference = t_in - t_out
    return _extreme(difference, breaks, coverage, min_coverage, start, end, lowest=True)


def _extreme(values, breaks, coverage, min_coverage, start, end, *, lowest: bool):
    defined = np.isfinite(values)
    if not defined.any():
        return WindowResult(None, None, None, coverage, start, end)
    candidates = np.where(defined, values, np.inf if lowest else -np.inf)
    index = int(np.argmin(candidates) if lowest else np.argmax(candidates))
    observed = float(values[index])
    claimed = observed if coverage >= min_coverage - 1e-12 else None
    return WindowResult(claimed, observed, float(breaks[index]), coverage, start, end)


def outdoor_extremes(
    times_s,
    values_c,
    at_s: float,
    *,
    hours: float = 24.0,
    max_gap_s: float = DEFAULT_MAX_GAP_S,
    min_coverage: float = DEFAULT_MIN_COVERAGE,
) -> tuple[WindowResult, WindowResult]:
    """Lowest and highest logged temperature over the hours before a time.

    Returns
    -------
    (minimum, maximum) : WindowResult, WindowResult
        °C, exact for the linearly interpolated log (extremes lie on readings or on the
        window's ends); ``value`` None when the log covers less than ``min_coverage``.

    Examples
    --------
    >>> low, high = outdoor_extremes([0, 3600, 7200, 10800], [4.0, -1.0, 2.0, 6.0], 9000,
    ...                              hours=2)
    >>> low.value, high.value, high.at_s
    (-1.0, 4.0, 9000.0)
    """
    span, gap = _check_window(hours, max_gap_s, min_coverage)
    log = _series(times_s, values_c, "log")
    end = float(at_s)
    start = end - span
    breaks, (values,), coverage = _window([log], start, end, gap)
    return (
        _extreme(values, breaks, coverage, min_coverage, start, end, lowest=True),
        _extreme(values, breaks, coverage, min_coverage, start, end, lowest=False),
    )


def hours_held(
    inside_times_s,
    inside_c,
    outside_times_s,
    outside_c,
    at_s: float,
    *,
    threshold_k: float,
    max_gap_s: float = DEFAULT_MAX_GAP_S,
) -> tuple[float, bool]:
    """How long before a time the inside − outside difference has stayed ≥ a threshold.

    Returns
    -------
    (hours, whole_log)
        Hours back from ``at_s`` to the last moment the difference was below
        ``threshold_k`` (where the linear interpolants cross it), or to where the logs stop
        covering (``whole_log`` True: held at least that long, as far as the logs tell);
        0 when the difference at ``at_s`` is below the threshold or not logged. Looks back
        at most 14 days.

    Examples
    --------
    >>> hours_held([0, 7200, 14400], [20, 20, 20], [0, 7200, 14400], [16, 8, 6], 14400,
    ...            threshold_k=10.0)
    (2.5, False)
    """
    gap = float(max_gap_s)
    if not gap > 0:
        raise ValueError("max_gap_s must be greater than 0 s.")
    inside = _series(inside_times_s, inside_c, "inside log")
    outside = _series(outside_times_s, outside_c, "outside log")
    end = float(at_s)
    breaks, (t_in, t_out), _ = _window([inside, outside], end - _LOOKBACK_LIMIT_S, end, gap)
    difference = t_in - t_out
    threshold = float(threshold_k)
    if not np.isfinite(difference[-1]) or difference[-1] < threshold:
        return 0.0, False
    middles = (breaks[:-1] + breaks[1:]) / 2
    covered = np.ones(len(middles), dtype=bool)
    for t, v in (inside, outside):
        covered &= np.isfinite(_interpolate(t, v, middles, gap))
    # Walk back interval by interval: the first one uncovered, or ending below the
    # threshold, bounds the time held. At most one step per breakpoint.
    for k in range(len(breaks) - 2, -1, -1):
        if not covered[k]:
            return float(end - breaks[k + 1]) / 3600.0, True
        if difference[k] < threshold:
            d0, d1 = difference[k], difference[k + 1]
            crossing = breaks[k] + (threshold - d0) / (d1 - d0) * (breaks[k + 1] - breaks[k])
            return float(end - crossing) / 3600.0, False
    return float(end - breaks[0]) / 3600.0, True
