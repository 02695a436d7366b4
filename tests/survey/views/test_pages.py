"""Survey pages: lists, forms, upload, settings, delete/restore, media and access."""

import io

import numpy as np
import pytest
from django.core.files.uploadedfile import SimpleUploadedFile
from django.urls import reverse

from survey.models import Client, Site, Survey, Thermogram
from tests.factories import make_thermogram


def npy_bytes(array) -> bytes:
    buffer = io.BytesIO()
    np.save(buffer, np.asarray(array, dtype=np.float32), allow_pickle=False)
    return buffer.getvalue()


def messages_of(response) -> list[str]:
    return [str(m) for m in response.context["messages"]] if response.context else []


def survey_urls(survey: Survey, thermogram: Thermogram) -> list[tuple[str, str]]:
    return [
        ("GET", reverse("survey:survey", args=[survey.pk])),
        ("GET", reverse("survey:survey_edit", args=[survey.pk])),
        ("POST", reverse("survey:survey_upload", args=[survey.pk])),
        ("GET", reverse("survey:survey_status", args=[survey.pk])),
        ("GET", reverse("survey:survey_delete", args=[survey.pk])),
        ("GET", reverse("survey:thermogram_settings", args=[thermogram.pk])),
        ("POST", reverse("survey:thermogram_reprocess", args=[thermogram.pk])),
        ("GET", reverse("survey:thermogram_original", args=[thermogram.pk])),
        ("GET", reverse("survey:thermogram_preview", args=[thermogram.pk])),
        ("GET", reverse("survey:thermogram_thumbnail", args=[thermogram.pk])),
        ("GET", reverse("survey:thermogram_photo", args=[thermogram.pk])),
        ("GET", reverse("survey:thermogram_array", args=[thermogram.pk])),
    ]


def test_it_answers_404_to_an_outsider_on_every_survey_page(outsider_client, envelope_survey):
    """Another firm's survey, thermogram and files do not exist for the outsider."""
    thermogram = make_thermogram(envelope_survey)
    for method, url in survey_urls(envelope_survey, thermogram):
        response = getattr(outsider_client, method.lower())(url)
        assert response.status_code == 404, url


def test_it_answers_404_to_an_outsider_restoring_a_deleted_survey(outsider_client, envelope_survey):
    """A deleted survey of another firm cannot be restored by the outsider."""
    Survey.objects.filter(pk=envelope_survey.pk).update(status=Survey.Status.DELETED)
    response = outsider_client.post(reverse("survey:survey_restore", args=[envelope_survey.pk]))
    assert response.status_code == 404


def test_it_sends_anonymous_visitors_to_sign_in(client, envelope_survey):
    """Every page asks an anonymous visitor to sign in first."""
    thermogram = make_thermogram(envelope_survey)
    urls = [
        reverse(name)
        for name in (
            "survey:home",
            "survey:clients",
            "survey:sites",
            "survey:survey_create",
            "survey:preferences",
        )
    ]
    urls += [url for method, url in survey_urls(envelope_survey, thermogram) if method == "GET"]
    for url in urls:
        response = client.get(url)
        assert response.status_code == 302 and response.url.startswith(reverse("login")), url


def test_it_lists_only_the_members_own_surveys(owner_client, envelope_survey, other_org):
    """Home lists the organization's surveys and none of another firm's."""
    client = Client.objects.create(organization=other_org, name="Foreign client")
    site = Site.objects.create(organization=other_org, client=client, name="Foreign site")
    Survey.objects.create(
        organization=other_org, site=site, kind="roof", date="2026-01-01", title="Not ours"
    )
    response = owner_client.get(reverse("survey:home"))
    assert response.status_code == 200
    assert str(envelope_survey) in response.content.decode()
    assert "Not ours" not in response.content.decode()


def test_it_creates_a_client_and_a_site(thermographer_client, org):
    """A thermographer adds a client, then a site of that client."""
    response = thermographer_client.post(reverse("survey:clients"), {"name": "Birchwood School"})
    assert response.status_code == 302
    client = Client.objects.get(organization=org, name="Birchwood School")
    response = thermographer_client.post(
        reverse("survey:sites"), {"client": client.pk, "name": "Main hall"}
    )
    assert response.status_code == 302
    assert Site.objects.get(client=client).name == "Main hall"


def test_it_refuses_a_site_for_another_firms_client(owner_client, other_org):
    """Choosing another organization's client is a form error, not a new site."""
    foreign = Client.objects.create(organization=other_org, name="Foreign")
    response = owner_client.post(reverse("survey:sites"), {"client": foreign.pk, "name": "X"})
    assert response.status_code == 200
    assert "Select a valid choice" in response.content.decode()
    assert not Site.objects.filter(name="X").exists()


def survey_post(site, **overrides) -> dict:
    data = {
        "site": site.pk,
        "kind": "envelope",
        "date": "2026-02-03",
        "camera_accuracy_c": "2",
        "camera_accuracy_pct": "2",
        "indoor_air_c": "20",
        "indoor_rh_pct": "45",
        "outdoor_air_c": "-3",
        "surfaces_dry": "yes",
    }
    data.update(overrides)
    return data


def test_it_creates_a_survey_with_its_conditions(owner_client, site):
    """The new-survey form stores the survey and its conditions, then opens the survey."""
    response = owner_client.post(reverse("survey:survey_create"), survey_post(site, title="Gable"))
    survey = Survey.objects.get(title="Gable")
    assert response.status_code == 302 and response.url == reverse(
        "survey:survey", args=[survey.pk]
    )
    assert survey.conditions.indoor_air_c == 20.0
    assert survey.conditions.surfaces_dry is True
    assert survey.conditions.sunny_day_before is None


def test_it_converts_fahrenheit_entry_to_celsius(owner_client, owner, site):
    """A member who works in °F types °F; °C is stored."""
    owner.temperature_unit = "F"
    owner.save()
    data = survey_post(
        site, title="In F", indoor_air_c="68", outdoor_air_c="14", camera_accuracy_c="3.6"
    )
    owner_client.post(reverse("survey:survey_create"), data)
    survey = Survey.objects.get(title="In F")
    # 68 °F = 20 °C, 14 °F = −10 °C; a 3.6 °F difference = 2 K (exact unit definitions).
    assert survey.conditions.indoor_air_c == pytest.approx(20.0)
    assert survey.conditions.outdoor_air_c == pytest.approx(-10.0)
    assert survey.camera_accuracy_c == pytest.approx(2.0)
    page = owner_client.get(reverse("survey:survey_edit", args=[survey.pk])).content.decode()
    assert 'value="68.0"' in page


@pytest.mark.parametrize(("unit", "expected"), [("C", 2.0), ("F", 3.6)])
def test_it_offers_the_usual_camera_accuracy_on_a_new_survey(owner_client, owner, unit, expected):
    """A new survey starts at ±2 K or ±2 % of reading (common practice), in the member's unit."""
    owner.temperature_unit = unit
    owner.save()
    form = owner_client.get(reverse("survey:survey_create")).context["form"]
    # 2 K is 3.6 °F as a difference (a factor of 9/5, no offset).
    assert form["camera_accuracy_c"].value() == pytest.approx(expected)
    assert form["camera_accuracy_pct"].value() == 2.0


def test_it_shows_a_message_for_bad_survey_input(owner_client, site):
    """An RH of 140 % and a missing date give messages, a 200 and no survey."""
    data = survey_post(site, title="Bad", indoor_rh_pct="140", date="")
    response = owner_client.post(reverse("survey:survey_create"), data)
    assert response.status_code == 200
    body = response.content.decode()
    assert "at most 100" in body and "This field is required" in body
    assert not Survey.objects.filter(title="Bad").exists()


def test_it_edits_a_survey(thermographer_client, envelope_survey, site):
    """The edit form saves survey fields and conditions together."""
    data = survey_post(site, title="Edited", wind_m_s="4.5", sky="overcast")
    response = thermographer_client.post(
        reverse("survey:survey_edit", args=[envelope_survey.pk]), data
    )
    assert response.status_code == 302
    envelope_survey.refresh_from_db()
    assert envelope_survey.title == "Edited"
    assert envelope_survey.conditions.wind_m_s == 4.5


def test_it_shows_the_survey_with_its_thermograms(thermographer_client, envelope_survey):
    """The survey page shows conditions, each thermogram's status and the upload form."""
    make_thermogram(envelope_survey, title="North gable")
    response = thermographer_client.get(reverse("survey:survey", args=[envelope_survey.pk]))
    body = response.content.decode()
    assert response.status_code == 200
    assert "North gable" in body and "Ready" in body and 'name="files"' in body
    assert "25.0 K" in body  # 20 °C inside, −5 °C outside (the fixture's conditions)


def test_it_runs_a_constant_number_of_queries_on_the_survey_page(
    owner_client, envelope_survey, django_assert_max_num_queries
):
    """3 or 30 thermograms cost the same number of SQL queries."""
    for _ in range(3):
        make_thermogram(envelope_survey, array=np.zeros((4, 4)))
    url = reverse("survey:survey", args=[envelope_survey.pk])
    from django.db import connection
    from django.test.utils import CaptureQueriesContext

    with CaptureQueriesContext(connection) as few:
        owner_client.get(url)
    for _ in range(27):
        make_thermogram(envelope_survey, array=np.zeros((4, 4)))
    with django_assert_max_num_queries(len(few.captured_queries)):
        response = owner_client.get(url)
    assert response.content.decode().count('class="thermogram ') == 30


def test_it_shows_a_large_survey_sixty_thermograms_at_a_time(
    owner_client, envelope_survey, django_assert_max_num_queries, settings
):
    """65 thermograms: 60 on page 1, 5 on page 2, with the same queries as a small survey."""
    from survey.models import Thermogram

    first = make_thermogram(envelope_survey, array=np.zeros((4, 4)))
    url = reverse("survey:survey", args=[envelope_survey.pk])
    from django.db import connection
    from django.test.utils import CaptureQueriesContext

    with CaptureQueriesContext(connection) as small:
        owner_client.get(url)
    copies = []
    for sequence in range(2, 66):
        copy = Thermogram.objects.get(pk=first.pk)
        copy.pk, copy.sequence, copy.original_name = None, sequence, f"IR_{sequence:04d}.npy"
        copy.original_sha256 = f"{sequence:064x}"
        copies.append(copy)
    Thermogram.objects.bulk_create(copies)
    with django_assert_max_num_queries(len(small.captured_queries) + 1):  # + the page count
        page_one = owner_client.get(url).content.decode()
    assert page_one.count('class="thermogram ') == 60
    assert "Thermograms 1–60 of 65 (page 1 of 2)" in page_one
    assert 'href="?page=2#thermograms" rel="next"' in page_one
    page_two = owner_client.get(url, {"page": "2"}).content.decode()
    assert page_two.count('class="thermogram ') == 5
    assert "IR_0065.npy" in page_two and "IR_0060.npy" not in page_two
    # A page number that is not one shows the first or last page, never an error.
    assert owner_client.get(url, {"page": "x"}).status_code == 200
    last = owner_client.get(url, {"page": "999"}).content.decode()
    assert last.count("<strong>65. IR_0065.npy</strong>") == 1


def test_it_uploads_many_files_and_names_the_rejected_ones(
    thermographer_client, envelope_survey, django_capture_on_commit_callbacks
):
    """Valid files are stored and processed; a bad one is named with its reason."""
    files = [
        SimpleUploadedFile("a.npy", npy_bytes([[20.0, 21.0], [22.0, 23.0]])),
        SimpleUploadedFile("b.csv", b"19.5;20.5\n21.5;22.5\n"),
        SimpleUploadedFile("notes.bin", b"\x00\x01\x02"),
    ]
    with django_capture_on_commit_callbacks(execute=True):
        response = thermographer_client.post(
            reverse("survey:survey_upload", args=[envelope_survey.pk]),
            {"files": files, "source_unit": "C", "emissivity": "0.9"},
            follow=True,
        )
    assert response.status_code == 200
    texts = " ".join(messages_of(response))
    assert "Stored 2 file(s)" in texts and "notes.bin was not stored" in texts
    statuses = set(envelope_survey.thermograms.values_list("status", flat=True))
    assert statuses == {"ready"}
    assert set(envelope_survey.thermograms.values_list("emissivity", flat=True)) == {0.9}


def test_it_shows_the_decoders_refusals_on_the_upload_page(
    thermographer_client, envelope_survey, django_capture_on_commit_callbacks
):
    """An ambiguous decimal comma and a text file named .tif are refused at upload with the
    decoder's message and its fix, on the survey page (docs/references.md § Decoding and
    rendering)."""
    files = [
        SimpleUploadedFile("column.csv", b"20,5\n21,3\n"),
        SimpleUploadedFile("fake.tif", b"20.5;21.0\n22.0;23.5\n"),
    ]
    with django_capture_on_commit_callbacks(execute=True):
        response = thermographer_client.post(
            reverse("survey:survey_upload", args=[envelope_survey.pk]),
            {"files": files, "source_unit": "C"},
            follow=True,
        )
    texts = " ".join(messages_of(response))
    assert "column.csv was not stored" in texts and "semicolons between values" in texts
    assert "fake.tif was not stored" in texts and "fake.tif is not a TIFF" in texts
    assert not envelope_survey.thermograms.exists()


def test_it_reports_bad_upload_options_without_storing(owner_client, envelope_survey):
    """An emissivity of 1.5 is a message, not a 500, and nothing is stored."""
    response = owner_client.post(
        reverse("survey:survey_upload", args=[envelope_survey.pk]),
        {
            "files": [SimpleUploadedFile("a.npy", npy_bytes([[1.0, 2.0]]))],
            "source_unit": "C",
            "emissivity": "1.5",
        },
        follow=True,
    )
    assert response.status_code == 200
    assert any("Nothing was uploaded" in m for m in messages_of(response))
    assert not envelope_survey.thermograms.exists()


def test_it_reports_the_processing_status_as_json(owner_client, envelope_survey):
    """The status endpoint lists every thermogram with its status for live updates."""
    make_thermogram(envelope_survey)
    data = owner_client.get(reverse("survey:survey_status", args=[envelope_survey.pk])).json()
    assert data["total"] == 1 and data["done"] == 1
    assert data["thermograms"][0]["status"] == "ready"


def test_it_saves_thermogram_settings_and_rejects_bad_ones(owner_client, envelope_survey):
    """Settings save; an inverted span is a message and changes nothing."""
    thermogram = make_thermogram(envelope_survey)
    url = reverse("survey:thermogram_settings", args=[thermogram.pk])
    assert owner_client.get(url).status_code == 200
    data = {"emissivity": "0.88", "reflected_c": "18", "palette": "perceptual", "title": "Gable"}
    assert owner_client.post(url, data).status_code == 302
    thermogram.refresh_from_db()
    assert (thermogram.emissivity, thermogram.palette, thermogram.title) == (
        0.88,
        "perceptual",
        "Gable",
    )
    bad = dict(data, span_low_c="30", span_high_c="10")
    response = owner_client.post(url, bad)
    assert response.status_code == 200 and "warmer than the bottom" in response.content.decode()


def test_it_reprocesses_a_thermogram_from_its_original(
    owner_client, envelope_survey, django_capture_on_commit_callbacks
):
    """Re-processing with a unit reads the original again."""
    thermogram = make_thermogram(envelope_survey, array=np.full((3, 3), 300.0))
    with django_capture_on_commit_callbacks(execute=True):
        response = owner_client.post(
            reverse("survey:thermogram_reprocess", args=[thermogram.pk]), {"source_unit": "K"}
        )
    assert response.status_code == 302
    thermogram.refresh_from_db()
    # 300 K = 26.85 °C (definition of the kelvin scale).
    assert thermogram.status == "ready" and thermogram.max_c == pytest.approx(26.85, abs=1e-4)


def test_it_serves_the_original_as_a_download_never_as_html(owner_client, envelope_survey):
    """The original downloads as an attachment with a non-HTML type."""
    thermogram = make_thermogram(envelope_survey, original_name="<b>wall</b>.npy")
    response = owner_client.get(reverse("survey:thermogram_original", args=[thermogram.pk]))
    assert response.status_code == 200
    assert response["Content-Disposition"].startswith("attachment")
    assert response["Content-Type"] == "application/octet-stream"
    assert b"".join(response.streaming_content).startswith(b"\x93NUMPY")


def test_it_hands_files_to_the_web_server_when_configured(owner_client, envelope_survey, settings):
    """With MEDIA_ACCEL_REDIRECT_PREFIX the response is an internal redirect, no body."""
    settings.MEDIA_ACCEL_REDIRECT_PREFIX = "/protected/"
    thermogram = make_thermogram(envelope_survey)
    response = owner_client.get(reverse("survey:thermogram_array", args=[thermogram.pk]))
    assert response["X-Accel-Redirect"] == "/protected/" + thermogram.array.name
    assert response.content == b""


def test_it_answers_404_for_a_missing_photo(owner_client, envelope_survey):
    """A thermogram without a paired photo has no photo URL."""
    thermogram = make_thermogram(envelope_survey)
    assert (
        owner_client.get(reverse("survey:thermogram_photo", args=[thermogram.pk])).status_code
        == 404
    )


def test_it_deletes_and_restores_a_survey(reviewer_client, envelope_survey):
    """A reviewer deletes after confirming, and restores from the deleted list."""
    url = reverse("survey:survey_delete", args=[envelope_survey.pk])
    response = reviewer_client.post(url, {})
    assert response.status_code == 200 and "Tick the box" in response.content.decode()
    assert reviewer_client.post(url, {"confirm": "on"}).status_code == 302
    assert (
        reviewer_client.get(reverse("survey:survey", args=[envelope_survey.pk])).status_code == 404
    )
    listing = reviewer_client.get(reverse("survey:deleted_surveys")).content.decode()
    assert str(envelope_survey) in listing
    reviewer_client.post(reverse("survey:survey_restore", args=[envelope_survey.pk]))
    assert (
        reviewer_client.get(reverse("survey:survey", args=[envelope_survey.pk])).status_code == 200
    )


def test_it_forbids_a_thermographer_to_delete(thermographer_client, envelope_survey):
    """Deleting a survey is for reviewers and admins."""
    url = reverse("survey:survey_delete", args=[envelope_survey.pk])
    assert thermographer_client.post(url, {"confirm": "on"}).status_code == 403


def test_it_shows_why_a_survey_with_an_issued_report_cannot_be_deleted(
    owner_client, envelope_survey
):
    """The refusal is a message on the survey page, not an error page."""
    from reports.models import Report, ReportVersion

    report = Report.objects.create(
        organization=envelope_survey.organization, survey=envelope_survey, number="R-9"
    )
    ReportVersion.objects.create(report=report, version=1, is_draft=False, status="issued")
    response = owner_client.post(
        reverse("survey:survey_delete", args=[envelope_survey.pk]), {"confirm": "on"}, follow=True
    )
    assert any("issued report" in m for m in messages_of(response))
    assert Survey.objects.get(pk=envelope_survey.pk).status == Survey.Status.ACTIVE


def test_it_saves_the_temperature_unit_preference(
    thermographer_client, thermographer, envelope_survey
):
    """Choosing °F shows temperatures in °F from then on."""
    response = thermographer_client.post(reverse("survey:preferences"), {"temperature_unit": "F"})
    assert response.status_code == 302
    thermographer.refresh_from_db()
    assert thermographer.temperature_unit == "F"
    body = thermographer_client.get(
        reverse("survey:survey", args=[envelope_survey.pk])
    ).content.decode()
    # 20 °C = 68.0 °F (exact unit definition).
    assert "68.0 °F" in body
