"""Conditions criteria, table rows, cautions and the trend chart."""

import datetime
from xml.dom import minidom

import pytest

from survey import conditions, severity
from survey.cautions import cautions_for, cautions_for_kinds
from survey.charts import trend_svg
from survey.models import Conditions, Survey


def _by_key(checks):
    return {check["key"]: check for check in checks}


def test_it_checks_envelope_conditions_met_and_not_recorded(envelope_survey):
    """20 °C inside, −5 °C outside, 2 m/s wind: ΔT and wind met, the rest not recorded."""
    checks = _by_key(conditions.conditions_check(envelope_survey))
    # At least 10 K inside–outside (EN 13187 / ISO 6781, ASTM C1060) [memory].
    assert checks["inside_outside_difference"]["status"] == "met"
    assert checks["inside_outside_difference"]["value"] == pytest.approx(25.0)
    assert checks["wind"]["status"] == "met"  # at most about 5 m/s [memory]
    assert checks["difference_held"]["status"] == "not_recorded"
    assert checks["no_precipitation"]["status"] == "not_recorded"
    assert checks["surfaces_dry"]["status"] == "not_recorded"


def test_it_reports_unmet_envelope_conditions(envelope_survey):
    """A 6 K difference, 8 m/s wind and rain fall short; the shortfall is said in words."""
    Conditions.objects.filter(survey=envelope_survey).update(
        outdoor_air_c=14.0, wind_m_s=8.0, precipitation="rain", surfaces_dry=False
    )
    envelope_survey.refresh_from_db()
    checks = conditions.conditions_check(envelope_survey)
    statuses = {c["key"]: c["status"] for c in checks}
    assert statuses["inside_outside_difference"] == "not_met"
    assert statuses["wind"] == "not_met"
    assert statuses["no_precipitation"] == "not_met"
    assert statuses["surfaces_dry"] == "not_met"


@pytest.mark.parametrize(
    ("load", "status"), [(39.9, "not_met"), (40.0, "met"), (None, "not_recorded")]
)
def test_it_checks_the_electrical_load(electrical_survey, load, status):
    """At least 40 % of rating at the time of the survey (common practice)."""
    Conditions.objects.filter(survey=electrical_survey).update(load_pct=load)
    electrical_survey.refresh_from_db()
    checks = _by_key(conditions.conditions_check(electrical_survey))
    assert checks["load"]["status"] == status


def test_it_marks_everything_not_recorded_without_conditions(org, site):
    """A survey with no conditions row gives not recorded for every criterion."""
    survey = Survey.objects.create(
        organization=org, site=site, kind="mechanical", date=datetime.date(2026, 2, 2)
    )
    checks = conditions.conditions_check(survey)
    assert checks and {c["status"] for c in checks} == {"not_recorded"}


def test_conditions_criteria_carry_sources_and_confidence():
    """Every criterion names a source and one of the confidence labels."""
    for kind, items in conditions.CONDITIONS_CRITERIA.items():
        assert items, kind
        for item in items:
            assert item.source and item.requirement
            assert item.confidence in conditions.CONFIDENCE_LABELS


def test_validate_rows_refuses_overlapping_bands():
    """Bands of the building tables may not overlap."""
    rows = [
        {"lower": 80, "upper": 100, "level": 3, "action": "Plan repair."},
        {"lower": 90, "upper": None, "level": 2, "action": "Act soon."},
    ]
    with pytest.raises(ValueError, match="overlap"):
        severity.validate_rows(rows)


def test_validate_rows_refuses_a_level_of_five():
    """Levels are 1 to 4."""
    with pytest.raises(ValueError, match="level"):
        severity.validate_rows([{"lower": 0, "upper": None, "level": 5, "action": "x"}])


def test_classify_value_uses_half_open_bands():
    """80 % is mould risk, 100 % condensation, 79.9 % nothing (ISO 13788 criteria)."""
    rows = severity.ENVELOPE_TABLE["rows"]
    assert severity.classify_value(79.9, rows) is None
    assert severity.classify_value(80.0, rows)["level"] == 3
    assert severity.classify_value(100.0, rows)["level"] == 2


def test_no_finding_below_reads_both_table_shapes():
    """The start of the first band: 1 K for the rise tables [memory, NETA MTS], 80 % RH."""
    from survey.thermal.electrical import DEFAULT_CRITERIA

    assert severity.no_finding_below(DEFAULT_CRITERIA["similar"]["rows"]) == 1.0
    assert severity.no_finding_below(severity.ENVELOPE_TABLE["rows"]) == 80.0


def test_cautions_for_each_kind_carry_the_trade_cautions():
    """Qualified persons for electrical, fall protection for roofs, codes for all."""
    assert any("qualified persons" in c for c in cautions_for("electrical"))
    assert any("fall protection" in c for c in cautions_for("roof"))
    for kind in ("envelope", "roof", "electrical", "mechanical"):
        cautions = cautions_for(kind)
        assert any("local codes" in c for c in cautions)
        assert any("not their causes" in c for c in cautions)
    assert any("confirmation by other means" in c for c in cautions_for("envelope"))
    assert any("indicative" in c for c in cautions_for("envelope"))
    merged = cautions_for_kinds(["electrical", "roof"])
    assert len(merged) == len(set(merged))


def test_trend_svg_draws_a_readable_chart_with_gaps():
    """The chart is well-formed SVG; a missing visit leaves a gap, values are labelled."""
    svg = trend_svg(
        [
            (datetime.date(2025, 3, 1), 12.0),
            (datetime.date(2025, 9, 1), None),
            (datetime.date(2026, 3, 2), 0.5),
        ],
        480,
        200,
        "K",
        thresholds=[(1.0, "no finding below 1 K")],
    )
    document = minidom.parseString(svg)
    assert document.documentElement.tagName == "svg"
    assert len(document.getElementsByTagName("circle")) == 2
    assert "12.0" in svg and "0.5" in svg and "no finding below 1 K" in svg
    assert "style=" not in svg and "<script" not in svg


def test_trend_svg_says_when_there_is_nothing_to_chart():
    """No values: a short message instead of an empty frame."""
    assert "No readings" in trend_svg([], 300, 120, "K")
