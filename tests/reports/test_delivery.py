"""Delivering a report: a confirmed issue by an independent reviewer, the link e-mailed to the
client through a real SMTP server on loopback, the client's share page and acknowledgements.
"""

import datetime
import re

import pytest
from django.core.exceptions import ValidationError
from django.urls import reverse

from reports import services
from reports.models import ReportVersion, ShareLink
from survey.models import Acknowledgement, AuditEvent, Finding
from tests.reports.helpers import flat, pdf_text
from tests.smtp_server import smtp_server


def body(response) -> str:
    return response.content.decode()


@pytest.fixture
def share_link(issued_version, reviewer):
    return services.share_link_create(version=issued_version, user=reviewer.user)


# --- issuing ---------------------------------------------------------------------------------


def test_issuing_asks_for_confirmation_first(reviewer_client, report_survey, reviewer):
    report = services.report_create(survey=report_survey, user=reviewer.user)
    url = reverse("reports:issue", args=[report.pk])
    page = reviewer_client.get(url)
    assert page.status_code == 200 and "Issue the report" in body(page)
    # Sent from the report page without the tick: the confirmation page, nothing queued.
    response = reviewer_client.post(url, {"change_note": ""})
    assert response.status_code == 200 and "Yes, issue this version" in body(response)
    assert not report.versions.exists()
    reviewer_client.post(url, {"change_note": "", "confirm": "on"})
    assert report.versions.get().is_draft is False


def test_the_surveys_own_thermographer_may_not_issue_it(
    client, report_survey, reviewer, django_capture_on_commit_callbacks
):
    """By default a reviewer who was the survey's thermographer is refused, with the reason."""
    report_survey.thermographer = reviewer
    report_survey.save()
    report = services.report_create(survey=report_survey, user=reviewer.user)
    with pytest.raises(ValidationError, match="another reviewer must issue"):
        services.report_issue(report=report, user=reviewer.user)
    client.force_login(reviewer.user)
    page = body(client.get(reverse("reports:issue", args=[report.pk])))
    assert "another reviewer must issue" in page and "Issue the report" not in page
    response = client.post(
        reverse("reports:issue", args=[report.pk]), {"confirm": "on"}, follow=True
    )
    assert "another reviewer must issue" in body(response)
    assert not report.versions.exists()


def test_a_one_person_firm_may_self_review_and_the_report_says_so(
    report_survey, reviewer, django_capture_on_commit_callbacks
):
    """With the organization setting, the issue goes through and the PDF says it."""
    report_survey.thermographer = reviewer
    report_survey.save()
    report_survey.organization.allow_self_review = True
    report_survey.organization.save()
    report = services.report_create(survey=report_survey, user=reviewer.user)
    with django_capture_on_commit_callbacks(execute=True):
        version = services.report_issue(report=report, user=reviewer.user)
    version.refresh_from_db()
    assert version.is_issued and version.independently_reviewed is False
    with version.pdf.open("rb") as handle:
        text = flat(pdf_text(handle.read()))
    assert "Not independently reviewed" in text
    event = AuditEvent.objects.get(action="report.issue")
    assert event.detail["independently_reviewed"] is False


def test_an_independent_report_does_not_say_it(issued_version):
    with issued_version.pdf.open("rb") as handle:
        text = flat(pdf_text(handle.read()))
    assert issued_version.independently_reviewed is True
    assert "independently reviewed" not in text


def test_the_report_is_in_fahrenheit_when_the_issuer_works_in_fahrenheit(
    report_survey, reviewer, django_capture_on_commit_callbacks
):
    """Conditions, readings and differences in °F and Δ°F; the data digest stays in °C."""
    reviewer.temperature_unit = "F"
    reviewer.speed_unit = "mph"
    reviewer.save()
    report = services.report_create(survey=report_survey, user=reviewer.user)
    with django_capture_on_commit_callbacks(execute=True):
        version = services.report_issue(report=report, user=reviewer.user)
    version.refresh_from_db()
    assert version.temperature_unit == "F"
    with version.pdf.open("rb") as handle:
        text = flat(pdf_text(handle.read()))
    # 20 °C = 68.0 °F; −5 °C = 23.0 °F; a 25 K difference = 45.0 Δ°F; 2 m/s = 4.5 mph
    # (docs/references.md § Units and inspection intervals).
    assert "Indoor air 68.0 °F" in text
    assert "Outdoor air 23.0 °F" in text
    assert "Inside–outside difference 45.0 Δ°F" in text
    assert "Wind 4.5 mph" in text
    assert "Corrected °F" in text and "ΔT Δ°F" in text
    assert " °C" not in re.sub(r"ε [0-9.]+, reflected", "", text.split("References")[0])


# --- e-mail through a real SMTP server --------------------------------------------------------


def test_it_emails_the_link_to_the_client_through_smtp(
    reviewer_client, reviewer, share_link, settings, monkeypatch
):
    """Django's SMTP backend starts TLS, logs in to the loopback server, delivers the link."""
    client_row = share_link.version.report.survey.site.client
    client_row.email = "facilities@harbour-lane.example"
    client_row.contact_name = "Sam Okafor"
    client_row.save()
    url = reverse("reports:share_email", args=[share_link.pk])
    form = reviewer_client.get(url).context["form"]
    assert form["to"].value() == "facilities@harbour-lane.example"
    assert form["message"].value().startswith("Dear Sam Okafor,")
    with smtp_server("heatmark", "s3cret-relay") as mailbox:
        mailbox.configure(settings, monkeypatch, "heatmark", "s3cret-relay")
        response = reviewer_client.post(
            url, {"to": "facilities@harbour-lane.example", "message": "See you in spring."}
        )
    assert response.status_code == 302
    assert [ok for _mechanism, _login, ok in mailbox.logins] == [True]
    (delivered,) = mailbox.messages
    assert delivered["to"] == ["facilities@harbour-lane.example"] and delivered["tls"]
    message = delivered["message"]
    assert message["Subject"].startswith(
        f"Thermal survey report {share_link.version.report.number}"
    )
    text = message.get_content()
    assert "See you in spring." in text
    assert reverse("reports:share", args=[share_link.token]) in text
    assert share_link.version.sha256 in text
    share_link.refresh_from_db()
    assert share_link.last_sent_to == "facilities@harbour-lane.example"
    assert AuditEvent.objects.filter(action="share_link.email").count() == 1


def test_a_refused_login_sends_nothing_and_says_why(reviewer, share_link, settings, monkeypatch):
    """Wrong SMTP password: the server refuses, the reviewer is told, nothing is recorded."""
    with smtp_server("heatmark", "right") as mailbox:
        mailbox.configure(settings, monkeypatch, "heatmark", "wrong")
        with pytest.raises(ValidationError, match="could not be sent"):
            services.share_link_email(
                link=share_link, user=reviewer.user, to="a@example.org", message="", url="u"
            )
    assert mailbox.messages == []
    assert [ok for _mechanism, _login, ok in mailbox.logins] == [False]
    share_link.refresh_from_db()
    assert share_link.last_sent_to == ""


def _mail_settings(**environment) -> str:
    """EMAIL_BACKEND as settings.py reads it from `environment` (a fresh interpreter)."""
    import os
    import subprocess
    import sys

    env = {k: v for k, v in os.environ.items() if not k.startswith("EMAIL_")}
    env |= {"DJANGO_SETTINGS_MODULE": "survey.settings", **environment}
    code = "from django.conf import settings; print(settings.EMAIL_BACKEND, settings.EMAIL_PORT)"
    run = subprocess.run(
        [sys.executable, "-c", code], env=env, capture_output=True, text=True, timeout=60
    )
    return run.stdout.strip() or run.stderr.strip().splitlines()[-1]


def test_settings_send_by_smtp_only_when_a_host_is_given():
    """The embedded default prints e-mails; EMAIL_HOST switches to SMTP (port 587 default)."""
    assert _mail_settings() == "django.core.mail.backends.console.EmailBackend 587"
    assert _mail_settings(EMAIL_HOST="smtp.example.org", EMAIL_PORT="2525") == (
        "django.core.mail.backends.smtp.EmailBackend 2525"
    )
    refused = _mail_settings(EMAIL_HOST="smtp.example.org", EMAIL_USE_SSL="1")
    assert "not both" in refused


@pytest.mark.parametrize(
    ("to", "expected"), [("not-an-address", "e-mail address"), ("", "e-mail address")]
)
def test_a_bad_address_is_refused(reviewer_client, share_link, to, expected, mailoutbox):
    response = reviewer_client.post(
        reverse("reports:share_email", args=[share_link.pk]), {"to": to, "message": "x"}
    )
    assert response.status_code == 200 and expected in body(response)
    assert mailoutbox == []


def test_a_revoked_link_is_not_sent(reviewer, share_link, mailoutbox):
    services.share_link_revoke(link=share_link, user=reviewer.user)
    with pytest.raises(ValidationError, match="revoked or expired"):
        services.share_link_email(
            link=share_link, user=reviewer.user, to="a@example.org", message="", url="u"
        )
    assert mailoutbox == []


def test_only_reviewers_send_links(thermographer_client, share_link):
    url = reverse("reports:share_email", args=[share_link.pk])
    assert thermographer_client.get(url).status_code == 403


# --- the client's share page ------------------------------------------------------------------


def test_the_share_page_lists_findings_and_never_sends_the_client_to_sign_in(client, share_link):
    page = client.get(reverse("reports:share", args=[share_link.token]))
    # The token is not sent to other sites; same-site forms keep their Origin (CSRF).
    assert page["Referrer-Policy"] == "same-origin"
    html = body(page)
    assert "Corner above the window" in html and "2 act soon" in html and "Open" in html
    brand = re.search(r'<a class="brand" href="([^"]+)"', html)
    assert brand and brand[1] == reverse("reports:share", args=[share_link.token])
    assert reverse("login") not in html
    # Every same-site link on the page opens without signing in.
    for href in set(re.findall(r'href="(/[^"]*)"', html)):
        if href.startswith("/static/"):
            continue
        assert client.get(href).status_code == 200, href


def test_the_client_acknowledges_a_finding_without_an_account(client, share_link, reviewer):
    finding = Finding.objects.get(survey=share_link.version.report.survey)
    url = reverse("reports:share_acknowledge", args=[share_link.token, finding.pk])
    prefix = f"f{finding.pk}-"
    bad = client.post(url, {prefix + "repair_scheduled_for": "", prefix + "note": ""})
    assert bad.status_code == 400 and "scheduled for, or a note" in body(bad)
    assert not Acknowledgement.objects.exists()
    response = client.post(
        url,
        {
            prefix + "repair_scheduled_for": "2026-09-30",
            prefix + "note": "Electrician booked.",
            prefix + "name": "Sam Okafor",
        },
        follow=True,
    )
    assert response.status_code == 200 and "Thank you" in body(response)
    ack = Acknowledgement.objects.get()
    assert (ack.finding, ack.repair_scheduled_for) == (finding, datetime.date(2026, 9, 30))
    assert ack.share_link_id == share_link.pk
    # The firm sees it on the survey page.
    client.force_login(reviewer.user)
    survey_page = body(client.get(reverse("survey:survey", args=[finding.survey_id])))
    assert "Client acknowledgements" in survey_page and "Electrician booked." in survey_page


def test_a_dead_link_or_a_foreign_finding_cannot_be_acknowledged(
    client, share_link, reviewer, org, site
):
    from survey.models import Survey

    other = Survey.objects.create(organization=org, site=site, kind="roof", date="2026-2-2")
    foreign = Finding.objects.create(organization=org, survey=other, category="other")
    url = reverse("reports:share_acknowledge", args=[share_link.token, foreign.pk])
    assert client.post(url, {f"f{foreign.pk}-note": "x"}).status_code == 404
    services.share_link_revoke(link=share_link, user=reviewer.user)
    finding = Finding.objects.get(survey=share_link.version.report.survey)
    url = reverse("reports:share_acknowledge", args=[share_link.token, finding.pk])
    assert client.post(url, {f"f{finding.pk}-note": "x"}).status_code == 404
    assert not Acknowledgement.objects.exists()


def test_findings_made_after_the_issue_are_not_shown(client, share_link, org):
    later = Finding.objects.create(
        organization=org,
        survey=share_link.version.report.survey,
        category="other",
        location="Found after the report was issued",
    )
    html = body(client.get(reverse("reports:share", args=[share_link.token])))
    assert later.location not in html


def test_revoking_asks_first(reviewer_client, share_link):
    url = reverse("reports:share_revoke", args=[share_link.pk])
    assert "Revoke the link" in body(reviewer_client.get(url))
    reviewer_client.post(url, {})
    share_link.refresh_from_db()
    assert share_link.revoked_at is None
    reviewer_client.post(url, {"confirm": "on"})
    share_link.refresh_from_db()
    assert share_link.revoked_at is not None
    assert ShareLink.objects.count() == 1 and ReportVersion.objects.count() == 1


def test_the_report_names_each_marks_load_against_the_assets_rating(
    electrical_survey, reviewer, django_capture_on_commit_callbacks
):
    """A lug measured at 118 A on a 160 A panel reads "118 A of 160 A" in the readings
    table and in its finding."""
    from survey.models import Asset
    from survey.services.marks import mark_add
    from tests.factories import make_thermogram

    asset = Asset.objects.create(
        organization=electrical_survey.organization,
        site=electrical_survey.site,
        name="Panel P-7",
        kind=Asset.Kind.PANEL,
        rating=160.0,
        rating_unit="A",
    )
    thermogram = make_thermogram(electrical_survey, asset=asset, title="P-7 lugs")
    mark = mark_add(
        thermogram=thermogram, kind="point", points=[[100, 40]], user=None, load_current_a=118
    )
    finding = Finding.objects.create(
        organization=electrical_survey.organization,
        survey=electrical_survey,
        thermogram=thermogram,
        category="connection",
        level=2,
    )
    finding.marks.set([mark])
    report = services.report_create(survey=electrical_survey, user=reviewer.user)
    with django_capture_on_commit_callbacks(execute=True):
        version = services.report_issue(report=report, user=reviewer.user)
    version.refresh_from_db()
    with version.pdf.open("rb") as handle:
        text = flat(pdf_text(handle.read()))
    assert text.count("118 A of 160 A") >= 2  # the readings table and the finding
