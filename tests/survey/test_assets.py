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
from survey.services.findings import (
    finding_create,
    finding_set_status,
    finding_suggest,
    finding_verify_override,
    verification_text,
)
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
    assert visits[0]["rises"]["similar"]["measured"] == pytest.approx(12.0, abs=0.01)
    assert visits[1]["rises"]["similar"]["measured"] == pytest.approx(0.5, abs=0.01)
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


def test_it_verifies_only_with_evidence_kept(repaired_finding, org, site, thermographer, asset):
    """Verified from the later measurement keeps which visit and what it measured."""
    _later_visit(org, site, thermographer, asset, 0.5)
    finding_verify(finding=repaired_finding, user=thermographer.user)
    repaired_finding.refresh_from_db()
    evidence = repaired_finding.verification
    assert evidence["how"] == "measurement" and evidence["date"] == "2026-03-02"
    assert evidence["after_text"] == "0.5 K full-load (n = 2)"
    assert verification_text(repaired_finding).startswith(
        "Verified by the later measurement of 2026-03-02"
    )


def test_it_refuses_verified_without_evidence(repaired_finding, thermographer):
    """No later measurement and no reason: "verified" is refused and nothing changes."""
    with pytest.raises(ValidationError):
        finding_set_status(finding=repaired_finding, user=thermographer.user, status="verified")
    with pytest.raises(ValidationError):
        finding_set_status(
            finding=repaired_finding,
            user=thermographer.user,
            status="verified",
            note="Looked fine to me.",
        )
    with pytest.raises(ValidationError, match="later measurement"):
        finding_verify(finding=repaired_finding, user=thermographer.user)
    with pytest.raises(ValidationError):
        finding_verify_override(finding=repaired_finding, user=thermographer.user, reason=" ")
    repaired_finding.refresh_from_db()
    assert repaired_finding.status == Finding.Status.REPAIRED
    finding_verify_override(
        finding=repaired_finding, user=thermographer.user, reason="Breaker replaced, WO 17."
    )
    repaired_finding.refresh_from_db()
    assert repaired_finding.status == Finding.Status.VERIFIED
    assert verification_text(repaired_finding) == (
        "Verified without a later measurement: Breaker replaced, WO 17."
    )
    finding_set_status(finding=repaired_finding, user=thermographer.user, status="open")
    repaired_finding.refresh_from_db()
    assert repaired_finding.verification == {} and repaired_finding.verification_reason == ""


def test_it_carries_the_findings_exponent_into_the_history(org, site, thermographer, asset):
    """A finding judged with n = 1.5 at 65 % load: the visit's full-load rise uses 1.5, and
    the later visit is corrected with the same n before it is compared."""
    first = equipment_survey(
        org, site, thermographer, date=(2025, 3, 1), ambient_air_c=24.0, load_pct=65.0
    )
    _, hot, _ = hot_and_reference(first, 20.0, 30.0, asset=asset)
    suggestion = finding_suggest(survey=first, basis="similar", marks=[hot], load_exponent=1.5)
    finding = finding_create(
        survey=first,
        user=thermographer.user,
        category="connection",
        suggestion=suggestion,
        marks=[hot],
    )
    assert finding.load_exponent == 1.5
    # 10 K · (100/65)^1.5 = 19.08 K, shown at 0.1 K (computed by hand; docs/references.md
    # § Electrical and mechanical ranking).
    assert finding.rise_c == 10.0 and finding.corrected_rise_c == 19.1
    _later_visit(org, site, thermographer, asset, 0.8, load_pct=65.0)
    visits = asset_history(asset)
    assert visits[0]["rises"]["similar"] == {
        "measured": 10.0,
        "full_load": 19.1,
        "exponent": 1.5,
        "load_pct": 65.0,
    }
    check = repair_verification(finding, visits)
    # 0.8 · (100/65)^1.5 = 1.53 → 1.5 K with the finding's n (by hand); n = 2 would give 1.9.
    assert check["after_value"] == 1.5
    assert check["after_text"] == "1.5 K full-load (n = 1.5)"
    assert check["before_text"] == "19.1 K full-load (n = 1.5)"


def test_it_judges_a_repair_on_the_rise_it_prints(
    repaired_finding, org, site, thermographer, asset
):
    """0.7 K at 83.7 % load is 0.7·(100/83.7)² = 0.999 K at full load (by hand), printed
    1.0 K: at the 1 K limit of the table, so not fixed, as the printed number says."""
    _later_visit(org, site, thermographer, asset, 0.7, load_pct=83.7)
    check = repair_verification(repaired_finding)
    assert check["after_value"] == 1.0
    assert check["outcome"] == "not_fixed"
    assert check["message"].startswith("Now 1.0 K full-load (n = 2), still at or above 1 K")
