"""Conditions from logged series: interpolation against hand-computed values, window
minima against a hand-made series and a dense np.interp brute force
(docs/references.md § Data loggers and time series)."""

import math

import numpy as np
import pytest

from survey.thermal.logger import read_logger_csv
from survey.thermal.timeseries import (
    conditions_at,
    held_difference,
    hours_held,
    interpolate_at,
    outdoor_extremes,
)

HOUR = 3600.0


def test_interpolate_at_hand_computed():
    """Readings 20.0 at 0 s and 21.2 at 600 s: at 180 s 20.0 + 0.3 × 1.2 = 20.36; at
    450 s 20.0 + 0.75 × 1.2 = 20.9; on a reading, the reading."""
    values = interpolate_at([0, 600, 1200], [20.0, 21.2, 19.4], [180, 450, 600, 900])
    # 900 s: 21.2 + 0.5 × (19.4 − 21.2) = 20.3 (by hand).
    np.testing.assert_allclose(values, [20.36, 20.9, 21.2, 20.3], rtol=0, atol=1e-12)
    assert interpolate_at([0, 600], [20.0, 21.2], 0) == 20.0
    assert interpolate_at([0, 600], [20.0, 21.2], 600) == 21.2


def test_interpolate_at_outside_the_log_and_across_gaps():
    """No value before the first reading, after the last, or across a gap longer than
    allowed; a NaN reading is skipped when its neighbours are close enough."""
    times = [0, 600, 1200, 1200 + 3 * HOUR, 1200 + 3 * HOUR + 600]
    values = [1.0, 2.0, 3.0, 6.0, 7.0]
    result = interpolate_at(times, values, [-1, 1200 + HOUR, 1200 + 3 * HOUR + 601])
    assert np.isnan(result).all()
    # With a 4 h allowance the 3 h gap is bridged: halfway, 4.5.
    assert interpolate_at(times, values, 1200 + 1.5 * HOUR, max_gap_s=4 * HOUR) == 4.5
    assert interpolate_at([0, 600, 1200], [1.0, math.nan, 3.0], 300) == 1.5
    with pytest.raises(ValueError, match="increase strictly"):
        interpolate_at([0, 600, 600], [1, 2, 3], 10)


def test_conditions_at_from_a_logger_file():
    """A thermogram taken at 22:05 local (21:05 UTC) between readings at 22:00 and 22:10:
    halfway values; outside the log, no logged conditions."""
    text = "Zeit;Temp;rF\n17.01.2026 22:00;21,4;48,0\n17.01.2026 22:10;21,8;50,0\n"
    log = read_logger_csv(
        text,
        time_column="zeit",
        temperature_column="temp",
        humidity_column="rf",
        time_format="%d.%m.%Y %H:%M",
        time_zone="Europe/Berlin",
    )
    capture = log.times_s[0] + 300
    conditions = conditions_at(log, capture)
    assert conditions["t_air_c"] == pytest.approx(21.6)
    assert conditions["rh_pct"] == pytest.approx(49.0)
    assert conditions["wind_m_s"] is None
    assert conditions_at(log, log.times_s[-1] + 1) is None


def hand_made_logs():
    """48 h by hand. Inside: 20 °C every 30 min, except 15 °C at 36.5 h (a short setback).
    Outside: every 45 min, falling 1/3 K/h from 8 °C at 0 h to −2 °C at 30 h, then rising
    0.5 K/h (7 °C at 48 h); its logger missed the readings between 9.75 h and 13.5 h."""
    inside_t = np.arange(0, 48 * HOUR + 1, 1800.0)
    inside = np.where(inside_t == 36.5 * HOUR, 15.0, 20.0)
    outside_t = np.arange(0, 48 * HOUR + 1, 2700.0)
    hours = outside_t / HOUR
    outside = np.where(hours <= 30, 8.0 - hours / 3, -2.0 + 0.5 * (hours - 30))
    kept = (hours <= 9.75) | (hours >= 13.5)
    return inside_t, inside, outside_t[kept], outside[kept]


def brute_force_minimum(inside_t, inside, outside_t, outside, start, end):
    """Minimum of the two logs' difference on a 1-second grid by np.interp (independent
    of the code under test)."""
    grid = np.arange(start, end + 1, 1.0)
    return float(np.min(np.interp(grid, inside_t, inside) - np.interp(grid, outside_t, outside)))


def test_held_difference_against_the_hand_made_series():
    """Over the 24 h before 44 h the smallest difference is at the setback, 36.5 h:
    15 − (−2 + 0.5 × 6.5) = 13.75 K, between two outdoor readings (by hand)."""
    logs = hand_made_logs()
    result = held_difference(*logs, 44 * HOUR, hours=24)
    assert result.value == pytest.approx(13.75, abs=1e-12)
    assert result.at_s == 36.5 * HOUR
    assert result.coverage == 1.0
    assert (result.start_s, result.end_s) == (20 * HOUR, 44 * HOUR)


@pytest.mark.parametrize("at_hours", [28.0, 33.3, 36.6, 40.0, 47.9])
def test_held_difference_matches_a_dense_brute_force(at_hours):
    """The exact minimum equals a 1-second np.interp scan of the same window."""
    logs = hand_made_logs()
    result = held_difference(*logs, at_hours * HOUR, hours=12)
    expected = brute_force_minimum(*logs, (at_hours - 12) * HOUR, at_hours * HOUR)
    assert result.value == pytest.approx(expected, abs=1e-6)


def test_held_difference_coverage():
    """The outdoor readings at 9.75 h and 13.5 h are 3.75 h apart: 20.25 of the 24 h before
    24 h are covered, so the minimum is observed but not claimed; a 4 h allowance bridges
    the gap. Before 12 h, 12 h of the window precede the logs."""
    logs = hand_made_logs()
    result = held_difference(*logs, 24 * HOUR, hours=24)
    assert result.coverage == pytest.approx(20.25 / 24)
    assert result.value is None
    # Observed minimum: outside is warmest (8 °C) at 0 h: 12 K.
    assert result.observed == pytest.approx(12.0)
    bridged = held_difference(*logs, 24 * HOUR, hours=24, max_gap_s=4 * HOUR)
    assert bridged.coverage == 1.0 and bridged.value == pytest.approx(12.0)
    early = held_difference(*logs, 12 * HOUR, hours=24)
    assert early.coverage == pytest.approx(9.75 / 24)
    assert early.value is None


def test_outdoor_extremes_against_brute_force():
    """Over the 24 h before 40 h: lowest −2 °C at 30 h, highest 3 °C at 40 h
    (−2 + 0.5 × 10), as a dense np.interp finds too."""
    _, _, outside_t, outside = hand_made_logs()
    low, high = outdoor_extremes(outside_t, outside, 40 * HOUR)
    assert (low.value, low.at_s) == (pytest.approx(-2.0), 30 * HOUR)
    assert (high.value, high.at_s) == (pytest.approx(3.0), 40 * HOUR)
    grid = np.arange(16 * HOUR, 40 * HOUR + 1, 1.0)
    dense = np.interp(grid, outside_t, outside)
    assert (low.value, high.value) == (pytest.approx(dense.min()), pytest.approx(dense.max()))


def test_hours_held_hand_made():
    """At 44 h (difference 15 K) a 14 K threshold was last crossed just after the setback,
    on the inside's recovery from 15 to 20 °C between 36.5 and 37 h while outside rose
    from 1.25 to 1.5 °C: 13.75 + 9.5·(t − 36.5) = 14 at t = 36.5 + 0.25/9.5 h (by hand)."""
    logs = hand_made_logs()
    held, whole_log = hours_held(*logs, 44 * HOUR, threshold_k=14.0)
    assert held == pytest.approx(44 - (36.5 + 0.25 / 9.5), abs=1e-9)
    assert whole_log is False
    # At 30 h the difference (12 + t/3 K) never fell below 12 K: held back to the end of
    # the outdoor gap at 13.5 h, as far as the logs tell.
    assert hours_held(*logs, 30 * HOUR, threshold_k=12.0) == (pytest.approx(16.5), True)
    # At 46 h the difference is 14 K, below 15 K: not held.
    assert hours_held(*logs, 46 * HOUR, threshold_k=15.0) == (0.0, False)
