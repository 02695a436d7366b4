"""The roof plan page: upload, place thermograms (clicks fill number fields, which can be
typed), and the core or moisture-meter checks on a roof finding's page."""

import datetime
import io

import pytest
from django.urls import reverse
from PIL import Image

from survey.models import MoistureCheck
from survey.services import roof
from tests.factories import make_thermogram
from tests.survey.findings_data import equipment_survey
from tests.survey.test_roof import wet_finding


def png(size=(400, 300)) -> io.BytesIO:
    buffer = io.BytesIO()
    Image.new("RGB", size, "white").save(buffer, "PNG")
    buffer.seek(0)
    buffer.name = "plan.png"
    return buffer


@pytest.fixture
def roof_survey(org, site, thermographer):
    return equipment_survey(org, site, thermographer, kind="roof", surfaces_dry=True)


def test_it_uploads_a_plan_and_shows_it(roof_survey, thermographer_client):
    url = reverse("survey:roof_plan", args=[roof_survey.pk])
    response = thermographer_client.post(url, {"plan": png()})
    assert response.status_code == 302
    page = thermographer_client.get(url)
    assert page.status_code == 200
    assert reverse("survey:roof_plan_image", args=[roof_survey.pk]).encode() in page.content
    image = thermographer_client.get(reverse("survey:roof_plan_image", args=[roof_survey.pk]))
    assert image.status_code == 200 and image["Content-Type"] == "image/png"


def test_it_answers_a_bad_plan_with_a_message_and_keeps_nothing(roof_survey, thermographer_client):
    url = reverse("survey:roof_plan", args=[roof_survey.pk])
    bad = io.BytesIO(b"GIF89a not really")
    bad.name = "plan.png"
    response = thermographer_client.post(url, {"plan": bad})
    assert response.status_code == 200
    assert b"could not be read as a PNG or JPEG" in response.content
    assert b"nothing was saved" in response.content
    empty = thermographer_client.post(url, {})
    assert b"Choose the plan" in empty.content
    roof_survey.refresh_from_db()
    assert not roof_survey.roof_plan


def test_it_places_a_thermogram_from_typed_numbers(
    roof_survey, thermographer, thermographer_client
):
    roof.roof_plan_upload(survey=roof_survey, uploaded_file=png(), user=None)
    thermogram = make_thermogram(roof_survey)
    url = reverse("survey:thermogram_plan_position", args=[thermogram.pk])
    prefix = thermogram.pk
    response = thermographer_client.post(url, {f"{prefix}-x_pct": "40", f"{prefix}-y_pct": "25.5"})
    assert response.status_code == 302
    thermogram.refresh_from_db()
    assert (thermogram.plan_x_pct, thermogram.plan_y_pct) == (40.0, 25.5)
    page = thermographer_client.get(reverse("survey:roof_plan", args=[roof_survey.pk]))
    # The marker sits at 40 % of 400 px and 25.5 % of 300 px on the plan's own scale.
    assert b'cx="160.0" cy="76.5"' in page.content
    bad = thermographer_client.post(
        url, {f"{prefix}-x_pct": "140", f"{prefix}-y_pct": "2"}, follow=True
    )
    assert b"Enter at most 100 %" in bad.content
    thermogram.refresh_from_db()
    assert thermogram.plan_x_pct == 40.0


def test_it_answers_404_to_an_outsider(roof_survey, outsider_client, thermographer):
    thermogram = make_thermogram(roof_survey)
    finding = wet_finding(roof_survey, thermographer.user, 10, 10)
    for url in (
        reverse("survey:roof_plan", args=[roof_survey.pk]),
        reverse("survey:roof_plan_image", args=[roof_survey.pk]),
    ):
        assert outsider_client.get(url).status_code == 404
    for url in (
        reverse("survey:thermogram_plan_position", args=[thermogram.pk]),
        reverse("survey:moisture_check_create", args=[finding.pk]),
    ):
        assert outsider_client.post(url, {}).status_code == 404


def test_it_has_no_plan_page_for_other_survey_kinds(envelope_survey, thermographer_client):
    url = reverse("survey:roof_plan", args=[envelope_survey.pk])
    assert thermographer_client.get(url).status_code == 404


def test_it_records_a_check_from_the_finding_page(roof_survey, thermographer, thermographer_client):
    finding = wet_finding(roof_survey, thermographer.user, 10, 10)
    page = thermographer_client.get(reverse("survey:finding", args=[finding.pk]))
    assert b"Core and moisture-meter checks" in page.content
    url = reverse("survey:moisture_check_create", args=[finding.pk])
    response = thermographer_client.post(
        url,
        {
            "check-method": "core",
            "check-checked_on": "2026-03-04",
            "check-result": "wet",
            "check-reading": "wet",
        },
        follow=True,
    )
    assert b"Check recorded." in response.content
    check = MoistureCheck.objects.get(finding=finding)
    assert (check.method, check.checked_on) == ("core", datetime.date(2026, 3, 4))
    future = (datetime.date.today() + datetime.timedelta(days=30)).isoformat()
    refused = thermographer_client.post(
        url,
        {"check-method": "core", "check-checked_on": future, "check-result": "maybe"},
        follow=True,
    )
    assert b"Check not recorded." in refused.content
    assert MoistureCheck.objects.filter(finding=finding).count() == 1


def test_a_viewer_sees_the_plan_but_cannot_change_it(roof_survey, viewer, client):
    client.force_login(viewer.user)
    url = reverse("survey:roof_plan", args=[roof_survey.pk])
    page = client.get(url)
    assert page.status_code == 200 and b"Store the plan" not in page.content
    assert client.post(url, {"plan": png()}).status_code == 403
