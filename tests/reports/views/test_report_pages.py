"""Report pages: access, issuing by role, progress, downloads, share links, exports."""

import datetime
import json

import pytest
from django.core.management import CommandError, call_command
from django.urls import reverse
from django.utils import timezone

from reports import services
from reports.models import DownloadLog, ReportVersion, ShareLink


@pytest.fixture
def share_link(issued_version, reviewer):
    return services.share_link_create(version=issued_version, user=reviewer.user)


def _urls(version, link) -> list[tuple[str, str]]:
    survey_id, report_id = version.report.survey_id, version.report_id
    return [
        ("get", reverse("reports:survey", args=[survey_id])),
        ("post", reverse("reports:create", args=[survey_id])),
        ("get", reverse("reports:findings_csv", args=[survey_id])),
        ("get", reverse("reports:results_json", args=[survey_id])),
        ("post", reverse("reports:draft", args=[report_id])),
        ("post", reverse("reports:issue", args=[report_id])),
        ("get", reverse("reports:progress", args=[version.pk])),
        ("get", reverse("reports:download", args=[version.pk])),
        ("post", reverse("reports:retry", args=[version.pk])),
        ("post", reverse("reports:share_create", args=[version.pk])),
        ("post", reverse("reports:share_revoke", args=[link.pk])),
        ("get", reverse("reports:share_revoke", args=[link.pk])),
        ("post", reverse("reports:share_email", args=[link.pk])),
        ("get", reverse("reports:issue", args=[report_id])),
    ]


def test_it_answers_404_to_an_outsider_on_every_view(outsider_client, issued_version, share_link):
    """Another firm's member cannot reach any report view of this firm."""
    for method, url in _urls(issued_version, share_link):
        response = getattr(outsider_client, method)(url)
        assert response.status_code == 404, url
    assert not ShareLink.objects.filter(revoked_at__isnull=False).exists()


def test_it_forbids_thermographers_to_issue(client, thermographer, report_survey):
    """Issuing is a reviewer's act: a thermographer gets 403 and nothing is queued."""
    report = services.report_create(survey=report_survey, user=thermographer.user)
    client.force_login(thermographer.user)
    response = client.post(reverse("reports:issue", args=[report.pk]))
    assert response.status_code == 403
    assert not report.versions.exists()


def test_it_creates_a_report_and_shows_the_draft_progress_and_pdf(
    thermographer_client, report_survey, django_capture_on_commit_callbacks
):
    """Create, request a draft, poll its progress, download it (logged, as an attachment)."""
    page = reverse("reports:survey", args=[report_survey.pk])
    thermographer_client.post(reverse("reports:create", args=[report_survey.pk]))
    report = report_survey.reports.get()
    with django_capture_on_commit_callbacks(execute=True):
        thermographer_client.post(reverse("reports:draft", args=[report.pk]))
    version = report.versions.get()
    progress = thermographer_client.get(reverse("reports:progress", args=[version.pk])).json()
    assert (progress["done"], progress["progress_pct"], progress["stage"]) == (True, 100, "Done")
    html = thermographer_client.get(page).content.decode()
    assert reverse("reports:download", args=[version.pk]) in html
    assert "<script>" not in html and 'style="' not in html
    response = thermographer_client.get(progress["download_url"])
    assert response["Content-Type"] == "application/pdf"
    assert response["Content-Disposition"].startswith("attachment")
    assert f"{report.number}-DRAFT.pdf" in response["Content-Disposition"]
    assert b"".join(response.streaming_content).startswith(b"%PDF")
    assert DownloadLog.objects.filter(version=version, user=version.requested_by).count() == 1


def test_it_shows_progress_while_a_version_waits(
    thermographer_client, report_survey, thermographer
):
    """A queued version shows its stage and percent with a polling hook, no inline script."""
    report = services.report_create(survey=report_survey, user=thermographer.user)
    version = ReportVersion.objects.create(
        report=report,
        version=1,
        status="rendering",
        stage="Drawing thermogram 1 of 3",
        progress_pct=30,
    )
    html = thermographer_client.get(
        reverse("reports:survey", args=[report_survey.pk])
    ).content.decode()
    assert reverse("reports:progress", args=[version.pk]) in html
    assert "Drawing thermogram 1 of 3" in html and "reports/progress.js" in html


def test_it_serves_the_share_page_and_logs_the_client_download(client, share_link):
    """No login: the page shows the issued file's sha256; the download is logged with the link."""
    page = client.get(reverse("reports:share", args=[share_link.token]))
    assert page.status_code == 200
    assert share_link.version.sha256 in page.content.decode()
    response = client.get(reverse("reports:share_download", args=[share_link.token]))
    assert response.status_code == 200
    assert response["Content-Disposition"].startswith("attachment")
    assert DownloadLog.objects.get(share_link=share_link).user is None


@pytest.mark.parametrize("state", ["expired", "revoked", "unknown"])
def test_it_answers_404_with_a_generic_body_for_dead_links(client, share_link, reviewer, state):
    """Expired, revoked or unknown links answer 404 and say nothing about the report."""
    token = share_link.token
    if state == "expired":
        ShareLink.objects.filter(pk=share_link.pk).update(
            expires_at=timezone.now() - datetime.timedelta(minutes=1)
        )
    elif state == "revoked":
        services.share_link_revoke(link=share_link, user=reviewer.user)
    else:
        token = "x" * 43
    for name in ["reports:share", "reports:share_download"]:
        response = client.get(reverse(name, args=[token]))
        body = response.content.decode()
        assert response.status_code == 404
        assert share_link.version.report.number not in body and "Harbour" not in body
    assert not DownloadLog.objects.exists()


@pytest.mark.parametrize(("days", "message"), [("abc", "whole number"), ("999", "at most 365")])
def test_it_explains_a_bad_share_duration(reviewer_client, issued_version, days, message):
    """Bad input gives a message and creates no link, never a 500."""
    response = reviewer_client.post(
        reverse("reports:share_create", args=[issued_version.pk]), {"days": days}, follow=True
    )
    assert response.status_code == 200
    assert message in response.content.decode()
    assert not ShareLink.objects.exists()


def test_it_creates_and_revokes_a_share_link(reviewer_client, issued_version):
    """The reviewer creates a link from the page and revokes it again."""
    reviewer_client.post(reverse("reports:share_create", args=[issued_version.pk]), {"days": "10"})
    link = ShareLink.objects.get()
    assert link.expires_at.date() == (timezone.now() + datetime.timedelta(days=10)).date()
    revoke = reverse("reports:share_revoke", args=[link.pk])
    # Revoking asks first: the page, then an unticked send, leave the link live.
    assert "Revoke the link" in reviewer_client.get(revoke).content.decode()
    assert "Tick the box" in reviewer_client.post(revoke).content.decode()
    link.refresh_from_db()
    assert link.revoked_at is None
    reviewer_client.post(revoke, {"confirm": "on"})
    link.refresh_from_db()
    assert link.revoked_at is not None


def test_it_asks_for_a_change_note_on_a_correction(reviewer_client, issued_version):
    """Issuing again without a note explains what is missing."""
    response = reviewer_client.post(
        reverse("reports:issue", args=[issued_version.report_id]), {"change_note": ""}, follow=True
    )
    assert "change note" in response.content.decode()
    assert issued_version.report.versions.count() == 1


def test_it_exports_csv_and_json(thermographer_client, report_survey):
    """Both exports download as attachments; the JSON carries the data digest."""
    csv_response = thermographer_client.get(
        reverse("reports:findings_csv", args=[report_survey.pk])
    )
    assert csv_response["Content-Type"].startswith("text/csv")
    assert "missing_insulation" in csv_response.content.decode()
    json_response = thermographer_client.get(
        reverse("reports:results_json", args=[report_survey.pk])
    )
    data = json.loads(json_response.content)
    assert json_response["Content-Disposition"].startswith("attachment")
    assert len(data["content_sha256"]) == 64 and data["thermograms"][0]["marks"]


def test_it_renders_a_draft_from_the_command_line(report_survey, tmp_path):
    """manage.py render_report SURVEY_ID --output FILE.pdf writes a PDF and stores nothing."""
    target = tmp_path / "draft.pdf"
    call_command("render_report", str(report_survey.pk), "--output", str(target))
    assert target.read_bytes().startswith(b"%PDF")
    assert not ReportVersion.objects.exists()
    with pytest.raises(CommandError, match="No active survey"):
        call_command("render_report", "999999", "--output", str(target))
