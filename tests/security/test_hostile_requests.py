"""Requests shaped to break things: NUL characters, oversized bodies, missing CSRF tokens,
and what caches may keep. Each answers a clear 4xx and leaves nothing half-saved.

On PostgreSQL a NUL character in a text query or column is an error deep in the driver;
the suite's PostgreSQL pass is where these once answered 500.
"""

import json
from urllib.parse import urlencode

import pytest
from django.core.files.uploadedfile import SimpleUploadedFile
from django.test import Client
from django.urls import reverse

from reports.models import Report, ReportVersion
from reports.services import share_link_create
from survey.models import CriteriaTable
from survey.services.criteria_tables import criteria_table_copy_defaults
from tests.factories import make_thermogram


@pytest.fixture
def shared(envelope_survey, reviewer):
    from django.core.files.base import ContentFile

    report = Report.objects.create(
        organization=envelope_survey.organization, survey=envelope_survey, number="R-N1"
    )
    version = ReportVersion.objects.create(
        report=report, version=1, is_draft=False, status=ReportVersion.Status.ISSUED
    )
    version.pdf.save("r.pdf", ContentFile(b"%PDF-1.4\n%%EOF\n"))
    return share_link_create(version=version, user=reviewer.user)


def test_it_answers_404_to_a_share_token_holding_nul(client, shared):
    for name in ("reports:share", "reports:share_download"):
        response = client.get(reverse(name, args=[shared.token[:10] + "\x00"]))
        assert response.status_code == 404, name


def test_it_answers_400_to_an_audit_filter_holding_nul(owner_client):
    response = owner_client.get(reverse("survey:audit_log"), {"action": "login\x00"})
    assert response.status_code == 400
    assert "NUL character" in response.content.decode()


def test_it_refuses_criteria_text_holding_nul(owner_client, owner):
    """Raw in the form (400) or escaped in the rows' JSON (a message on the field)."""
    table = criteria_table_copy_defaults(organization=owner.organization)[0]
    url = reverse("survey:criteria_edit", args=[table.pk])
    rows = json.dumps(table.rows)
    # As the browser sends this form (it has no files): urlencoded.
    form = urlencode({"rows": rows, "source": "Our\x00 own"})
    response = owner_client.post(url, form, content_type="application/x-www-form-urlencoded")
    assert response.status_code == 400
    escaped = rows.replace('"', '"\\u0000', 1)
    response = owner_client.post(url, {"rows": escaped, "source": ""})
    assert response.status_code == 200
    assert "NUL character" in response.content.decode()
    assert CriteriaTable.objects.get(pk=table.pk).rows == table.rows


def test_it_refuses_json_holding_nul(owner_client, envelope_survey):
    thermogram = make_thermogram(envelope_survey)
    response = owner_client.post(
        reverse("survey:api-marks", args=[thermogram.pk]),
        '{"kind": "point", "points": [[3, 3]], "note": "a\\u0000b"}',
        content_type="application/json",
    )
    assert response.status_code == 400 and "NUL" in response.json()["error"]
    assert not thermogram.marks.exists()


def test_it_refuses_a_request_larger_than_the_upload_limit(owner_client, envelope_survey, settings):
    """The body is not read: 413 with what to do, nothing stored (pages and the API alike)."""
    settings.UPLOAD_MAX_REQUEST_BYTES = 10_000
    big = SimpleUploadedFile("IR_0001.csv", b"20.5;21.5\n" * 2000)
    response = owner_client.post(
        reverse("survey:survey_upload", args=[envelope_survey.pk]), {"files": [big]}
    )
    assert response.status_code == 413
    assert "several smaller batches" in response.content.decode()
    assert not envelope_survey.thermograms.exists()
    thermogram = make_thermogram(envelope_survey)
    response = owner_client.post(
        reverse("survey:api-marks", args=[thermogram.pk]),
        json.dumps({"kind": "point", "points": [[3, 3]], "note": "x" * 20_000}),
        content_type="application/json",
    )
    assert response.status_code == 413 and "at most" in response.json()["error"]


def test_it_answers_a_failed_csrf_check_on_the_api_with_the_json_error(owner, envelope_survey):
    thermogram = make_thermogram(envelope_survey)
    client = Client(enforce_csrf_checks=True)
    client.force_login(owner.user)
    response = client.post(
        reverse("survey:api-marks", args=[thermogram.pk]),
        json.dumps({"kind": "point", "points": [[3, 3]]}),
        content_type="application/json",
    )
    assert response.status_code == 403
    assert response["Content-Type"] == "application/json"
    assert set(response.json()) == {"error", "fields"}
    assert "X-CSRFToken" in response.json()["error"]
    # Pages keep Django's own explanation.
    page = client.post(reverse("survey:clients"), {"name": "x"})
    assert page.status_code == 403 and page["Content-Type"].startswith("text/html")


@pytest.mark.parametrize(
    "name, kwargs",
    [
        ("survey:home", {}),
        ("survey:survey", {"pk": "survey"}),
        ("survey:survey_status", {"pk": "survey"}),
        ("reports:findings_csv", {"survey_id": "survey"}),
        ("reports:results_json", {"survey_id": "survey"}),
        ("survey:api-thermogram", {"pk": "thermogram"}),
    ],
)
def test_it_keeps_signed_in_pages_out_of_caches(owner_client, envelope_survey, name, kwargs):
    thermogram = make_thermogram(envelope_survey)
    ids = {"survey": envelope_survey.pk, "thermogram": thermogram.pk}
    response = owner_client.get(reverse(name, kwargs={k: ids[v] for k, v in kwargs.items()}))
    assert response.status_code == 200
    assert response["Cache-Control"] == "private, no-store"


def test_it_keeps_share_pages_out_of_caches(client, shared):
    for url in (
        reverse("reports:share", args=[shared.token]),
        reverse("reports:share_download", args=[shared.token]),
        reverse("reports:share", args=["no-such-token"]),
    ):
        assert client.get(url)["Cache-Control"] == "private, no-store", url
