"""Psychrometrics against psychrolib (ASHRAE Handbook Fundamentals), handbook and ISO values.

psychrolib takes RH as a fraction and below its triple-point switch (0.01 °C) works over ice:
its saturation pressure and "dew point" there are over ice. Our RH is relative to liquid
water, so below 0 °C the tests build the vapour pressure from the Hyland–Wexler formula over
water (ASHRAE Handbook Fundamentals 2017, ch. 1, eq. 6, written out below).
"""

import math

import numpy as np
import psychrolib
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import brentq

from survey.thermal.psychrometrics import (
    critical_temperature_factor,
    dew_point,
    frost_point,
    saturation_vapor_pressure,
    surface_rh,
    temperature_factor,
)
from tests.hypothesis_profiles import examples

psychrolib.SetUnitSystem(psychrolib.SI)

AIR_TEMPERATURES_C = list(range(-30, 51, 5))
RH_GRID_PCT = np.array([5.0, 10, 20, 30, 40, 50, 60, 70, 80, 90, 95, 100])


def hyland_wexler_water_pa(t_c: float) -> float:
    """Saturation over liquid water, ASHRAE Handbook Fundamentals 2017 ch. 1 eq. 6 (HW)."""
    t = t_c + 273.15
    return math.exp(
        -5.8002206e03 / t
        + 1.3914993
        - 4.8640239e-02 * t
        + 4.1764768e-05 * t**2
        - 1.4452093e-08 * t**3
        + 6.5459673 * math.log(t)
    )


@pytest.mark.parametrize("t_c", np.arange(-40.0, 60.5, 1.0))
def test_saturation_vapor_pressure_over_water_within_0_1_percent_of_hyland_wexler(t_c):
    """Over water the Sonntag formula is within 0.1 % of Hyland–Wexler from −40 to +60 °C."""
    # Source: ASHRAE Hyland–Wexler, via psychrolib above 0.01 °C, eq. 6 written out below.
    if t_c > 0.01:
        expected = psychrolib.GetSatVapPres(t_c)
    else:
        expected = hyland_wexler_water_pa(t_c)
    assert saturation_vapor_pressure(t_c, over="water") == pytest.approx(expected, rel=1e-3)


@pytest.mark.parametrize("t_c", np.arange(-40.0, 0.0, 1.0))
def test_saturation_vapor_pressure_over_ice_within_0_1_percent_of_hyland_wexler(t_c):
    """Over ice the Sonntag formula is within 0.1 % of Hyland–Wexler from −40 to 0 °C."""
    # Source: psychrolib GetSatVapPres, which is over ice below 0.01 °C (ASHRAE eq. 5).
    expected = psychrolib.GetSatVapPres(t_c)
    assert saturation_vapor_pressure(t_c, over="ice") == pytest.approx(expected, rel=1e-3)
    assert saturation_vapor_pressure(t_c) == pytest.approx(expected, rel=1e-3)


@pytest.mark.parametrize(
    ("t_c", "expected_pa"),
    [
        # Source: IAPWS-95 (CoolProp), listed in docs/references.md § Psychrometrics; 20 °C also the
        # ASHRAE Handbook Fundamentals table value 2.3393 kPa (from memory).
        (0.0, 611.21),
        (20.0, 2339.32),
        (40.0, 7384.94),
    ],
)
def test_saturation_vapor_pressure_matches_handbook_table(t_c, expected_pa):
    """Saturation pressure over water at 0, 20 and 40 °C agrees with IAPWS within 0.01 %."""
    assert saturation_vapor_pressure(t_c, over="water") == pytest.approx(expected_pa, rel=1e-4)


def test_saturation_vapor_pressure_water_and_ice_meet_at_the_triple_point():
    """Both branches give the triple-point pressure at 0.01 °C."""
    # Source: IAPWS, triple point of water 611.657 Pa at 273.16 K (from memory).
    for over in ("water", "ice"):
        assert saturation_vapor_pressure(0.01, over=over) == pytest.approx(611.657, rel=5e-4)


def test_saturation_vapor_pressure_auto_switches_to_ice_below_zero():
    """ "auto" is water at and above 0 °C and ice below, element by element."""
    # Source: the definition of over="auto" (ISO 13788 uses ice below 0 °C).
    t = np.array([-5.0, 0.0, 5.0])
    auto = saturation_vapor_pressure(t)
    assert auto[0] == saturation_vapor_pressure(-5.0, over="ice")
    assert auto[1] == saturation_vapor_pressure(0.0, over="water")
    assert auto[2] == saturation_vapor_pressure(5.0, over="water")


@pytest.mark.parametrize("t_air_c", AIR_TEMPERATURES_C)
def test_dew_point_matches_psychrolib_over_the_grid(t_air_c):
    """Dew point (or frost point below 0 °C) agrees with psychrolib within 0.02 K."""
    # Source: psychrolib GetTDewPointFromVapPres (ASHRAE), which is over ice below 0.01 °C;
    # 0.02 K is the effect of the 0.1 % formulation difference at −50 °C.
    ours_dew = dew_point(t_air_c, RH_GRID_PCT)
    ours_frost = frost_point(t_air_c, RH_GRID_PCT)
    for rh, dew, frost in zip(RH_GRID_PCT, ours_dew, ours_frost, strict=True):
        if t_air_c > 0.01:
            e_pa = psychrolib.GetVapPresFromRelHum(t_air_c, rh / 100.0)
        else:
            e_pa = rh / 100.0 * hyland_wexler_water_pa(t_air_c)
        expected = psychrolib.GetTDewPointFromVapPres(t_air_c, e_pa)
        if expected > 0.01:
            assert dew == pytest.approx(expected, abs=0.02)
        elif frost < t_air_c - 0.01:  # psychrolib caps at the air temperature
            assert frost == pytest.approx(expected, abs=0.02)


@pytest.mark.parametrize(
    ("t_air_c", "rh_pct", "expected_c"),
    [
        # Source: psychrolib, listed in docs/references.md § Psychrometrics.
        (20.0, 80.0, 16.447),
        (25.0, 60.0, 16.701),
        (30.0, 90.0, 28.177),
        (40.0, 30.0, 19.125),
        (60.0, 50.0, 45.755),
        (5.0, 95.0, 4.267),
        (10.0, 100.0, 10.000),
    ],
)
def test_dew_point_matches_check_values(t_air_c, rh_pct, expected_c):
    """Dew point matches the tabulated check values within 0.01 K."""
    assert dew_point(t_air_c, rh_pct) == pytest.approx(expected_c, abs=0.01)


@pytest.mark.parametrize(("t_air_c", "rh_pct"), [(-5.0, 80.0), (-20.0, 60.0), (2.0, 40.0)])
def test_dew_point_below_zero_is_over_supercooled_water(t_air_c, rh_pct):
    """Below 0 °C the dew point solves Hyland–Wexler over water, not over ice."""
    # Source: ASHRAE HW over water (eq. 6 above) inverted by scipy brentq in the test.
    e_pa = rh_pct / 100.0 * hyland_wexler_water_pa(t_air_c)
    expected = brentq(lambda t: hyland_wexler_water_pa(t) - e_pa, -90.0, 60.0, xtol=1e-9)
    assert dew_point(t_air_c, rh_pct) == pytest.approx(expected, abs=0.02)
    assert frost_point(t_air_c, rh_pct) > dew_point(t_air_c, rh_pct)


@pytest.mark.parametrize("t_air_c", [-10.0, 0.0, 10.0, 20.0, 30.0, 45.0])
@pytest.mark.parametrize("t_surface_c", [-15.0, -5.0, 2.0, 8.0, 14.0, 25.0])
def test_surface_rh_matches_psychrolib(t_air_c, t_surface_c):
    """Surface RH is φ·e_w(T_air)/e_s(T_s), matching psychrolib within 0.1 % (relative)."""
    # Source: psychrolib GetSatVapPres (over ice below 0.01 °C, as our surface "auto");
    # air vapour pressure over water, HW eq. 6 below 0 °C.
    rh = 60.0
    if t_air_c > 0.01:
        e_pa = psychrolib.GetVapPresFromRelHum(t_air_c, rh / 100.0)
    else:
        e_pa = rh / 100.0 * hyland_wexler_water_pa(t_air_c)
    expected = 100.0 * e_pa / psychrolib.GetSatVapPres(t_surface_c)
    assert surface_rh(t_air_c, rh, t_surface_c) == pytest.approx(expected, rel=1e-3)


@pytest.mark.parametrize(
    ("t_air_c", "rh_pct", "t_surface_c", "expected_pct", "stated_to"),
    [
        # Source: psychrolib, listed in docs/references.md § Psychrometrics (to the digits stated).
        (20.0, 50.0, 12.0, 83.4, 0.1),
        (20.0, 50.0, 15.0, 68.6, 0.1),
        (20.0, 60.0, 14.0, 87.8, 0.1),
        (18.0, 70.0, 13.0, 96.5, 0.1),
        (22.0, 55.0, 10.0, 118.0, 1.0),
    ],
)
def test_surface_rh_matches_check_values_and_is_not_capped(
    t_air_c, rh_pct, t_surface_c, expected_pct, stated_to
):
    """Surface RH matches the check values; a condensing surface reads above 100 %."""
    result = surface_rh(t_air_c, rh_pct, t_surface_c)
    assert result == pytest.approx(expected_pct, abs=stated_to / 2)


def test_surface_rh_is_100_percent_at_the_dew_point():
    """A surface exactly at the dew point sees saturated air."""
    # Source: definition of the dew point (e_w(T_d) = e).
    assert surface_rh(21.0, 65.0, dew_point(21.0, 65.0)) == pytest.approx(100.0, abs=1e-6)


def test_surface_rh_passes_nan_pixels_through():
    """A pixel without data gives NaN, the others a value."""
    # Source: documented NaN handling (no data in, no data out).
    result = surface_rh(20.0, 50.0, np.array([12.0, np.nan], dtype=np.float32))
    assert result[0] == pytest.approx(83.4, abs=0.1)  # docs/references.md § Psychrometrics
    assert np.isnan(result[1])


def test_temperature_factor_follows_its_definition():
    """fRsi = (θsi − θe)/(θi − θe)."""
    # Source: ISO 13788:2012 definition of the temperature factor.
    assert temperature_factor(14.0, 20.0, 0.0) == pytest.approx(0.70)
    assert temperature_factor(12.63, 20.0, -5.0) == pytest.approx(0.7052)


@pytest.mark.parametrize(
    ("t_inside_c", "rh_pct", "t_outside_c", "expected"),
    [
        # Source: ISO 13788 method computed with IAPWS (docs/references.md § Building envelope); the
        # first case is
        # also the DIN 4108-2 requirement fRsi ≥ 0.70 at θsi 12.6 °C.
        (20.0, 50.0, -5.0, 0.705),
        (20.0, 50.0, -10.0, 0.754),
        (21.0, 55.0, -10.0, 0.808),
    ],
)
def test_critical_temperature_factor_matches_iso_13788_cases(
    t_inside_c, rh_pct, t_outside_c, expected
):
    """fRsi,min for the mould criterion (80 %) matches the ISO 13788 check values."""
    assert critical_temperature_factor(t_inside_c, rh_pct, t_outside_c) == pytest.approx(
        expected, abs=0.001
    )


def iso_13788_saturation_pa(theta_c: float) -> float:
    """ISO 13788:2012 Annex E saturation pressure (Magnus form; from memory)."""
    if theta_c >= 0:
        return 610.5 * math.exp(17.269 * theta_c / (237.3 + theta_c))
    return 610.5 * math.exp(21.875 * theta_c / (265.5 + theta_c))


@pytest.mark.parametrize(
    ("t_inside_c", "rh_pct", "t_outside_c", "limit_pct"),
    [(20.0, 50.0, -5.0, 80.0), (20.0, 65.0, 0.0, 100.0), (5.0, 60.0, -20.0, 100.0)],
)
def test_critical_temperature_factor_follows_the_iso_13788_steps(
    t_inside_c, rh_pct, t_outside_c, limit_pct
):
    """The ISO 13788 steps with the standard's own Magnus formula agree within 0.003."""
    # Source: ISO 13788:2012 section 4 steps and Annex E formulas (from memory), computed
    # in the test with scipy brentq; the last case has θsi,min below 0 °C (over ice).
    p_min = rh_pct / 100.0 * iso_13788_saturation_pa(t_inside_c) / (limit_pct / 100.0)
    theta_min = brentq(lambda t: iso_13788_saturation_pa(t) - p_min, -60.0, 60.0)
    expected = (theta_min - t_outside_c) / (t_inside_c - t_outside_c)
    result = critical_temperature_factor(t_inside_c, rh_pct, t_outside_c, limit_pct)
    assert result == pytest.approx(expected, abs=0.003)


@pytest.mark.parametrize(
    ("call", "parameter"),
    [
        (lambda: dew_point(20.0, 0.0), "rh_pct"),
        (lambda: dew_point(20.0, 100.5), "rh_pct"),
        (lambda: dew_point(float("nan"), 50.0), "t_air_c"),
        (lambda: frost_point(-300.0, 50.0), "t_air_c"),
        (lambda: surface_rh(20.0, -1.0, 10.0), "rh_pct"),
        (lambda: surface_rh(20.0, 50.0, -274.0), "t_surface_c"),
        (lambda: saturation_vapor_pressure(20.0, over="steam"), "over"),
        (lambda: saturation_vapor_pressure("warm"), "t_c"),
        (lambda: temperature_factor(10.0, 20.0, 20.0), "t_outside_c"),
        (lambda: critical_temperature_factor(20.0, 50.0, 25.0), "t_outside_c"),
        (lambda: critical_temperature_factor(20.0, 50.0, 0.0, limit_rh_pct=0.0), "limit_rh_pct"),
        (lambda: critical_temperature_factor(20.0, 120.0, 0.0), "rh_inside_pct"),
    ],
)
def test_psychrometrics_invalid_input_raises_naming_the_parameter(call, parameter):
    """Invalid input raises ValueError whose message names the parameter."""
    # Source: DESIGN.md contract (ValueError naming the parameter).
    with pytest.raises(ValueError, match=parameter):
        call()


temperatures = st.floats(min_value=-30.0, max_value=50.0)
humidities = st.floats(min_value=1.0, max_value=100.0)


@settings(max_examples=examples(60), deadline=None)
@given(t_air_c=temperatures, rh_a=humidities, rh_b=humidities)
def test_dew_point_rises_with_rh_and_never_exceeds_the_air(t_air_c, rh_a, rh_b):
    """More humid air has a higher dew point, never above the air temperature."""
    # Source: monotonicity of the saturation curve (property, no number).
    low, high = sorted((rh_a, rh_b))
    assert dew_point(t_air_c, low) <= dew_point(t_air_c, high) + 1e-9
    assert dew_point(t_air_c, high) <= t_air_c + 1e-7


@settings(max_examples=examples(60), deadline=None)
@given(
    t_air_c=temperatures,
    rh_pct=humidities,
    t_a=st.floats(min_value=-30.0, max_value=50.0),
    t_b=st.floats(min_value=-30.0, max_value=50.0),
)
def test_surface_rh_falls_as_the_surface_warms(t_air_c, rh_pct, t_a, t_b):
    """A warmer surface has a lower surface RH."""
    # Source: monotonicity of the saturation curve (property, no number).
    cold, warm = sorted((t_a, t_b))
    assert surface_rh(t_air_c, rh_pct, warm) <= surface_rh(t_air_c, rh_pct, cold) + 1e-9


@settings(max_examples=examples(30), deadline=None)
@given(
    t_air=st.lists(temperatures, min_size=1, max_size=4),
    rh=st.lists(humidities, min_size=1, max_size=3),
)
def test_dew_point_and_surface_rh_broadcast_like_numpy(t_air, rh):
    """Array inputs broadcast and equal element-by-element scalar calls."""
    # Source: numpy broadcasting rules (property, no number).
    t_grid = np.array(t_air)[:, np.newaxis]
    rh_grid = np.array(rh)[np.newaxis, :]
    dew = dew_point(t_grid, rh_grid)
    surface = surface_rh(t_grid, rh_grid, 10.0)
    assert dew.shape == surface.shape == (len(t_air), len(rh))
    for i, t in enumerate(t_air):
        for j, r in enumerate(rh):
            assert dew[i, j] == pytest.approx(dew_point(t, r), abs=1e-9)
            assert surface[i, j] == pytest.approx(surface_rh(t, r, 10.0), rel=1e-12)


@settings(max_examples=examples(40), deadline=None)
@given(rh_pct=st.one_of(st.floats(max_value=-1e-6), st.floats(min_value=100.000001)))
def test_surface_rh_refuses_rh_outside_0_to_100(rh_pct):
    """Any RH outside [0, 100] % (or NaN) raises ValueError naming rh_pct."""
    # Source: DESIGN.md contract (RH outside 0–100 is invalid).
    with pytest.raises(ValueError, match="rh_pct"):
        surface_rh(20.0, rh_pct, 15.0)
