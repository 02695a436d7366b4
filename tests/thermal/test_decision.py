"""The guarded decision rule (ILAC-G8:2019) and the intervals it is applied to."""

import numpy as np
import psychrolib
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from survey.thermal.decision import (
    CANNOT_TELL,
    DECISIONS,
    EXCEEDED,
    NOT_EXCEEDED,
    decide,
    decide_interval,
    expanded_from_limit,
    surface_margin_interval_k,
    surface_rh_interval,
    temperature_factor_interval,
)
from survey.thermal.psychrometrics import (
    condensation_margin_k,
    surface_limit_temperature,
    surface_rh,
)
from tests.hypothesis_profiles import examples

psychrolib.SetUnitSystem(psychrolib.SI)


# Source for the decision cases: ILAC-G8:2019 §4.2.3, non-binary statement with a guard
# band w = U (docs/references.md § Decision rules and uncertainty): beyond the limit by
# more than U → exceeded; short of it by more than U → not exceeded; else cannot tell.
@pytest.mark.parametrize(
    ("value", "u", "limit", "direction", "expected"),
    [
        (18.0, 2.2, 15.0, "above", EXCEEDED),
        (16.0, 2.2, 15.0, "above", CANNOT_TELL),
        (14.0, 2.2, 15.0, "above", CANNOT_TELL),
        (12.0, 2.2, 15.0, "above", NOT_EXCEEDED),
        (17.2, 2.2, 15.0, "above", CANNOT_TELL),  # interval touches the limit
        (-3.0, 2.0, 0.0, "below", EXCEEDED),
        (-1.0, 2.0, 0.0, "below", CANNOT_TELL),
        (2.5, 2.0, 0.0, "below", NOT_EXCEEDED),
        (15.0, 0.0, 15.0, "above", CANNOT_TELL),  # exactly at the limit, no ±
        (15.1, 0.0, 15.0, "above", EXCEEDED),  # U = 0: simple acceptance
    ],
)
def test_decide_follows_the_guard_band_rule(value, u, limit, direction, expected):
    """Exceeded, not exceeded or cannot tell, with the guard band equal to U."""
    assert decide(value, u, limit, direction) == expected
    assert expected in DECISIONS


def test_decide_works_on_arrays():
    """Arrays of values give an array of decisions."""
    # Source: the scalar cases above, element by element.
    result = decide(np.array([18.0, 16.0, 12.0]), 2.2, 15.0)
    assert result.tolist() == [EXCEEDED, CANNOT_TELL, NOT_EXCEEDED]


def test_surface_rh_interval_straddling_100_percent_cannot_tell():
    """10.6 ± 2.2 °C with air at 98 % surface RH: about 85–114 %, cannot tell."""
    # Source: psychrolib (ASHRAE Hyland–Wexler): air 20 °C with the vapour pressure that
    # gives 98 % at 10.6 °C; surface RH at 12.8 and 8.4 °C = e / e_s(T). The issue quotes
    # "85–114 %" for this case.
    e_pa = 0.98 * psychrolib.GetSatVapPres(10.6)
    rh_pct = 100.0 * e_pa / psychrolib.GetSatVapPres(20.0)  # about 53.5 %
    expected_low = 100.0 * e_pa / psychrolib.GetSatVapPres(12.8)  # about 84.7 %
    expected_high = 100.0 * e_pa / psychrolib.GetSatVapPres(8.4)  # about 113.6 %

    assert surface_rh(20.0, rh_pct, 10.6) == pytest.approx(98.0, abs=0.05)
    low, high = surface_rh_interval(20.0, rh_pct, 10.6, 2.2)
    assert low == pytest.approx(expected_low, rel=1e-3)
    assert high == pytest.approx(expected_high, rel=1e-3)
    assert round(low) == 85 and round(high) == 114
    assert decide_interval(low, high, 100.0) == CANNOT_TELL
    # The same interval clearly exceeds the 80 % mould limit of ISO 13788.
    assert decide_interval(low, high, 80.0) == EXCEEDED


def test_surface_margin_interval_is_margin_plus_minus_u_for_a_surface_only_uncertainty():
    """With only the surface ± the margin interval is margin ± U, as psychrolib gives it."""
    # Source: psychrolib frost point of air 0 °C 80 % (e over water by Hyland–Wexler eq. 6,
    # frost point over ice by GetTDewPointFromVapPres): margin = −2.86 − T_frost.
    t = 273.15
    e_water_0c = np.exp(
        -5.8002206e03 / t
        + 1.3914993
        - 4.8640239e-02 * t
        + 4.1764768e-05 * t**2
        - 1.4452093e-08 * t**3
        + 6.5459673 * np.log(t)
    )
    frost_c = psychrolib.GetTDewPointFromVapPres(0.0, 0.8 * e_water_0c)
    low, high = surface_margin_interval_k(0.0, 80.0, -2.86, 2.0)
    assert low == pytest.approx(-2.86 - 2.0 - frost_c, abs=0.01)
    assert high == pytest.approx(-2.86 + 2.0 - frost_c, abs=0.01)
    assert decide_interval(low, high, 0.0, "below") == CANNOT_TELL


def test_surface_rh_interval_widens_with_air_uncertainties():
    """Air temperature and RH ± widen the interval at both ends (worst case)."""
    # Source: monotonicity of surface RH in each input (property); the ends by hand from
    # surface_rh at the interval corners.
    low, high = surface_rh_interval(20.0, 50.0, 12.0, 1.0, t_air_u_c=0.5, rh_u_pct=3.0)
    assert low == pytest.approx(surface_rh(19.5, 47.0, 13.0), rel=1e-12)
    assert high == pytest.approx(surface_rh(20.5, 53.0, 11.0), rel=1e-12)
    narrow = surface_rh_interval(20.0, 50.0, 12.0, 1.0)
    assert low < narrow[0] and high > narrow[1]


def test_surface_rh_interval_caps_the_air_rh_at_100_percent():
    """Air RH + U above 100 % is read as saturated air."""
    # Source: air cannot hold more than saturated vapour (definition of RH).
    _, high = surface_rh_interval(20.0, 99.0, 15.0, 0.5, rh_u_pct=3.0)
    assert high == pytest.approx(surface_rh(20.0, 100.0, 14.5), rel=1e-12)


def test_temperature_factor_interval_is_factor_plus_minus_u_over_delta_t():
    """fRsi 0.70 ± 2 K over a 20 K difference is 0.60 to 0.80."""
    # Source: ISO 13788 definition fRsi = (θsi − θe)/(θi − θe), by hand.
    low, high = temperature_factor_interval(14.0, 2.0, 20.0, 0.0)
    assert (low, high) == (pytest.approx(0.6), pytest.approx(0.8))


def test_expanded_from_limit_treats_an_accuracy_limit_as_rectangular():
    """±2 °C accuracy → standard uncertainty 2/√3, U = 2·2/√3 ≈ 2.31 K."""
    # Source: GUM (JCGM 100:2008) 4.3.7, rectangular distribution u = a/√3; k = 2.
    assert expanded_from_limit(2.0) == pytest.approx(2.0 * 2.0 / np.sqrt(3.0), rel=1e-12)


@settings(max_examples=examples(150), deadline=None)
@given(
    t_air_c=st.floats(min_value=-20.0, max_value=35.0),
    rh_pct=st.floats(min_value=20.0, max_value=95.0),
    t_surface_c=st.floats(min_value=-25.0, max_value=30.0),
    u_c=st.floats(min_value=0.0, max_value=3.0),
    limit_pct=st.sampled_from([80.0, 100.0]),
)
def test_rh_and_margin_decisions_always_agree(t_air_c, rh_pct, t_surface_c, u_c, limit_pct):
    """Deciding on surface RH or on the margin in K gives the same word."""
    # Source: one convention (over ice below 0 °C) for RH and limit temperature (property).
    low, high = surface_rh_interval(t_air_c, rh_pct, t_surface_c, u_c)
    m_low, m_high = surface_margin_interval_k(
        t_air_c, rh_pct, t_surface_c, u_c, limit_rh_pct=limit_pct
    )
    assume(min(abs(m_low), abs(m_high)) > 1e-9)
    assert decide_interval(low, high, limit_pct) == decide_interval(m_low, m_high, 0.0, "below")


def test_margin_interval_centre_is_the_condensation_margin():
    """The margin interval is centred on condensation_margin_k for a surface-only ±."""
    # Source: θ_lim does not depend on the surface temperature (definition).
    low, high = surface_margin_interval_k(20.0, 50.0, 12.0, 1.5)
    assert (low + high) / 2 == pytest.approx(condensation_margin_k(20.0, 50.0, 12.0))
    assert 12.0 - surface_limit_temperature(20.0, 50.0) == pytest.approx((low + high) / 2)


@pytest.mark.parametrize(
    ("call", "parameter"),
    [
        (lambda: decide(10.0, -1.0, 15.0), "uncertainty"),
        (lambda: decide(float("nan"), 1.0, 15.0), "value"),
        (lambda: decide(10.0, 1.0, 15.0, direction="up"), "direction"),
        (lambda: decide_interval(12.0, 10.0, 15.0), "low"),
        (lambda: surface_rh_interval(20.0, 50.0, 12.0, -0.5), "t_surface_u_c"),
        (lambda: surface_rh_interval(20.0, 2.0, 12.0, 0.5, rh_u_pct=3.0), "rh_u_pct"),
        (lambda: surface_margin_interval_k(20.0, 50.0, 12.0, 1.0, t_air_u_c=-1.0), "t_air_u_c"),
        (lambda: surface_rh_interval(20.0, 50.0, 99.5, 1.0), "t_surface_c"),
        (lambda: expanded_from_limit(-2.0), "limit_u"),
        (lambda: temperature_factor_interval(14.0, 1.0, 20.0, 20.0), "t_outside_c"),
    ],
)
def test_decision_invalid_input_raises_naming_the_parameter(call, parameter):
    """Invalid input raises ValueError whose message names the parameter."""
    # Source: DESIGN.md contract (ValueError naming the parameter).
    with pytest.raises(ValueError, match=parameter):
        call()


@pytest.mark.parametrize(
    ("terms", "expected"),
    [
        # 3-4-5 triangle; JCGM 100:2008 (GUM) 5.1.2 with unit sensitivities, by hand.
        ([3.0, 4.0], 5.0),
        ([0.23, 0.18], 0.29206164),  # √(0.0529 + 0.0324), by hand
        ([2.0], 2.0),
        ([], 0.0),
    ],
)
def test_root_sum_square_combines_independent_terms(terms, expected):
    """The expanded uncertainty of a sum of independent terms is √(ΣUᵢ²)."""
    from survey.thermal.decision import root_sum_square

    assert root_sum_square(terms) == pytest.approx(expected, abs=1e-8)


def test_root_sum_square_refuses_a_negative_term():
    from survey.thermal.decision import root_sum_square

    with pytest.raises(ValueError, match="uncertainties"):
        root_sum_square([1.0, -0.5])
