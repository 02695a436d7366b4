"""Radiometric correction against an independent Planck integration with scipy.

The reference solver (tests/thermal/planck.py) integrates Planck's law over 8–14 µm with
scipy.integrate.quad and solves the measurement equation with scipy.optimize.brentq, using
scipy.constants: it shares no code and no table with the project.
"""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import constants
from scipy.optimize import brentq

from survey.thermal.radiometry import (
    REFLECTS_MORE_THAN_EMITS,
    apparent_temperature,
    band_radiance,
    emissivity_warning,
    object_temperature,
    object_temperature_uncertainty,
)
from tests.hypothesis_profiles import examples
from tests.thermal.planck import reference_object_c, reference_radiance

CASES = [
    # apparent, emissivity, reflected, transmittance, atmosphere
    (30.0, 0.95, 20.0, 1.0, None),
    (80.0, 0.90, 25.0, 1.0, None),
    (100.0, 0.95, 20.0, 1.0, None),
    (60.0, 0.95, 20.0, 0.95, None),
    (60.0, 0.85, 20.0, 0.90, 5.0),
    (0.0, 0.95, -10.0, 1.0, None),
    (22.0, 0.95, 35.0, 1.0, None),
    (40.0, 0.30, 20.0, 1.0, None),
    (40.0, 0.10, 20.0, 1.0, None),
    (-30.0, 0.90, -55.0, 1.0, None),
    (450.0, 0.80, 30.0, 0.97, 25.0),
    (600.0, 0.95, 40.0, 1.0, None),
]


@pytest.mark.parametrize("band", ["lwir", "total"])
@pytest.mark.parametrize(("apparent", "eps", "reflected", "tau", "atmosphere"), CASES)
def test_object_temperature_matches_scipy_planck_integration(
    band, apparent, eps, reflected, tau, atmosphere
):
    """Object temperature agrees with quad + brentq within 0.01 K, in both bands."""
    # Source: independent scipy quad/brentq solution of the measurement equation above.
    expected = reference_object_c(apparent, eps, reflected, tau, atmosphere, band)
    result = object_temperature(apparent, eps, reflected, tau, atmosphere, band)
    assert result == pytest.approx(expected, abs=0.01)


@pytest.mark.parametrize(
    ("apparent", "eps", "reflected", "tau", "total", "lwir"),
    [
        # Source: scipy quad + brentq, listed in docs/references.md § Radiometry (3 decimals).
        (30.0, 0.95, 20.0, 1.0, 30.500, 30.502),
        (80.0, 0.90, 25.0, 1.0, 84.730, 84.999),
        (100.0, 0.95, 20.0, 1.0, 103.003, 103.264),
        (60.0, 0.95, 20.0, 0.95, 63.546, 63.664),
        (0.0, 0.95, -10.0, 1.0, 0.497, 0.495),
        (22.0, 0.95, 35.0, 1.0, 21.267, 21.271),
    ],
)
def test_object_temperature_matches_published_check_table(
    apparent, eps, reflected, tau, total, lwir
):
    """The check table of docs/references.md § Radiometry is reproduced to its stated 0.001 K."""
    assert object_temperature(apparent, eps, reflected, tau, band="total") == pytest.approx(
        total, abs=0.0015
    )
    assert object_temperature(apparent, eps, reflected, tau) == pytest.approx(lwir, abs=0.0015)


@pytest.mark.parametrize("object_c", [-50.0, -20.0, 0.0, 37.0, 120.0, 250.0, 400.0, 650.0])
def test_object_temperature_table_is_accurate_across_the_stated_range(object_c):
    """From −50 to +650 °C the long-wave table keeps the corrected reading within 0.01 K."""
    # Source: scipy quad in the test; apparent built from the exact integral, then
    # corrected with a mid emissivity so both directions of the table are exercised.
    eps, reflected = 0.6, 15.0
    measured = eps * reference_radiance(object_c, "lwir") + (1 - eps) * reference_radiance(
        reflected, "lwir"
    )
    apparent = brentq(lambda t: reference_radiance(t, "lwir") - measured, -99.0, 999.0, xtol=1e-10)
    assert object_temperature(apparent, eps, reflected) == pytest.approx(object_c, abs=0.01)
    assert apparent_temperature(object_c, eps, reflected) == pytest.approx(apparent, abs=0.01)


@pytest.mark.parametrize("t_c", [-100.0, -50.0, 0.0, 300.0, 1000.0])
def test_band_radiance_matches_adaptive_quadrature(t_c):
    """The Simpson integration of the table agrees with scipy quad to 1e-9."""
    # Source: scipy quad (epsrel 1e-12) in the test.
    assert band_radiance(t_c) == pytest.approx(reference_radiance(t_c, "lwir"), rel=1e-9)


def test_band_radiance_total_is_stefan_boltzmann():
    """The total band is σT⁴ with the CODATA σ."""
    # Source: scipy.constants.sigma (CODATA 2018).
    assert band_radiance(100.0, "total") == pytest.approx(constants.sigma * 373.15**4, rel=1e-12)


@pytest.mark.parametrize("band", ["lwir", "total"])
@pytest.mark.parametrize("apparent", [10.0, 40.0])
def test_object_temperature_refuses_a_surface_that_reflects_more_than_it_emits(band, apparent):
    """A reading far below the reflected temperature at low ε raises the re-measure message."""
    # Source: measurement equation: ε·W(T_obj) = W_meas − (1 − ε)·W(T_refl) < 0 here.
    with pytest.raises(ValueError) as error:
        object_temperature(apparent, 0.10, 80.0, band=band)
    assert str(error.value) == REFLECTS_MORE_THAN_EMITS
    assert "reflects more than it emits" in str(error.value)


def test_object_temperature_can_mark_impossible_pixels_as_nan():
    """With out_of_range="nan" only the impossible pixels become NaN."""
    # Source: the 30 °C pixel is the docs/references.md § Radiometry check value at ε 0.95; at −90
    # °C the
    # corrected radiance lies below that of the −100 °C table floor.
    result = object_temperature(np.array([-90.0, 30.0]), 0.95, 20.0, out_of_range="nan")
    assert np.isnan(result[0])
    assert result[1] == pytest.approx(30.502, abs=0.0015)


def test_object_temperature_passes_nan_pixels_through():
    """A pixel without data gives NaN; the rest are corrected."""
    # Source: the 80 °C pixel is the docs/references.md § Radiometry check value.
    result = object_temperature(np.array([[80.0, np.nan]], dtype=np.float32), 0.90, 25.0)
    assert result.shape == (1, 2)
    assert result[0, 0] == pytest.approx(84.999, abs=0.0015)
    assert np.isnan(result[0, 1])


@pytest.mark.parametrize(
    ("call", "parameter"),
    [
        (lambda: object_temperature(30.0, 0.0, 20.0), "emissivity"),
        (lambda: object_temperature(30.0, 1.01, 20.0), "emissivity"),
        (lambda: object_temperature(30.0, float("nan"), 20.0), "emissivity"),
        (lambda: object_temperature(30.0, 0.9, 20.0, transmittance=0.0), "transmittance"),
        (lambda: object_temperature(30.0, 0.9, 20.0, transmittance=1.2), "transmittance"),
        (lambda: object_temperature(30.0, 0.9, float("nan")), "reflected_c"),
        (lambda: object_temperature(30.0, 0.9, 20.0, atmosphere_c=-300.0), "atmosphere_c"),
        (lambda: object_temperature(30.0, 0.9, 20.0, band="mwir"), "band"),
        (lambda: object_temperature(1500.0, 0.9, 20.0), "apparent_c"),
        (lambda: object_temperature(np.array([20.0, np.inf]), 0.9, 20.0), "apparent_c"),
        (lambda: object_temperature(30.0, 0.9, 20.0, out_of_range="clip"), "out_of_range"),
        (lambda: apparent_temperature(-150.0, 0.9, 20.0), "object_c"),
        (lambda: object_temperature_uncertainty(30.0, 0.9, 20.0, -0.1, 1.0, 1.0), "emissivity_u"),
        (lambda: object_temperature_uncertainty(30.0, 0.9, 20.0, 0.02, -1, 1.0), "reflected_u_c"),
        (lambda: object_temperature_uncertainty(30.0, 0.9, 20.0, 0.02, 1, None), "camera_u_c"),
        (lambda: emissivity_warning(0.0), "emissivity"),
    ],
)
def test_radiometry_invalid_input_raises_naming_the_parameter(call, parameter):
    """Invalid input raises ValueError whose message names the parameter."""
    # Source: DESIGN.md contract (ValueError naming the parameter).
    with pytest.raises(ValueError, match=parameter):
        call()


def reference_sensitivity(apparent, eps, reflected, which, step):
    """Central difference of the scipy reference solution."""
    arguments = {"apparent": apparent, "eps": eps, "reflected": reflected}
    high, low = dict(arguments), dict(arguments)
    high[which] += step
    low[which] -= step
    return (reference_object_c(**high) - reference_object_c(**low)) / (2 * step)


@pytest.mark.parametrize("eps", [0.95, 0.6, 0.1])
def test_object_temperature_uncertainty_matches_gum_propagation_with_scipy(eps):
    """Quadrature of the three terms matches GUM propagation through the scipy solver (2 %)."""
    # Source: GUM (JCGM 100:2008) law of propagation, sensitivities from the scipy reference.
    apparent = apparent_temperature(60.0, eps, 20.0)
    u_eps, u_reflected, u_camera = 0.02, 2.0, 1.5
    expected = math.sqrt(
        (reference_sensitivity(apparent, eps, 20.0, "eps", 1e-4) * u_eps) ** 2
        + (reference_sensitivity(apparent, eps, 20.0, "reflected", 0.05) * u_reflected) ** 2
        + (reference_sensitivity(apparent, eps, 20.0, "apparent", 0.05) * u_camera) ** 2
    )
    result = object_temperature_uncertainty(apparent, eps, 20.0, u_eps, u_reflected, u_camera)
    assert result == pytest.approx(expected, rel=0.02)


def test_object_temperature_uncertainty_is_large_at_low_emissivity():
    """±0.02 in ε is about ±0.7 K at ε 0.95 but several kelvin at ε 0.1."""
    # Source: docs/references.md § Radiometry, sensitivity (true 60 °C, reflected 20 °C, 8–14 µm):
    # ±0.7 K at
    # ε 0.95, +8/−6 K at ε 0.1 (computed with scipy).
    high = object_temperature_uncertainty(
        apparent_temperature(60.0, 0.95, 20.0), 0.95, 20.0, 0.02, 0, 0
    )
    low = object_temperature_uncertainty(
        apparent_temperature(60.0, 0.10, 20.0), 0.10, 20.0, 0.02, 0, 0
    )
    assert high == pytest.approx(0.7, abs=0.1)
    assert 6.0 <= low <= 8.0


def test_object_temperature_uncertainty_total_band_matches_the_analytic_derivative():
    """For σT⁴ the reflected-temperature sensitivity is −(1−ε)·T_r³/(ε·T³)."""
    # Source: derivative of T⁴ = [T_app⁴ − (1 − ε)·T_r⁴]/ε, worked by hand.
    eps, apparent, reflected = 0.8, 50.0, 20.0
    t_obj = object_temperature(apparent, eps, reflected, band="total") + 273.15
    expected = (1 - eps) * (reflected + 273.15) ** 3 / (eps * t_obj**3) * 3.0
    result = object_temperature_uncertainty(apparent, eps, reflected, 0.0, 3.0, 0.0, "total")
    assert result == pytest.approx(expected, rel=1e-4)


@pytest.mark.parametrize(
    ("eps", "expected"),
    [
        # Source: common practice, no source (thresholds 0.6 and 0.3 from the issue).
        (1.0, None),
        (0.6, None),
        (0.59, "uncertain"),
        (0.3, "uncertain"),
        (0.29, "not_quantitative"),
        (0.05, "not_quantitative"),
    ],
)
def test_emissivity_warning_thresholds(eps, expected):
    """Below 0.6 a reading is uncertain, below 0.3 not quantitative."""
    assert emissivity_warning(eps) == expected


temperatures = st.floats(min_value=-40.0, max_value=600.0)
emissivities = st.floats(min_value=0.5, max_value=1.0)
reflected_temperatures = st.floats(min_value=-40.0, max_value=60.0)


@settings(max_examples=examples(80), deadline=None)
@given(
    object_c=temperatures,
    eps=emissivities,
    reflected=reflected_temperatures,
    tau=st.floats(min_value=0.7, max_value=1.0),
    band=st.sampled_from(["lwir", "total"]),
)
def test_apparent_and_object_temperature_round_trip(object_c, eps, reflected, tau, band):
    """object_temperature(apparent_temperature(x)) == x within 0.001 K."""
    # Source: the two functions solve the same equation (property, no number).
    apparent = apparent_temperature(object_c, eps, reflected, tau, band=band)
    back = object_temperature(apparent, eps, reflected, tau, band=band)
    assert back == pytest.approx(object_c, abs=1e-3)


@settings(max_examples=examples(80), deadline=None)
@given(
    a=st.floats(min_value=0.0, max_value=300.0),
    b=st.floats(min_value=0.0, max_value=300.0),
    eps=emissivities,
    reflected=st.floats(min_value=-20.0, max_value=0.0),
)
def test_object_temperature_rises_with_apparent_temperature(a, b, eps, reflected):
    """A warmer apparent reading never gives a colder object."""
    # Source: the measurement equation is monotone in T_obj (property, no number).
    low, high = sorted((a, b))
    assert object_temperature(low, eps, reflected) <= object_temperature(high, eps, reflected)


@settings(max_examples=examples(30), deadline=None)
@given(
    apparent=st.lists(st.floats(min_value=0.0, max_value=200.0), min_size=1, max_size=4),
    emissivity=st.lists(emissivities, min_size=1, max_size=3),
)
def test_object_temperature_broadcasts_like_numpy(apparent, emissivity):
    """Arrays of apparent temperature and emissivity broadcast to their combined shape."""
    # Source: numpy broadcasting rules (property, no number).
    grid = object_temperature(
        np.array(apparent)[:, np.newaxis], np.array(emissivity)[np.newaxis, :], 10.0
    )
    assert grid.shape == (len(apparent), len(emissivity))
    for i, t in enumerate(apparent):
        for j, e in enumerate(emissivity):
            assert grid[i, j] == pytest.approx(object_temperature(t, e, 10.0), abs=1e-9)


@settings(max_examples=examples(40), deadline=None)
@given(eps=st.one_of(st.floats(max_value=0.0), st.floats(min_value=1.000001)))
def test_object_temperature_refuses_emissivity_outside_0_to_1(eps):
    """Any emissivity outside (0, 1] (or NaN) raises ValueError naming emissivity."""
    # Source: DESIGN.md contract.
    with pytest.raises(ValueError, match="emissivity"):
        object_temperature(30.0, eps, 20.0)
