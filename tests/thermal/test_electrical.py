"""Load correction and the severity table of electrical findings."""

import json
import math
from decimal import Decimal

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from survey.thermal.electrical import (
    DEFAULT_CRITERIA,
    RISE_METHODS,
    RiseClassification,
    classify_rise,
    default_criteria,
    like_component_rise_c,
    load_corrected_rise,
    load_is_too_low,
    round_rise_c,
)
from tests.hypothesis_profiles import examples


@pytest.mark.parametrize(
    ("exponent", "expected_c"),
    [
        # Source: 10 K at 40 % load, docs/references.md § Electrical and mechanical ranking
        # (computed by hand: 10·2.5^n).
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
# table, bands recalled from memory (docs/references.md § Electrical and mechanical
# ranking). Rises are classified at the 0.1 K they are shown, so the integer bands read as
# [1.0, 3.0] 4, [3.1, 15.0] 3, ≥ 15.1 1 (similar) and [1.0, 10.0] 4, [10.1, 20.0] 3,
# [20.1, 40.0] 2, ≥ 40.1 1 (ambient), as documented in electrical.DEFAULT_CRITERIA.
# Each rise is a difference of two one-decimal readings (hot − reference), as a
# thermographer computes it; the pairs at a limit are chosen so that the binary
# difference lands a hair on the wrong side of it (e.g. 32.2 − 29.2 = 3.0000000000000036).
SIMILAR_LIMITS = [
    ((1.4, 0.4), 4),  # the case: 0.9999999999999999
    ((32.3, 31.3), 4),  # 0.9999999999999964
    ((32.2, 31.3), None),  # 0.9 K
    ((4.4, 1.4), 4),  # the case: 3.0000000000000004
    ((32.2, 29.2), 4),  # 3.0000000000000036
    ((32.3, 29.2), 3),  # 3.1 K
    ((35.2, 20.2), 3),  # 15.000000000000004
    ((35.3, 20.2), 1),  # 15.1 K
    ((35.1, 20.2), 3),  # 14.9 K
]
AMBIENT_LIMITS = [
    ((32.3, 31.3), 4),  # 0.9999999999999964
    ((32.2, 22.2), 4),  # 10.000000000000004
    ((32.3, 22.2), 3),  # 10.1 K
    ((40.2, 20.2), 3),  # 20.000000000000004
    ((40.3, 20.2), 2),  # 20.1 K
    ((64.4, 24.4), 2),  # 40.00000000000001
    ((64.5, 24.4), 1),  # 40.1 K
    ((64.3, 24.4), 2),  # 39.9 K
]


@pytest.mark.parametrize(("readings", "level"), SIMILAR_LIMITS)
def test_classify_rise_similar_limits_read_the_printed_rise(readings, level):
    """A rise over a like component lands in the band its printed 0.1 K value says."""
    hot_c, reference_c = readings
    result = classify_rise(hot_c - reference_c, "similar")
    assert result.level == level
    assert f"{result.rise_c:.1f}" == f"{Decimal(str(hot_c)) - Decimal(str(reference_c)):.1f}"


@pytest.mark.parametrize(("readings", "level"), AMBIENT_LIMITS)
def test_classify_rise_ambient_limits_read_the_printed_rise(readings, level):
    """A rise over the ambient air lands in the band its printed 0.1 K value says."""
    hot_c, air_c = readings
    assert classify_rise(hot_c - air_c, "ambient").level == level


def decimal_level(rise: Decimal, basis: str):
    """Level of an exact decimal rise, from the documented intervals (decimal arithmetic)."""
    # Source: NETA bands from memory, read at 0.1 K as documented above.
    bands = {
        "similar": [("1.0", None), ("3.0", 4), ("15.0", 3)],
        "ambient": [("1.0", None), ("10.0", 4), ("20.0", 3), ("40.0", 2)],
    }[basis]
    if rise < Decimal(bands[0][0]):
        return None
    for limit, level in bands[1:]:
        if rise <= Decimal(limit):
            return level
    return 1


@settings(max_examples=examples(300), deadline=None)
@given(
    hot_tenths=st.integers(min_value=-400, max_value=1500),
    reference_tenths=st.integers(min_value=-400, max_value=1500),
    basis=st.sampled_from(["similar", "ambient"]),
)
def test_classify_rise_of_one_decimal_readings_matches_decimal_arithmetic(
    hot_tenths, reference_tenths, basis
):
    """Any difference of one-decimal readings is classified as its exact decimal value."""
    # Source: Python's decimal module (exact decimal subtraction) against the float path.
    hot, reference = hot_tenths / 10, reference_tenths / 10
    exact = Decimal(hot_tenths - reference_tenths) / 10
    result = classify_rise(hot - reference, basis)
    assert result.level == decimal_level(exact, basis)
    assert result.rise_c == float(exact)


@pytest.mark.parametrize(
    ("rise_c", "expected"),
    [
        # Source: round half away from zero at 0.1 K, by hand.
        (2.95, 3.0),
        (2.94999, 2.9),
        (-2.95, -3.0),
        (1.15, 1.2),  # 1.15 is 1.149999… in binary; read as the decimal half
        (0.04, 0.0),
        (-0.04, 0.0),
        (107.94, 107.9),
    ],
)
def test_round_rise_c_rounds_half_away_from_zero_at_0_1_k(rise_c, expected):
    """Rises round to 0.1 K, halves away from zero, never to −0.0."""
    result = round_rise_c(rise_c)
    assert result == expected
    assert math.copysign(1.0, result) == math.copysign(1.0, expected)


def test_round_rise_c_works_on_arrays():
    """An array of rises is rounded element by element."""
    # Source: the scalar cases above.
    assert round_rise_c(np.array([2.95, 4.4 - 1.4, -0.04])).tolist() == [3.0, 3.0, 0.0]


def test_classify_rise_returns_action_row_basis_table_and_the_row_used():
    """The result names the action, the matched row, its limits, the basis and the table."""
    # Source: the (3, 15] row of the NETA similar-component table (bands from memory).
    result = classify_rise(7.46, "similar")
    row = DEFAULT_CRITERIA["similar"]["rows"][1]
    assert result == RiseClassification(
        level=3,
        action=row["action"],
        row="over 3 to 15 °C",
        basis="similar",
        table=DEFAULT_CRITERIA["similar"]["name"],
        rise_c=7.5,
        row_index=1,
        interval="over 3 to 15 K",
    )
    assert result.as_dict()["row_index"] == 1
    assert json.loads(json.dumps(result.as_dict()))["rise_c"] == 7.5


@pytest.mark.parametrize(
    ("basis", "rise_c", "interval"),
    [
        ("similar", 0.5, "below 1 K"),
        ("similar", 2.0, "1 to 3 K"),
        ("similar", 20.0, "over 15 K"),
        ("ambient", 30.0, "over 20 to 40 K"),
    ],
)
def test_classify_rise_names_the_interval_of_the_row(basis, rise_c, interval):
    """The matched row's limits are given in numbers as documented."""
    # Source: the documented reading of DEFAULT_CRITERIA's rows.
    assert classify_rise(rise_c, basis).interval == interval


def test_default_criteria_keeps_internal_notes_out_of_client_text():
    """Name, source and actions carry no "memory" note; the confidence is kept as data."""
    # Source: the house rule that client-facing text shows no internal notes.
    for table in DEFAULT_CRITERIA.values():
        shown = [table["name"], table["source"], *(row["action"] for row in table["rows"])]
        assert not any("memory" in text.lower() or "your copy" in text for text in shown)
        assert table["confidence"] == "memory"
        assert "NETA" in table["source"]


def test_default_criteria_actions_are_in_our_own_words():
    """The suggested actions do not repeat the specification's wording."""
    # Source: the specification's wording as recalled (docs/references.md § Electrical
    # and mechanical ranking, from memory): we must not reuse it.
    recalled = [
        "possible deficiency",
        "probable deficiency",
        "major discrepancy",
        "repair as time permits",
        "corrective measures",
    ]
    for table in DEFAULT_CRITERIA.values():
        for row in table["rows"]:
            assert not any(phrase in row["action"].lower() for phrase in recalled)


def test_like_component_rise_of_identical_components_is_zero_and_no_finding():
    """Three lugs with the same 40.5 °C peak: 0.0 K hottest to hottest, no finding."""
    # Source: hottest-to-hottest comparison of like components (NETA MTS, ASTM E1934);
    # the means (36.5 °C) differ from the peaks, as in the report.
    rise = like_component_rise_c(40.5, 40.5)
    assert rise == 0.0
    assert classify_rise(rise, "similar").level is None
    # Hottest to mean overstates it: +4 K, level 3, only as an explicit choice.
    overstated = like_component_rise_c(40.5, reference_mean_c=36.5, method="hottest_to_mean")
    assert overstated == pytest.approx(4.0)
    assert RISE_METHODS["hottest_to_hottest"] == "hottest to hottest"


def test_like_component_rise_broadcasts():
    """Arrays of temperatures give arrays of rises."""
    # Source: subtraction by hand.
    result = like_component_rise_c(np.array([40.5, 45.0]), np.array([40.5, 41.0]))
    assert result.tolist() == [0.0, 4.0]


@pytest.mark.parametrize(
    ("call", "parameter"),
    [
        (lambda: like_component_rise_c(40.0), "reference_hot_c"),
        (lambda: like_component_rise_c(40.0, 30.0, method="hottest_to_mean"), "reference_mean_c"),
        (lambda: like_component_rise_c(40.0, 30.0, method="mean"), "method"),
        (lambda: like_component_rise_c(float("nan"), 30.0), "hot_c"),
        (lambda: round_rise_c("warm"), "rise_c"),
    ],
)
def test_like_component_rise_invalid_input_raises_naming_the_parameter(call, parameter):
    """Invalid input raises ValueError whose message names the parameter."""
    # Source: DESIGN.md contract (ValueError naming the parameter).
    with pytest.raises(ValueError, match=parameter):
        call()


@pytest.mark.parametrize("exponent", [1.0, 1.5, 1.6, 2.0, 2.5, 3.0])
def test_load_corrected_rise_accepts_any_exponent_from_1_to_3(exponent):
    """n from 1 to 3 inclusive is accepted and used as given."""
    # Source: ΔT·(100/load)^n by hand: 10 K at 50 % load → 10·2^n.
    assert load_corrected_rise(10.0, 50.0, exponent) == pytest.approx(10.0 * 2.0**exponent)


@pytest.mark.parametrize("exponent", [0.99, 3.01])
def test_load_corrected_rise_refuses_exponents_outside_1_to_3(exponent):
    """n outside [1, 3] raises ValueError naming exponent."""
    # Source: the documented range of n.
    with pytest.raises(ValueError, match="exponent"):
        load_corrected_rise(10.0, 50.0, exponent)


def test_classify_rise_reads_an_organization_table_of_the_same_shape():
    """A copied and edited table (whole mapping or one CriteriaTable) is used instead."""
    # Source: an invented organization table (stricter bands), no outside source needed.
    edited = default_criteria()
    edited["similar"]["name"] = "Northwind stricter table"
    edited["similar"]["rows"][1]["upper"] = 8.1
    edited["similar"]["rows"][2]["lower"] = 8.1
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
    copy["ambient"]["rows"][0]["level"] = 1
    assert DEFAULT_CRITERIA["ambient"]["rows"][0]["level"] == 4


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
