"""Numbers that must not go stale: re-processed arrays, findings judged on older readings,
marks a finding uses, issued reports."""

import hashlib

import numpy as np
import pytest
from django.core.exceptions import ValidationError
from django.urls import reverse

from reports.models import ReportVersion
from survey.models import Finding, Mark, Thermogram
from survey.services.findings import finding_changes, finding_create, finding_suggest
from survey.services.marks import mark_add, mark_update
from survey.services.processing import thermogram_process
from tests.factories import make_thermogram
from tests.survey.findings_data import equipment_survey, hot_and_reference

# Kelvin readings of an invented wall: 300 K is 26.85 °C (definition of the kelvin scale).
KELVIN_FIELD = np.full((20, 30), 300.0, dtype=np.float32)
KELVIN_FIELD[5:10, 5:10] = 310.0


@pytest.fixture
def processed(envelope_survey):
    """A thermogram decoded by the worker's code, its array at the worker's path."""
    thermogram = make_thermogram(envelope_survey, KELVIN_FIELD)
    Thermogram.objects.filter(pk=thermogram.pk).update(status=Thermogram.Status.QUEUED)
    assert thermogram_process(thermogram.pk) == Thermogram.Status.READY
    thermogram.refresh_from_db()
    return thermogram


@pytest.fixture
def judged(org, site, thermographer):
    """A finding judged on mark B (10 K over mark A) of an electrical survey at full load."""
    survey = equipment_survey(org, site, thermographer, ambient_air_c=24.0, load_pct=100.0)
    thermogram, hot, reference = hot_and_reference(survey, 20.0, 30.0)
    suggestion = finding_suggest(survey=survey, basis="similar", marks=[hot])
    finding = finding_create(
        survey=survey,
        user=thermographer.user,
        category="connection",
        suggestion=suggestion,
        marks=[hot],
    )
    return finding, hot, reference


def test_it_hides_stale_flags_and_rejudging_from_another_organization(judged, outsider_client):
    """An outsider cannot re-judge another organization's finding (404)."""
    finding, _, _ = judged
    response = outsider_client.post(reverse("survey:finding_rejudge", args=[finding.pk]))
    assert response.status_code == 404


def test_it_recomputes_the_marks_and_the_etag_on_reprocessing(
    owner_client, processed, django_capture_on_commit_callbacks
):
    """Read as °C the block is 310 °C; re-processed as kelvin it is 36.85 °C: the mark reads
    the new number and the array's ETag changes (the browser fetches the new array)."""
    mark = mark_add(thermogram=processed, kind="rectangle", points=[[5, 5], [9, 9]], user=None)
    assert mark.stats["max_c"] == pytest.approx(310.0)
    temperatures = reverse("survey:api-thermogram-temperatures", args=[processed.pk])
    first = owner_client.get(temperatures)
    etag = first["ETag"]
    assert owner_client.get(temperatures, HTTP_IF_NONE_MATCH=etag).status_code == 304
    with django_capture_on_commit_callbacks(execute=True):
        response = owner_client.post(
            reverse("survey:thermogram_reprocess", args=[processed.pk]), {"source_unit": "K"}
        )
    assert response.status_code == 302
    mark.refresh_from_db()
    assert mark.stats["max_c"] == pytest.approx(36.85, abs=1e-3)
    data = owner_client.get(reverse("survey:api-mark", args=[mark.pk])).json()
    assert data["stats"]["max_c"] == pytest.approx(36.85, abs=1e-3)
    again = owner_client.get(temperatures, HTTP_IF_NONE_MATCH=etag)
    assert again.status_code == 200 and again["ETag"] != etag
    processed.refresh_from_db()
    assert again["ETag"].startswith(f'"{processed.array_sha256[:32]}')
    with processed.array.open("rb") as handle:
        assert hashlib.sha256(handle.read()).hexdigest() == processed.array_sha256


def test_it_empties_a_mark_that_no_longer_fits_the_new_array(
    owner_client, envelope_survey, django_capture_on_commit_callbacks
):
    """A mark outside a smaller re-decoded image says it has no valid pixel, no old numbers."""
    thermogram = make_thermogram(envelope_survey, KELVIN_FIELD)
    mark = mark_add(thermogram=thermogram, kind="point", points=[[25, 15]], user=None)
    np.save(thermogram.original.path, KELVIN_FIELD[:10, :10], allow_pickle=False)
    with thermogram.original.open("rb") as handle:
        digest = hashlib.sha256(handle.read()).hexdigest()
    Thermogram.objects.filter(pk=thermogram.pk).update(
        original_sha256=digest, status=Thermogram.Status.QUEUED
    )
    assert thermogram_process(thermogram.pk) == Thermogram.Status.READY
    data = owner_client.get(reverse("survey:api-mark", args=[mark.pk])).json()
    assert data["stats"]["max_c"] is None
    assert data["error"] == "The mark has no valid pixel."


def test_it_says_a_finding_was_judged_on_older_readings_and_judges_again(
    judged, thermographer_client
):
    """ε of the judged mark changes: the finding says so and names what changed; one click
    judges it again on the current readings."""
    finding, hot, _ = judged
    assert finding_changes(finding) == []
    mark_update(mark=hot, user=None, emissivity=0.9)
    finding.refresh_from_db()
    assert finding_changes(finding) == ["Mark B: emissivity changed."]
    page = thermographer_client.get(reverse("survey:finding", args=[finding.pk]))
    assert b"Judged on older readings" in page.content
    listing = thermographer_client.get(reverse("survey:survey_findings", args=[finding.survey_id]))
    assert b"judged on older readings" in listing.content
    before = finding.max_corrected_c
    response = thermographer_client.post(
        reverse("survey:finding_rejudge", args=[finding.pk]), follow=True
    )
    assert b"Judged again on the current readings" in response.content
    finding.refresh_from_db()
    assert finding_changes(finding) == []
    # At ε 0.9 the 30 °C apparent block reads warmer once corrected (scipy-checked
    # radiometry elsewhere); only the direction matters here.
    assert finding.max_corrected_c > before


def test_it_notices_a_reference_and_a_reflected_temperature_change(judged):
    """The reference mark is part of what the finding was judged on."""
    finding, _, reference = judged
    mark_update(mark=reference, user=None, reflected_c=35.0)
    finding.refresh_from_db()
    assert finding_changes(finding) == ["Mark A: reflected temperature changed."]


def test_it_never_changes_an_issued_report_when_a_finding_is_judged_again(
    judged, reviewer, thermographer_client, django_capture_on_commit_callbacks
):
    """The issued PDF keeps its bytes and fingerprint: the marks of a thermogram it shows are
    locked, and judging the finding again leaves the issued file alone."""
    from reports.services import report_create, report_issue

    finding, hot, _ = judged
    report = report_create(survey=finding.survey, user=reviewer.user)
    with django_capture_on_commit_callbacks(execute=True):
        # Judged on the product's default table: the reviewer accepts it for this report.
        version = report_issue(report=report, user=reviewer.user, accept_unreviewed_criteria=True)
    version.refresh_from_db()
    with version.pdf.open("rb") as handle:
        issued = handle.read()
    with pytest.raises(ValidationError, match="can no longer be changed"):
        mark_update(mark=hot, user=None, emissivity=0.8)
    thermographer_client.post(reverse("survey:finding_rejudge", args=[finding.pk]))
    version = ReportVersion.objects.get(pk=version.pk)
    with version.pdf.open("rb") as handle:
        assert handle.read() == issued
    assert version.sha256 == hashlib.sha256(issued).hexdigest()


def test_it_refuses_to_delete_a_mark_a_finding_uses(judged, thermographer_client):
    """DELETE answers 409 naming the finding; the mark and its reference stay."""
    finding, hot, reference = judged
    for mark in (hot, reference):
        response = thermographer_client.delete(reverse("survey:api-mark", args=[mark.pk]))
        assert response.status_code == 409
        data = response.json()
        assert f"finding #{finding.pk}" in data["error"]
        assert data["findings"][0]["id"] == finding.pk
        assert data["findings"][0]["category"] == "Connection"
    assert Mark.objects.filter(pk__in=[hot.pk, reference.pk]).count() == 2
    assert list(Finding.objects.get(pk=finding.pk).marks.all()) == [hot]


def test_it_deletes_a_mark_no_finding_uses(judged, thermographer_client):
    """Other marks are deleted as before (the workspace asks first)."""
    finding, hot, _ = judged
    spare = mark_add(thermogram=hot.thermogram, kind="point", points=[[70, 60]], user=None)
    response = thermographer_client.delete(reverse("survey:api-mark", args=[spare.pk]))
    assert response.status_code == 204
    assert not Mark.objects.filter(pk=spare.pk).exists()
