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
from hypothesis import assume, given, settings
from hypothesis import strategies as st
from scipy.optimize import brentq

from survey.thermal.psychrometrics import (
    condensation_margin_k,
    critical_temperature_factor,
    dew_point,
    frost_point,
    saturation_vapor_pressure,
    surface_limit_temperature,
    surface_margin_k,
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


def hyland_wexler_ice_pa(t_c: float) -> float:
    """Saturation over ice, ASHRAE Handbook Fundamentals 2017 ch. 1 eq. 5 (HW)."""
    # psychrolib.GetSatVapPres is eq. 5 at and below 0.01 °C, valid from −100 °C.
    assert t_c <= 0.01
    return psychrolib.GetSatVapPres(t_c)


# The docstring of saturation_vapor_pressure states these measured agreements; each test
# holds one of them (tolerance = the stated bound).
@pytest.mark.parametrize("t_c", np.arange(0.0, 60.25, 0.5))
def test_saturation_vapor_pressure_over_water_within_0_03_percent_of_hyland_wexler(t_c):
    """Over water from 0 to 60 °C the Sonntag formula is within 0.03 % of Hyland–Wexler."""
    # Source: ASHRAE Hyland–Wexler eq. 6, via psychrolib above 0.01 °C, written out below.
    expected = psychrolib.GetSatVapPres(t_c) if t_c > 0.01 else hyland_wexler_water_pa(t_c)
    assert saturation_vapor_pressure(t_c, over="water") == pytest.approx(expected, rel=3e-4)


@pytest.mark.parametrize("t_c", np.arange(-40.0, 0.0, 0.5))
def test_saturation_vapor_pressure_over_supercooled_water_within_0_1_percent(t_c):
    """Over supercooled water down to −40 °C Sonntag is within 0.1 % of Hyland–Wexler."""
    # Source: ASHRAE Hyland–Wexler eq. 6 written out above (psychrolib is over ice here).
    expected = hyland_wexler_water_pa(t_c)
    assert saturation_vapor_pressure(t_c, over="water") == pytest.approx(expected, rel=1e-3)


@pytest.mark.parametrize("t_c", np.arange(-100.0, -39.0, 5.0))
def test_saturation_vapor_pressure_over_water_down_to_minus_100_within_0_81_percent(t_c):
    """At the cold end of the range (−100 °C) the two formulations part by up to 0.81 %."""
    # Source: ASHRAE Hyland–Wexler eq. 6 written out above.
    expected = hyland_wexler_water_pa(t_c)
    assert saturation_vapor_pressure(t_c, over="water") == pytest.approx(expected, rel=8.1e-3)


@pytest.mark.parametrize("t_c", np.arange(-40.0, 0.0, 0.5))
def test_saturation_vapor_pressure_over_ice_within_0_07_percent_of_hyland_wexler(t_c):
    """Over ice from −40 to 0 °C the Sonntag formula is within 0.07 % of Hyland–Wexler."""
    # Source: psychrolib GetSatVapPres, which is over ice below 0.01 °C (ASHRAE eq. 5).
    expected = hyland_wexler_ice_pa(t_c)
    assert saturation_vapor_pressure(t_c, over="ice") == pytest.approx(expected, rel=7e-4)
    assert saturation_vapor_pressure(t_c) == pytest.approx(expected, rel=7e-4)


@pytest.mark.parametrize("t_c", np.arange(-100.0, -39.0, 5.0))
def test_saturation_vapor_pressure_over_ice_down_to_minus_100_within_0_22_percent(t_c):
    """Over ice at the cold end of the range the two formulations part by up to 0.22 %."""
    # Source: psychrolib GetSatVapPres (ASHRAE eq. 5), valid from −100 °C.
    expected = hyland_wexler_ice_pa(t_c)
    assert saturation_vapor_pressure(t_c, over="ice") == pytest.approx(expected, rel=2.2e-3)


@pytest.mark.parametrize(
    ("t_c", "expected_pa"),
    [
        # Source: IAPWS-95, docs/references.md § Psychrometrics (computed); 20 °C is also
        # the ASHRAE Handbook Fundamentals table value 2.3393 kPa (from memory).
        (0.0, 611.21),
        (20.0, 2339.32),
        (40.0, 7384.94),
    ],
)
def test_saturation_vapor_pressure_matches_iapws_within_0_005_percent(t_c, expected_pa):
    """Saturation pressure over water at 0, 20 and 40 °C agrees with IAPWS within 0.005 %."""
    assert saturation_vapor_pressure(t_c, over="water") == pytest.approx(expected_pa, rel=5e-5)


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
    for rh in RH_GRID_PCT:
        if t_air_c > 0.01:
            e_pa = psychrolib.GetVapPresFromRelHum(t_air_c, rh / 100.0)
        else:
            e_pa = rh / 100.0 * hyland_wexler_water_pa(t_air_c)
        expected = psychrolib.GetTDewPointFromVapPres(t_air_c, e_pa)
        if expected > 0.01:
            assert dew_point(t_air_c, rh) == pytest.approx(expected, abs=0.02)
        elif expected < t_air_c - 0.01:  # psychrolib caps at the air temperature
            assert frost_point(t_air_c, rh) == pytest.approx(expected, abs=0.02)


@pytest.mark.parametrize(
    ("t_air_c", "rh_pct", "expected_c"),
    [
        # Source: psychrolib, docs/references.md § Psychrometrics (computed).
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
        # Source: psychrolib, docs/references.md § Psychrometrics (to the digits stated).
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
    assert result[0] == pytest.approx(83.4, abs=0.1)  # docs/references.md check value
    assert np.isnan(result[1])


def test_temperature_factor_follows_its_definition():
    """fRsi = (θsi − θe)/(θi − θe)."""
    # Source: ISO 13788:2012 definition of the temperature factor.
    assert temperature_factor(14.0, 20.0, 0.0) == pytest.approx(0.70)
    assert temperature_factor(12.63, 20.0, -5.0) == pytest.approx(0.7052)


@pytest.mark.parametrize(
    ("t_inside_c", "rh_pct", "t_outside_c", "expected"),
    [
        # Source: ISO 13788 method computed with IAPWS (docs/references.md § Building
        # envelope); the first case is
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
        (lambda: critical_temperature_factor(150.0, 50.0, 0.0), "t_inside_c"),
        (lambda: surface_limit_temperature(20.0, 50.0, 0.0), "limit_rh_pct"),
        (lambda: surface_limit_temperature(20.0, 50.0, 80.0, over="steam"), "over"),
        (lambda: surface_margin_k(20.0, 50.0, 120.0), "t_surface_c"),
        (lambda: condensation_margin_k(20.0, 0.0, 10.0), "rh_pct"),
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


# --- range of validity -----------------------------------------------------------------------


@pytest.mark.parametrize(
    ("call", "parameter"),
    [
        # Range: −100…+100 °C over water, −100…+0.01 °C over ice (Sonntag 1990 as commonly
        # quoted, from memory; docs/references.md § Psychrometrics).
        (lambda: dew_point(-273.0, 50.0), "t_air_c"),
        (lambda: dew_point(-200.0, 50.0), "t_air_c"),
        (lambda: dew_point(-100.5, 50.0), "t_air_c"),
        (lambda: dew_point(100.5, 50.0), "t_air_c"),
        (lambda: frost_point(-150.0, 50.0), "t_air_c"),
        (lambda: surface_rh(20.0, 50.0, -120.0), "t_surface_c"),
        (lambda: surface_rh(20.0, 50.0, np.array([10.0, 101.0])), "t_surface_c"),
        (lambda: surface_rh(-150.0, 50.0, 10.0), "t_air_c"),
        (lambda: saturation_vapor_pressure(-100.5), "t_c"),
        (lambda: saturation_vapor_pressure(100.5, over="water"), "t_c"),
        (lambda: saturation_vapor_pressure(5.0, over="ice"), "t_c"),
        (lambda: surface_limit_temperature(150.0, 50.0), "t_air_c"),
    ],
)
def test_psychrometrics_refuses_temperatures_outside_the_formula_range(call, parameter):
    """Temperatures outside the range of the saturation formula raise, naming the parameter."""
    with pytest.raises(ValueError, match=parameter):
        call()


def test_dew_point_refuses_air_so_dry_its_dew_point_leaves_the_range():
    """A dew point that would be below −100 °C is refused, naming rh_pct."""
    # Source: at −60 °C and 0.01 % RH e = 1e−4·e_w(−60 °C) ≈ 2e−4 Pa, below psychrolib's
    # e_i(−100 °C) ≈ 1.4e−3 Pa (ASHRAE eq. 5): dew and frost point are both below −100 °C.
    e_pa = 1e-4 * hyland_wexler_water_pa(-60.0)
    assert e_pa < psychrolib.GetSatVapPres(-100.0)
    with pytest.raises(ValueError, match="rh_pct"):
        dew_point(-60.0, 0.01)
    with pytest.raises(ValueError, match="rh_pct"):
        surface_limit_temperature(-60.0, 0.01)


def test_frost_point_refuses_air_whose_frost_point_is_above_freezing():
    """Above 0.01 °C no ice forms: frost_point refuses and points to dew_point."""
    # Source: the ice formula's range ends at the triple point, 0.01 °C.
    with pytest.raises(ValueError, match="t_air_c and rh_pct.*dew_point"):
        frost_point(20.0, 80.0)


@pytest.mark.parametrize(
    "call",
    [
        lambda: dew_point(-100.0, 100.0),
        lambda: dew_point(100.0, 50.0),
        lambda: saturation_vapor_pressure(0.01, over="ice"),
        lambda: saturation_vapor_pressure(-100.0, over="ice"),
        lambda: surface_rh(20.0, 50.0, np.array([-100.0, 100.0, np.nan])),
    ],
)
def test_psychrometrics_accepts_the_ends_of_the_range(call):
    """The ends of the stated range are accepted and give finite numbers or NaN pixels."""
    # Source: the documented closed range (−100…+100 °C water, −100…+0.01 °C ice).
    result = np.asarray(call())
    assert np.isfinite(result[~np.isnan(result)]).all()


# --- one convention for surface limits -------------------------------------------------------


def hyland_wexler_limit_c(t_air_c: float, rh_pct: float, limit_pct: float) -> float:
    """θ where the HW saturation pressure (over ice below 0.01 °C) equals e/φ_limit."""
    # Source: ASHRAE Hyland–Wexler via psychrolib, inverted by scipy brentq; the air's e is
    # relative to liquid water (eq. 6 below 0 °C).
    if t_air_c > 0.01:
        e_pa = psychrolib.GetVapPresFromRelHum(t_air_c, rh_pct / 100.0)
    else:
        e_pa = rh_pct / 100.0 * hyland_wexler_water_pa(t_air_c)
    target = e_pa / (limit_pct / 100.0)
    return brentq(lambda t: psychrolib.GetSatVapPres(t) - target, -99.0, 99.0, xtol=1e-10)


@pytest.mark.parametrize(
    ("t_air_c", "rh_pct", "limit_pct"),
    [
        (20.0, 50.0, 80.0),  # mould limit, ISO 13788 θsi,min 12.63 °C (docs/references.md)
        (20.0, 65.0, 100.0),  # dew point above 0 °C
        (5.0, 60.0, 100.0),  # frost point below 0 °C
        (0.0, 80.0, 100.0),  # the case: frost point −2.68 °C
        (-10.0, 90.0, 80.0),  # mould limit below 0 °C (over ice)
        (10.0, 40.0, 80.0),
    ],
)
def test_surface_limit_temperature_matches_hyland_wexler(t_air_c, rh_pct, limit_pct):
    """The limit temperature uses water above and ice below 0 °C, as ISO 13788 does."""
    expected = hyland_wexler_limit_c(t_air_c, rh_pct, limit_pct)
    assert surface_limit_temperature(t_air_c, rh_pct, limit_pct) == pytest.approx(
        expected, abs=0.02
    )


def test_surface_limit_temperature_is_the_dew_point_or_the_frost_point():
    """At 100 % it equals dew_point at and above 0 °C and frost_point below."""
    # Source: definitions of dew and frost point (e_w(T_d) = e; e_i(T_f) = e).
    assert surface_limit_temperature(20.0, 65.0) == pytest.approx(dew_point(20.0, 65.0), abs=1e-9)
    assert surface_limit_temperature(0.0, 80.0) == pytest.approx(frost_point(0.0, 80.0), abs=1e-9)
    assert surface_limit_temperature(0.0, 80.0, over="water") == pytest.approx(
        dew_point(0.0, 80.0), abs=1e-9
    )


def test_surface_below_the_frost_point_is_flagged_and_margined_alike():
    """Air 0 °C, 80 %, surface −2.86 °C: surface RH ≥ 100 % and a negative margin, not +0.18 K."""
    # Source: psychrolib (ASHRAE Hyland–Wexler): e = 0.8·e_w(0 °C) (eq. 6, over water),
    # frost point from GetTDewPointFromVapPres (over ice below 0.01 °C), surface RH
    # = e / e_i(−2.86 °C) (GetSatVapPres, eq. 5). ISO 13788 reads the surface over ice.
    e_pa = 0.8 * hyland_wexler_water_pa(0.0)
    frost_c = psychrolib.GetTDewPointFromVapPres(0.0, e_pa)  # about −2.68 °C
    expected_rh = 100.0 * e_pa / psychrolib.GetSatVapPres(-2.86)  # about 101.5 %
    expected_margin = -2.86 - frost_c  # about −0.18 K

    rh = surface_rh(0.0, 80.0, -2.86)
    margin = condensation_margin_k(0.0, 80.0, -2.86)
    assert rh == pytest.approx(expected_rh, rel=1e-3)
    assert margin == pytest.approx(expected_margin, abs=0.01)
    assert rh >= 100.0 and margin < 0.0
    # The defect: a margin against the dew point over water is positive here.
    assert -2.86 - dew_point(0.0, 80.0) > 0.0
    # The temperature factor agrees too: fRsi below fRsi,min at the 100 % limit.
    f_rsi = temperature_factor(-2.86, 0.0, -10.0)
    assert f_rsi < critical_temperature_factor(0.0, 80.0, -10.0, limit_rh_pct=100.0)


def test_surface_margin_k_at_the_mould_limit_matches_iso_13788_case():
    """Air 20 °C 50 %: a 14 °C surface is 1.37 K above the 12.63 °C mould limit."""
    # Source: ISO 13788 θsi,min 12.63 °C for 20 °C 50 % (docs/references.md § Building
    # envelope, computed with IAPWS); 14 − 12.63 = 1.37 K by hand.
    assert surface_margin_k(20.0, 50.0, 14.0, limit_rh_pct=80.0) == pytest.approx(1.37, abs=0.01)


def test_surface_limit_temperature_is_0_c_where_water_and_ice_solutions_straddle_it():
    """Air saturated at 0 °C has its limit at 0 °C exactly, whichever branch is read."""
    # Source: e = e_w(0 °C) by construction (80 % air at 0 °C against an 80 % limit).
    assert surface_limit_temperature(0.0, 80.0, 80.0) == pytest.approx(0.0, abs=1e-9)


def test_critical_temperature_factor_is_the_limit_temperature_as_a_factor():
    """fRsi,min = fRsi of a surface at the limit temperature, over ice when below 0 °C."""
    # Source: ISO 13788 definition fRsi,min = (θsi,min − θe)/(θi − θe).
    for t_in, rh, t_out, limit in [(20.0, 50.0, -5.0, 80.0), (5.0, 60.0, -20.0, 100.0)]:
        theta_min = surface_limit_temperature(t_in, rh, limit)
        assert critical_temperature_factor(t_in, rh, t_out, limit) == pytest.approx(
            temperature_factor(theta_min, t_in, t_out), abs=1e-12
        )


@settings(max_examples=examples(150), deadline=None)
@given(
    t_air_c=temperatures,
    rh_pct=humidities,
    t_surface_c=st.floats(min_value=-40.0, max_value=50.0),
    limit_pct=st.sampled_from([80.0, 100.0]),
)
def test_surface_rh_flag_and_margin_always_agree(t_air_c, rh_pct, t_surface_c, limit_pct):
    """Surface RH at or above the limit exactly when the margin is at or below 0 K."""
    # Source: one convention (over ice below 0 °C) for both (property, no number).
    margin = surface_margin_k(t_air_c, rh_pct, t_surface_c, limit_pct)
    assume(abs(margin) > 1e-9)
    assert (surface_rh(t_air_c, rh_pct, t_surface_c) >= limit_pct) == (margin < 0.0)


def test_surface_rh_can_leave_out_of_range_pixels_as_nan():
    """With out_of_range="nan" a 150 °C flue pixel gives NaN and the others their value."""
    # Source: docs/references.md § Psychrometrics, air 20 °C 50 % at 12 °C → 83.4 %.
    pixels = np.array([12.0, 150.0, np.nan])
    result = surface_rh(20.0, 50.0, pixels, out_of_range="nan")
    assert result[0] == pytest.approx(83.4, abs=0.05)
    assert np.isnan(result[1]) and np.isnan(result[2])
    with pytest.raises(ValueError, match="t_surface_c"):
        surface_rh(20.0, 50.0, pixels)
    with pytest.raises(ValueError, match="out_of_range"):
        surface_rh(20.0, 50.0, pixels, out_of_range="clip")
