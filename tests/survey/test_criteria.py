"""Conditions criteria, table rows, cautions and the trend chart."""

import datetime
import math
from xml.dom import minidom

import psychrolib
import pytest
from scipy.optimize import brentq

from survey import conditions, severity
from survey.cautions import cautions_for, cautions_for_kinds
from survey.charts import trend_svg
from survey.models import Conditions, Survey

psychrolib.SetUnitSystem(psychrolib.SI)


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


def test_no_finding_below_is_the_start_of_the_lowest_band():
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


def _roof(org, site, start_time=None, **values):
    survey = Survey.objects.create(
        organization=org,
        site=site,
        kind="roof",
        date=datetime.date(2026, 6, 2),
        start_time=start_time,
    )
    Conditions.objects.create(survey=survey, **values)
    return survey


@pytest.mark.parametrize(
    ("start", "status"),
    [
        (datetime.time(22, 30), "met"),
        (datetime.time(3, 0), "met"),
        (datetime.time(14, 0), "not_met"),
        (None, "not_recorded"),
    ],
)
def test_it_checks_that_a_roof_was_surveyed_at_night(org, site, start, status):
    """ASTM C1153 surveys at night (the 18:00–06:00 window is common practice); a survey
    without a start time says not recorded."""
    checks = _by_key(conditions.conditions_check(_roof(org, site, start)))
    assert checks["night_survey"]["status"] == status
    if start is None:
        assert checks["night_survey"]["value_text"] == "not recorded"


@pytest.mark.parametrize(
    ("membrane_c", "air_c", "rh_pct"),
    [(2.0, 5.0, 90.0), (6.0, 5.0, 90.0), (-4.0, -1.0, 85.0), (-2.0, -1.0, 85.0)],
)
def test_it_checks_the_roof_membrane_against_the_outdoor_dew_point(
    org, site, membrane_c, air_c, rh_pct
):
    """Dew or frost on the membrane hides wet insulation: the membrane must be above the
    outdoor dew point, the frost point below 0 °C (over ice, ISO 13788). Limits from
    psychrolib's saturation pressures solved with scipy (docs/references.md
    § Psychrometrics)."""
    # RH is over liquid water also below 0 °C (docs/references.md § Psychrometrics,
    # conventions), while psychrolib switches to ice there: the air's vapour pressure takes
    # psychrolib's formula over water, the limit psychrolib's own (over ice below 0 °C).
    vapour = rh_pct / 100 * _water_saturation(air_c)
    limit = brentq(lambda t: psychrolib.GetSatVapPres(t) - vapour, -40.0, 40.0)
    survey = _roof(
        org,
        site,
        datetime.time(23, 0),
        roof_surface_c=membrane_c,
        outdoor_air_c=air_c,
        outdoor_rh_pct=rh_pct,
    )
    check = _by_key(conditions.conditions_check(survey))["roof_above_dew_point"]
    assert check["value"] == pytest.approx(membrane_c - limit, abs=0.02)
    assert check["status"] == ("met" if membrane_c > limit else "not_met")
    side = "above" if membrane_c > limit else "below"
    assert check["value_text"] == f"{abs(membrane_c - limit):.1f} K {side} it"


def _water_saturation(t_c: float) -> float:
    """Saturation over (supercooled) water: ASHRAE Handbook Fundamentals 2017 ch. 1 eq. 6
    (Hyland–Wexler) with psychrolib's coefficients, which it matches to the last digit above
    0 °C (docs/references.md § Psychrometrics)."""
    t_k = t_c + 273.15
    c8, c9, c10 = -5.8002206e03, 1.3914993, -4.8640239e-02
    c11, c12, c13 = 4.1764768e-05, -1.4452093e-08, 6.5459673
    return math.exp(c8 / t_k + c9 + c10 * t_k + c11 * t_k**2 + c12 * t_k**3 + c13 * math.log(t_k))


# --- the firm's review of its criteria tables (issue 14) -----------------------------------


def test_it_records_a_review_on_the_firms_copy_and_clears_it_when_the_rows_change(
    org, reviewer, thermographer
):
    """Reviewing a default makes the firm's copy; a blank basis or a thermographer is refused;
    new rows need a new review."""
    from django.core.exceptions import ValidationError

    from survey.services.criteria_tables import (
        criteria_table_for,
        criteria_table_review,
        criteria_table_update,
    )

    default = criteria_table_for(organization=org, basis="envelope")
    assert not default.is_reviewed
    with pytest.raises(ValidationError, match="standard and clause"):
        criteria_table_review(organization=org, table=default, member=reviewer, basis="  ")
    with pytest.raises(ValidationError, match="reviewer or an admin"):
        criteria_table_review(organization=org, table=default, member=thermographer, basis="x")
    own = criteria_table_review(
        organization=org, table=default, member=reviewer, basis="ISO 13788, clause 4"
    )
    assert own.organization == org and own.is_reviewed and own.reviewed_by == reviewer
    assert criteria_table_for(organization=org, basis="envelope") == own
    rows = [dict(row) for row in own.rows]
    criteria_table_update(table=own, user=reviewer.user, rows=rows)
    assert own.is_reviewed, "the same rows keep their review"
    rows[0]["lower"] = 75.0
    criteria_table_update(table=own, user=reviewer.user, rows=rows)
    own.refresh_from_db()
    assert not own.is_reviewed and own.reviewed_by is None


def test_it_names_only_the_standard_of_each_condition_for_the_client():
    """The client-facing name of a criterion's source holds no working note."""
    for criteria in conditions.CONDITIONS_CRITERIA.values():
        for criterion in criteria:
            assert "memory" not in criterion.standard and "secondary" not in criterion.standard
    wind = next(c for c in conditions.CONDITIONS_CRITERIA["envelope"] if c.key == "wind")
    assert wind.standard == "EN 13187 / ISO 6781"
