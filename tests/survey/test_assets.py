"""Asset history and repair verification across two surveys of one asset."""

import pytest
from django.core.exceptions import ValidationError

from survey.models import Finding
from survey.services.assets import (
    asset_history,
    asset_verifications,
    finding_verify,
    repair_verification,
    trend_points,
)
from survey.services.findings import finding_create, finding_set_status, finding_suggest
from tests.survey.findings_data import equipment_survey, hot_and_reference, make_asset


@pytest.fixture
def asset(org, site):
    return make_asset(org, site)


@pytest.fixture
def repaired_finding(org, site, thermographer, asset):
    """March 2025: 12 K over a like component at full load, level 3, then repaired."""
    survey = equipment_survey(
        org, site, thermographer, date=(2025, 3, 1), ambient_air_c=24.0, load_pct=100.0
    )
    _, hot, _ = hot_and_reference(survey, 20.0, 32.0, asset=asset)
    suggestion = finding_suggest(survey=survey, basis="similar", marks=[hot])
    finding = finding_create(
        survey=survey,
        user=thermographer.user,
        category="connection",
        suggestion=suggestion,
        marks=[hot],
    )
    finding_set_status(finding=finding, user=thermographer.user, status="repaired")
    return finding


def _later_visit(org, site, thermographer, asset, rise_c, load_pct=100.0):
    survey = equipment_survey(
        org, site, thermographer, date=(2026, 3, 2), ambient_air_c=24.0, load_pct=load_pct
    )
    hot_and_reference(survey, 20.0, 20.0 + rise_c, asset=asset)
    return survey


def test_it_lists_visits_with_key_readings(repaired_finding, org, site, thermographer, asset):
    """Two visits, oldest first, with the hottest corrected temperature and the rise."""
    _later_visit(org, site, thermographer, asset, 0.5)
    visits = asset_history(asset)
    assert [v["date"].year for v in visits] == [2025, 2026]
    # Emissivity 1: corrected = apparent, so 32 °C and 20.5 °C (the invented field).
    assert visits[0]["max_corrected_c"] == pytest.approx(32.0, abs=0.01)
    assert visits[1]["max_corrected_c"] == pytest.approx(20.5, abs=0.01)
    assert visits[0]["rises"]["similar"] == pytest.approx(12.0, abs=0.01)
    assert visits[1]["rises"]["similar"] == pytest.approx(0.5, abs=0.01)
    assert visits[0]["findings"] == [repaired_finding]
    assert [value for _, value in trend_points(visits)] == pytest.approx([12.0, 0.5], abs=0.01)


def test_it_offers_verified_when_the_rise_fell_below_the_table(
    repaired_finding, org, site, thermographer, asset
):
    """0.5 K after the repair is below 1 K, where the like-component table starts."""
    _later_visit(org, site, thermographer, asset, 0.5)
    check = repair_verification(repaired_finding)
    # No finding below 1 K over a like component [memory, NETA MTS via survey.thermal].
    assert check["threshold"] == 1.0
    assert check["outcome"] == "fixed"
    assert check["before_value"] == pytest.approx(12.0, abs=0.01)
    assert check["after_value"] == pytest.approx(0.5, abs=0.01)
    finding_verify(finding=repaired_finding, user=thermographer.user)
    repaired_finding.refresh_from_db()
    assert repaired_finding.status == Finding.Status.VERIFIED


def test_it_flags_a_repair_that_did_not_work(repaired_finding, org, site, thermographer, asset):
    """Still 5 K over the like component: not fixed, and verifying is refused."""
    _later_visit(org, site, thermographer, asset, 5.0)
    (check,) = asset_verifications(asset)
    assert check["outcome"] == "not_fixed"
    assert "did not work" in check["message"]
    with pytest.raises(ValidationError, match="did not work"):
        finding_verify(finding=repaired_finding, user=thermographer.user)
    repaired_finding.refresh_from_db()
    assert repaired_finding.status == Finding.Status.REPAIRED


def test_it_compares_at_full_load(repaired_finding, org, site, thermographer, asset):
    """0.5 K at 50 % load becomes 2 K at full load (I²R), still above 1 K: not fixed."""
    _later_visit(org, site, thermographer, asset, 0.5, load_pct=50.0)
    check = repair_verification(repaired_finding)
    # 0.5 · (100/50)² = 2.0 K by hand, n = 2 (docs/references.md § Electrical and
    # mechanical ranking).
    assert check["after_value"] == pytest.approx(2.0, abs=0.01)
    assert check["outcome"] == "not_fixed"


def test_it_has_nothing_to_compare_without_a_later_visit(repaired_finding):
    """Only the first survey: no before/after."""
    assert repair_verification(repaired_finding) is None
