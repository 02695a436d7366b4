"""The judgement rules on plain numbers: no database, no models."""

import psychrolib
import pytest

from survey.judgement import JudgementError, judge_envelope, judge_rise
from survey.severity import ENVELOPE_TABLE
from survey.thermal.electrical import DEFAULT_CRITERIA

psychrolib.SetUnitSystem(psychrolib.SI)


def test_judge_rise_load_corrects_before_reading_the_table():
    """A 5 K rise at 50 % load is 20 K at full load: the top band of the like-component table."""
    # Source: ΔT·(100/load)² by hand (docs/references.md § Electrical and mechanical ranking):
    # 5·(100/50)² = 20 K; above 15 K is "major discrepancy" (NETA table, from memory).
    result = judge_rise(
        hot_c=30.0,
        reference_c=25.0,
        where="mark A",
        against="mark B",
        load_pct=50.0,
        exponent=2.0,
        warnings=[None, None],
        uncertainty_c=None,
        rows=DEFAULT_CRITERIA["similar"]["rows"],
        basis="similar",
    )
    assert result["values"]["corrected_rise_c"] == pytest.approx(20.0)
    assert result["level"] == 1 and result["row"] == "over 15 °C"
    assert result["flags"] == []


def test_judge_rise_flags_a_load_too_low_to_rank():
    """Below 40 % load the suggestion carries the low-load flag (NFPA 70B via load_is_too_low)."""
    result = judge_rise(
        hot_c=22.0,
        reference_c=21.0,
        where="mark A",
        against="the ambient air",
        load_pct=30.0,
        exponent=2.0,
        warnings=[],
        uncertainty_c=None,
        rows=DEFAULT_CRITERIA["ambient"]["rows"],
        basis="ambient",
    )
    assert "low_load" in result["flags"]


def test_judge_envelope_reads_surface_humidity_against_the_table():
    """A 12 °C surface in 20 °C / 50 % air is at 83.4 % RH: the mould band."""
    # Source: psychrolib surface RH (docs/references.md § Psychrometrics): 83.4 %.
    expected = 50.0 * psychrolib.GetSatVapPres(20.0) / psychrolib.GetSatVapPres(12.0)
    result = judge_envelope(
        surface_c=12.0,
        where="mark A",
        indoor_c=20.0,
        indoor_rh_pct=50.0,
        outdoor_c=-5.0,
        design=(None, None, None),
        rows=ENVELOPE_TABLE["rows"],
    )
    assert result["values"]["surface_rh_pct"] == pytest.approx(expected, abs=0.1)
    assert result["level"] == 3 and "mould" in result["flags"]


def test_judge_envelope_refuses_a_place_without_temperatures():
    """No valid surface temperature: a JudgementError the service shows to the inspector."""
    with pytest.raises(JudgementError, match="no valid temperatures"):
        judge_envelope(
            surface_c=float("nan"),
            where="mark A",
            indoor_c=20.0,
            indoor_rh_pct=50.0,
            outdoor_c=None,
            design=(None, None, None),
            rows=ENVELOPE_TABLE["rows"],
        )
