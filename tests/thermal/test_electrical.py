"""Load correction and the severity table of electrical findings."""

import json

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from survey.thermal.electrical import (
    DEFAULT_CRITERIA,
    RiseClassification,
    classify_rise,
    default_criteria,
    load_corrected_rise,
    load_is_too_low,
)
from tests.hypothesis_profiles import examples


@pytest.mark.parametrize(
    ("exponent", "expected_c"),
    [
        # Source: 10 K at 40 % load, computed by hand (docs/references.md § Electrical and
        # mechanical ranking).
        (1.6, 43.32),
        (1.8, 52.03),
        (2.0, 62.50),
    ],
)
def test_load_corrected_rise_matches_check_values(exponent, expected_c):
    """ΔT·(100/load)^n for 10 K at 40 % load."""
    assert load_corrected_rise(10.0, 40.0, exponent) == pytest.approx(expected_c, abs=0.005)


def test_load_corrected_rise_defaults_to_i_squared_r():
    """The default exponent equals two (I²R heating)."""
    # Source: I²R scaling by hand: 8 K at 50 % load → 8·(100/50)² = 32 K.
    assert load_corrected_rise(8.0, 50.0) == pytest.approx(32.0)
    assert load_corrected_rise(8.0, 100.0) == pytest.approx(8.0)


@pytest.mark.parametrize(
    ("load_pct", "too_low"),
    [
        # Source: NFPA 70B, inspect at ≥ 40 % of normal load (secondary sources).
        (10.0, True),
        (39.9, True),
        (40.0, False),
        (100.0, False),
        (150.0, False),
    ],
)
def test_load_is_too_low_below_40_percent(load_pct, too_low):
    """The low-load flag is set below 40 % and clear from 40 % up."""
    assert load_is_too_low(load_pct) is too_low


def test_load_is_too_low_works_on_arrays():
    """The flag broadcasts with the loads."""
    # Source: NFPA 70B 40 % threshold, element by element.
    assert load_is_too_low(np.array([20.0, 60.0])).tolist() == [True, False]


@pytest.mark.parametrize("load_pct", [0.0, -5.0, 150.01, float("nan")])
def test_load_corrected_rise_refuses_loads_outside_0_to_150(load_pct):
    """Load ≤ 0 or above 150 % raises ValueError naming load_pct."""
    # Source: the accepted load range (0, 150] %.
    with pytest.raises(ValueError, match="load_pct"):
        load_corrected_rise(5.0, load_pct)
    with pytest.raises(ValueError, match="load_pct"):
        load_is_too_low(load_pct)


@pytest.mark.parametrize(
    ("call", "parameter"),
    [
        (lambda: load_corrected_rise(float("nan"), 50.0), "rise_c"),
        (lambda: load_corrected_rise(5.0, 50.0, exponent=0.5), "exponent"),
        (lambda: classify_rise(float("nan"), "similar"), "rise_c"),
        (lambda: classify_rise([1.0, 2.0], "similar"), "rise_c"),
        (lambda: classify_rise(5.0, "neighbour"), "basis"),
        (lambda: classify_rise(5.0, "similar", table=[1, 2]), "table"),
        (lambda: classify_rise(5.0, "similar", table={"ambient": {"rows": []}}), "table"),
        (lambda: classify_rise(5.0, "similar", table={"rows": [{"label": "x"}]}), "table"),
    ],
)
def test_electrical_invalid_input_raises_naming_the_parameter(call, parameter):
    """Invalid input raises ValueError whose message names the parameter."""
    # Source: DESIGN.md contract (ValueError naming the parameter).
    with pytest.raises(ValueError, match=parameter):
        call()


# Source for both tables: NETA Maintenance Testing Specifications, thermographic survey
# table, recalled from memory (bands well remembered, docs/references.md § Electrical).
# Integer bands read
# as the intervals (−∞, 1), [1, 3], (3, 15], (15, ∞) and (−∞, 1), [1, 10], (10, 20],
# (20, 40], (40, ∞), as documented in electrical.DEFAULT_CRITERIA.
@pytest.mark.parametrize(
    ("rise_c", "level"),
    [(-4.0, None), (0.99, None), (1.0, 4), (3.0, 4), (3.01, 3), (15.0, 3), (15.01, 1), (80, 1)],
)
def test_classify_rise_similar_table_boundaries(rise_c, level):
    """Rises against a similar component fall in the documented half-open bands."""
    assert classify_rise(rise_c, "similar").level == level


@pytest.mark.parametrize(
    ("rise_c", "level"),
    [
        (0.99, None),
        (1.0, 4),
        (10.0, 4),
        (10.01, 3),
        (20.0, 3),
        (20.01, 2),
        (40.0, 2),
        (40.01, 1),
    ],
)
def test_classify_rise_ambient_table_boundaries(rise_c, level):
    """Rises over ambient air fall in the documented half-open bands."""
    assert classify_rise(rise_c, "ambient").level == level


def test_classify_rise_returns_action_row_basis_and_table():
    """The result names the action, the matched row, the basis and the table read."""
    # Source: NETA MTS wording for a 4–15 °C rise over a similar component (from memory).
    result = classify_rise(7.5, "similar")
    assert result == RiseClassification(
        level=3,
        action="Probable deficiency; repair as time permits.",
        row="over 3 to 15 °C",
        basis="similar",
        table=DEFAULT_CRITERIA["similar"]["name"],
    )
    assert "from memory" in result.table


def test_classify_rise_reads_an_organization_table_of_the_same_shape():
    """A copied and edited table (whole mapping or one CriteriaTable) is used instead."""
    # Source: an invented organization table (stricter bands), no outside source needed.
    edited = default_criteria()
    edited["similar"]["name"] = "Northwind stricter table"
    edited["similar"]["rows"][2]["up_to_c"] = 8.0
    assert classify_rise(10.0, "similar", table=edited).level == 1
    assert classify_rise(10.0, "similar", table=edited["similar"]).table == (
        "Northwind stricter table"
    )
    assert classify_rise(10.0, "similar").level == 3


def test_default_criteria_is_plain_json_data_and_copies_are_independent():
    """The default table survives a JSON round trip and editing a copy leaves it alone."""
    # Source: requirement that the table is data an organization can copy and edit.
    assert json.loads(json.dumps(DEFAULT_CRITERIA)) == DEFAULT_CRITERIA
    copy = default_criteria()
    copy["ambient"]["rows"][1]["level"] = 1
    assert DEFAULT_CRITERIA["ambient"]["rows"][1]["level"] == 4


@settings(max_examples=examples(100), deadline=None)
@given(
    a=st.floats(min_value=-20.0, max_value=200.0),
    b=st.floats(min_value=-20.0, max_value=200.0),
    basis=st.sampled_from(["similar", "ambient"]),
)
def test_classify_rise_never_gets_less_urgent_as_the_rise_grows(a, b, basis):
    """A larger rise never gets a less urgent level (1 most urgent, no finding least)."""

    # Source: ordering of the NETA bands (property, no number).
    def urgency(rise):
        level = classify_rise(rise, basis).level
        return 5 if level is None else level

    low, high = sorted((a, b))
    assert urgency(high) <= urgency(low)


@settings(max_examples=examples(50), deadline=None)
@given(
    rise=st.lists(st.floats(min_value=0.0, max_value=50.0), min_size=1, max_size=4),
    load=st.lists(st.floats(min_value=1.0, max_value=150.0), min_size=1, max_size=3),
)
def test_load_corrected_rise_broadcasts_and_grows_as_load_falls(rise, load):
    """Arrays broadcast; the corrected rise is at least the measured one below 100 % load."""
    # Source: numpy broadcasting and (100/load)^n ≥ 1 for load ≤ 100 (property).
    grid = load_corrected_rise(np.array(rise)[:, np.newaxis], np.array(load)[np.newaxis, :])
    assert grid.shape == (len(rise), len(load))
    for j, value in enumerate(load):
        if value <= 100.0:
            assert np.all(grid[:, j] >= np.array(rise) - 1e-12)
