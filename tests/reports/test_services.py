"""Report life cycle: numbering, drafts, issuing (frozen), share links, downloads, exports."""

import csv
import datetime
import hashlib
import io

import pytest
from django.core.exceptions import PermissionDenied, ValidationError
from django.utils import timezone

from reports import rendering, services
from reports.models import ReportVersion, ShareLink
from reports.results import content_digest, survey_results
from survey.models import Finding, Survey
from tests.reports.conftest import kind_survey


def test_it_numbers_reports_per_organization(report_survey, org, site, thermographer, outsider):
    """Reports of one firm count up; another firm starts its own count."""
    year = timezone.localdate().year
    first = services.report_create(survey=report_survey, user=thermographer.user)
    second = services.report_create(
        survey=kind_survey(org, site, thermographer, "roof"), user=thermographer.user
    )
    assert (first.number, second.number) == (f"R{year}-001", f"R{year}-002")
    assert services.next_report_number(outsider.organization, year) == f"R{year}-001"


def test_it_refuses_a_second_report_for_one_survey(report_survey, thermographer):
    """One survey, one report: the second attempt says which report exists."""
    report = services.report_create(survey=report_survey, user=thermographer.user)
    with pytest.raises(ValidationError, match=report.number):
        services.report_create(survey=report_survey, user=thermographer.user)


def test_it_renders_a_requested_draft_once_with_its_file_digest(draft_version):
    """The draft is rendered (eager Celery on commit), stored with sha256 and page count; a
    second delivery of the render task finds nothing to claim and changes nothing."""
    draft_version.refresh_from_db()
    assert draft_version.status == ReportVersion.Status.READY
    assert (draft_version.progress_pct, draft_version.stage) == (100, "Done")
    data = draft_version.pdf.read()
    assert data.startswith(b"%PDF")
    assert draft_version.sha256 == hashlib.sha256(data).hexdigest()
    # Cover, contents, summary, thermograms and the chapters that follow them on (issue 14).
    assert draft_version.page_count >= 5
    before = (draft_version.pdf.name, draft_version.sha256)
    assert rendering.report_render(draft_version.pk) is False
    draft_version.refresh_from_db()
    assert (draft_version.pdf.name, draft_version.sha256) == before


def test_it_lets_only_reviewers_issue(report_survey, thermographer):
    """A thermographer cannot issue; nothing is queued."""
    report = services.report_create(survey=report_survey, user=thermographer.user)
    with pytest.raises(PermissionDenied):
        services.report_issue(report=report, user=thermographer.user)
    assert not report.versions.exists()


def test_it_freezes_an_issued_version(
    freshly_issued_version, report_survey, reviewer, django_capture_on_commit_callbacks
):
    """Later edits, drafts and repeated renders never change the issued bytes or sha256."""
    issued_version = freshly_issued_version
    assert issued_version.status == ReportVersion.Status.ISSUED
    assert (issued_version.version, issued_version.is_draft) == (1, False)
    data = issued_version.pdf.read()
    assert hashlib.sha256(data).hexdigest() == issued_version.sha256
    conditions = report_survey.conditions
    conditions.indoor_rh_pct = 65.0
    conditions.save()
    Finding.objects.filter(survey=report_survey).update(description="Changed after issue.")
    with django_capture_on_commit_callbacks(execute=True):
        draft = services.report_request_draft(report=issued_version.report, user=reviewer.user)
    assert rendering.report_render(issued_version.pk) is False
    issued_version.refresh_from_db()
    draft.refresh_from_db()
    with issued_version.pdf.open("rb") as handle:
        assert handle.read() == data
    assert hashlib.sha256(data).hexdigest() == issued_version.sha256
    assert draft.content_sha256 != issued_version.content_sha256


def test_it_issues_a_correction_as_a_new_version_with_a_note(
    issued_version, reviewer, django_capture_on_commit_callbacks
):
    """A correction needs a change note, gets number 2, and version 1 stays as it was."""
    report = issued_version.report
    with pytest.raises(ValidationError, match="change note"):
        services.report_issue(report=report, user=reviewer.user)
    with django_capture_on_commit_callbacks(execute=True):
        second = services.report_issue(
            report=report, user=reviewer.user, change_note="Corrected the wall emissivity."
        )
    second.refresh_from_db()
    issued_version.refresh_from_db()
    assert (second.version, second.status) == (2, ReportVersion.Status.ISSUED)
    assert issued_version.status == ReportVersion.Status.ISSUED and issued_version.pdf


def test_it_records_a_failed_render_with_a_message(transactional_db, report_survey, thermographer):
    """A render the database stops half-way fails with a plain message, not a crash, and the
    message shows nothing of the error's internals (they go to the log)."""
    from tests.reliability.test_transactions import database_refuses

    report = services.report_create(survey=report_survey, user=thermographer.user)
    with database_refuses("reports_reportversion", "NEW.stage = 'Laying out the pages'", "UPDATE"):
        version = services.report_request_draft(report=report, user=thermographer.user)
    version.refresh_from_db()
    assert version.status == ReportVersion.Status.FAILED
    assert version.error.startswith("The PDF could not be made")
    assert "refused by the database" not in version.error
    assert not version.pdf


def test_it_shares_only_issued_versions_for_a_bounded_time(issued_version, reviewer, thermographer):
    """Reviewer only; 1–365 days; drafts cannot be shared."""
    with pytest.raises(PermissionDenied):
        services.share_link_create(version=issued_version, user=thermographer.user)
    with pytest.raises(ValidationError, match="1 to 365"):
        services.share_link_create(version=issued_version, user=reviewer.user, days=400)
    draft = ReportVersion.objects.create(report=issued_version.report, version=2)
    with pytest.raises(ValidationError, match="issued"):
        services.share_link_create(version=draft, user=reviewer.user)
    link = services.share_link_create(version=issued_version, user=reviewer.user, days=7)
    assert len(link.token) >= 40
    assert services.share_link_active(link.token) == link


def test_it_ends_a_share_link_on_expiry_or_revocation(issued_version, reviewer):
    """Expired and revoked links no longer resolve."""
    expired = services.share_link_create(version=issued_version, user=reviewer.user)
    ShareLink.objects.filter(pk=expired.pk).update(
        expires_at=timezone.now() - datetime.timedelta(seconds=1)
    )
    revoked = services.share_link_create(version=issued_version, user=reviewer.user)
    services.share_link_revoke(link=revoked, user=reviewer.user)
    assert services.share_link_active(expired.token) is None
    assert services.share_link_active(revoked.token) is None
    assert services.share_link_active("no-such-token") is None


def test_it_exports_findings_as_csv_with_formulas_quoted(report_survey):
    """One row per finding; text that a spreadsheet would run as a formula is quoted."""
    Finding.objects.filter(survey=report_survey).update(location="=HYPERLINK(1)")
    rows = list(csv.DictReader(io.StringIO(services.findings_csv(report_survey))))
    assert len(rows) == 1
    assert rows[0]["level"] == "2" and rows[0]["category"] == "missing_insulation"
    assert rows[0]["category_label"] == "Missing or displaced insulation"
    assert rows[0]["location"] == "'=HYPERLINK(1)"


def test_it_exports_the_survey_results_as_json_data(report_survey):
    """Marks with corrected values, findings, conditions and the check, as plain data."""
    results = survey_results(report_survey)
    marks = results["thermograms"][0]["marks"]
    assert [m["label"] for m in marks] == ["A", "B"]
    assert marks[1]["corrected"]["mean"] < marks[1]["apparent"]["mean"]  # ε 0.93, warm refl.
    assert results["findings"][0]["recommendation"].startswith("Open up")
    assert results["conditions"]["indoor_rh_pct"] == 50.0
    assert results["conditions_check"]
    assert content_digest(results) == content_digest(survey_results(report_survey))


def test_it_logs_every_download(issued_version, reviewer):
    """A download line names the version, the user or link, and the client's address."""
    log = services.download_record(
        version=issued_version, user=reviewer.user, ip_address="192.0.2.7", user_agent="x"
    )
    assert (log.version, log.user, log.ip_address) == (issued_version, reviewer.user, "192.0.2.7")


def test_it_hides_reports_of_deleted_surveys_from_share_links(issued_version, reviewer):
    """A link of a deleted survey stops working."""
    link = services.share_link_create(version=issued_version, user=reviewer.user)
    Survey.objects.filter(pk=issued_version.report.survey_id).update(status=Survey.Status.DELETED)
    assert services.share_link_active(link.token) is None
