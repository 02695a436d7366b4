"""Proposed marks in the app: computed by the processing task, listed, accepted, rejected.

The thermograms are the generated benchmark scenes of tests/scenes.py, whose ground truth
(each hot lug's true maximum, each like component) is computed from the true surface
temperatures, not by the detectors (docs/references.md § Anomaly proposals).
"""

import io
import json
import time

import numpy as np
import pytest
from django.core.files.uploadedfile import SimpleUploadedFile
from django.urls import reverse

from survey.models import Finding, Mark, Member, Proposal, ProposalSettings, Thermogram
from survey.services import proposals as services
from survey.services.ingest import thermogram_ingest
from survey.thermal.marks import mark_mask
from tests.factories import make_thermogram
from tests.scenes import scenes, score
from tests.workers import broker_at, fresh_broker, start_worker, stop_worker

# Redis database of the worker test here, apart from the other worker tests' 11–15.
TEST_REDIS_DB = 9


@pytest.fixture(scope="module")
def lug_scene():
    """A panel with one hot lug among three phases (seed 1803, a seed the defaults were not
    chosen on; truth maximum at (489, 153))."""
    return scenes("electrical", seed=1803, count=1)[0]


def npy_upload(array: np.ndarray, name: str = "panel.npy") -> SimpleUploadedFile:
    buffer = io.BytesIO()
    np.save(buffer, np.asarray(array, dtype=np.float32), allow_pickle=False)
    return SimpleUploadedFile(name, buffer.getvalue())


@pytest.fixture
def upload_scene(django_capture_on_commit_callbacks):
    """Upload a scene's camera array and run the (eager) task as the commit would; ε 1 keeps
    the corrected array the camera's, which is what the detectors were scored on."""

    def upload(survey, scene, name="panel.npy") -> Thermogram:
        with django_capture_on_commit_callbacks(execute=True):
            thermogram = thermogram_ingest(
                survey=survey,
                uploaded_file=npy_upload(scene.temperatures_c, name),
                user=None,
                emissivity=1.0,
            )
        thermogram.refresh_from_db()
        return thermogram

    return upload


def test_it_proposes_the_hot_lug_and_its_reference_in_the_processing_task(
    electrical_survey, lug_scene, upload_scene
):
    """The eager task decodes, then proposes: the lug within 3 px of the truth, and the
    reference on a sound like component."""
    thermogram = upload_scene(electrical_survey, lug_scene)
    assert thermogram.status == Thermogram.Status.READY
    proposals = list(thermogram.proposals.all())
    result = score(lug_scene, proposals)
    assert (result.true_positives, result.false_positives, result.false_negatives) == (1, 0, 0)
    assert (result.references, result.good_references) == (1, 1)
    hot_spot = next(p for p in proposals if p.category == Proposal.Category.HOT_SPOT)
    assert hot_spot.reference.category == Proposal.Category.REFERENCE
    assert "above like components" in hot_spot.reason


def test_it_lists_proposals_with_reasons_in_the_members_unit(
    client, electrical_survey, lug_scene, thermographer, upload_scene
):
    thermogram = upload_scene(electrical_survey, lug_scene)
    hot_spot = thermogram.proposals.get(category=Proposal.Category.HOT_SPOT)
    client.force_login(thermographer.user)
    url = reverse("survey:api-thermogram-proposals", args=[thermogram.pk])
    celsius = client.get(url).json()
    item = next(p for p in celsius["proposals"] if p["id"] == hot_spot.pk)
    assert {"id", "kind", "category", "points", "reason", "score"} <= set(item)
    assert item["kind"] == "ellipse" and item["reason"] == hot_spot.reason
    thermographer.temperature_unit = Member.TemperatureUnit.FAHRENHEIT
    thermographer.save()
    fahrenheit = client.get(url).json()
    item = next(p for p in fahrenheit["proposals"] if p["id"] == hot_spot.pk)
    # A rise of k kelvin is 1.8·k °F (definition of the Fahrenheit degree).
    rise_f = hot_spot.stats["surroundings_rise_k"] * 1.8
    assert f"{rise_f:.1f} °F above its surroundings" in item["reason"]


def test_it_accepts_a_proposal_as_a_mark_with_readings(
    client, electrical_survey, lug_scene, thermographer, upload_scene
):
    """201 with the new mark; accepting the reference too makes it the hot spot's reference,
    and no finding appears."""
    thermogram = upload_scene(electrical_survey, lug_scene)
    hot_spot = thermogram.proposals.get(category=Proposal.Category.HOT_SPOT)
    reference = hot_spot.reference
    client.force_login(thermographer.user)
    response = client.post(reverse("survey:api-proposal-accept", args=[hot_spot.pk]))
    assert response.status_code == 201, response.content
    mark = response.json()
    assert mark["kind"] == "ellipse" and mark["label"] == "A"
    assert mark["corrected"]["max_c"] is not None and mark["reference"] is None
    response = client.post(reverse("survey:api-proposal-accept", args=[reference.pk]))
    assert response.status_code == 201
    hot_mark = Mark.objects.get(pk=mark["id"])
    assert hot_mark.reference_mark_id == response.json()["id"]
    detail = client.get(reverse("survey:api-mark", args=[hot_mark.pk])).json()
    # The lug stands above its like component's reading.
    assert detail["reference"] == "B" and detail["delta_t_c"] > 3.0
    hot_spot.refresh_from_db()
    assert (hot_spot.status, hot_spot.mark_id) == (Proposal.Status.ACCEPTED, hot_mark.pk)
    assert Finding.objects.count() == 0
    again = client.post(reverse("survey:api-proposal-accept", args=[hot_spot.pk]))
    assert again.status_code == 400 and "already accepted" in again.json()["error"]


def test_it_remembers_a_rejection_when_proposing_again(
    client, electrical_survey, lug_scene, thermographer, upload_scene
):
    """204; POST on the list computes again and leaves the rejected place out."""
    thermogram = upload_scene(electrical_survey, lug_scene)
    hot_spot = thermogram.proposals.get(category=Proposal.Category.HOT_SPOT)
    client.force_login(thermographer.user)
    response = client.post(reverse("survey:api-proposal-reject", args=[hot_spot.pk]))
    assert response.status_code == 204 and response.content == b""
    url = reverse("survey:api-thermogram-proposals", args=[thermogram.pk])
    again = client.post(url).json()
    assert [p["category"] for p in again["proposals"]] == ["reference"]
    assert thermogram.proposals.filter(status=Proposal.Status.REJECTED).count() == 1
    assert Mark.objects.filter(thermogram=thermogram).count() == 0


def test_it_leaves_out_places_already_marked(
    electrical_survey, lug_scene, thermographer, upload_scene
):
    thermogram = upload_scene(electrical_survey, lug_scene)
    hot_spot = thermogram.proposals.get(category=Proposal.Category.HOT_SPOT)
    services.proposal_accept(proposal=hot_spot, user=thermographer.user)
    run = services.thermogram_propose(thermogram=thermogram, user=thermographer.user)
    assert [p.category for p in run.proposals] == ["reference"]


def test_it_lets_viewers_read_but_not_decide_and_hides_proposals_from_outsiders(
    client, electrical_survey, lug_scene, viewer, outsider, upload_scene
):
    thermogram = upload_scene(electrical_survey, lug_scene)
    proposal = thermogram.proposals.first()
    list_url = reverse("survey:api-thermogram-proposals", args=[thermogram.pk])
    client.force_login(viewer.user)
    assert client.get(list_url).json()["can_edit"] is False
    assert client.post(list_url).status_code == 403
    for name in ("survey:api-proposal-accept", "survey:api-proposal-reject"):
        assert client.post(reverse(name, args=[proposal.pk])).status_code == 403
    client.force_login(outsider.user)
    assert client.get(list_url).status_code == 404
    for name in ("survey:api-proposal-accept", "survey:api-proposal-reject"):
        response = client.post(reverse(name, args=[proposal.pk]))
        assert response.status_code == 404 and response.json()["error"] == "Not found."
    proposal.refresh_from_db()
    assert proposal.status == Proposal.Status.PROPOSED


def test_it_answers_get_on_accept_with_405(
    client, electrical_survey, lug_scene, thermographer, upload_scene
):
    thermogram = upload_scene(electrical_survey, lug_scene)
    client.force_login(thermographer.user)
    url = reverse("survey:api-proposal-accept", args=[thermogram.proposals.first().pk])
    assert client.get(url).status_code == 405


def test_it_uses_the_surveys_own_settings_over_the_organizations(
    electrical_survey, lug_scene, thermographer, upload_scene
):
    """A survey's least rise above the lug's rise proposes nothing; a blank one inherits the
    organization's point shape."""
    thermogram = upload_scene(electrical_survey, lug_scene)
    org_row = services.organization_proposal_settings(electrical_survey.organization, "electrical")
    services.proposal_settings_save(row=org_row, user=None, hot_spot_shape="point")
    run = services.thermogram_propose(thermogram=thermogram)
    assert {p.kind for p in run.proposals} == {"point"}
    row = services.survey_proposal_settings(electrical_survey)
    services.proposal_settings_save(row=row, user=None, min_rise_c=100.0)
    run = services.thermogram_propose(thermogram=thermogram)
    assert run.proposals == [] and run.note == "Nothing stands out at these settings."
    assert ProposalSettings.objects.count() == 2


def test_it_skips_proposals_on_upload_when_the_organization_turns_them_off(
    electrical_survey, lug_scene, upload_scene
):
    row = services.organization_proposal_settings(electrical_survey.organization, "electrical")
    services.proposal_settings_save(row=row, user=None, enabled=False)
    thermogram = upload_scene(electrical_survey, lug_scene)
    assert thermogram.status == Thermogram.Status.READY
    assert thermogram.proposals.count() == 0


def test_it_says_why_an_envelope_thermogram_has_no_proposals(client, envelope_survey, owner):
    """Without indoor RH the envelope detector cannot run; the list says so."""
    envelope_survey.conditions.indoor_rh_pct = None
    envelope_survey.conditions.save()
    thermogram = make_thermogram(envelope_survey)
    client.force_login(owner.user)
    url = reverse("survey:api-thermogram-proposals", args=[thermogram.pk])
    data = client.post(url).json()
    assert data["proposals"] == [] and "indoor air temperature and RH" in data["note"]


def test_it_proposes_a_cold_corner_of_an_envelope_from_the_corrected_array(
    envelope_survey, thermographer
):
    """20 °C / 50 % inside: the mould limit is 12.63 °C (psychrolib, docs/references.md
    § Anomaly proposals); a 10 °C corner of 40 × 40 px is proposed, the 15 °C wall is not."""
    field = np.full((120, 160), 15.0, dtype=np.float32)
    field[80:, :40] = 10.0
    thermogram = make_thermogram(envelope_survey, field, emissivity=1.0)
    run = services.thermogram_propose(thermogram=thermogram, user=thermographer.user)
    assert [p.category for p in run.proposals] == ["envelope"]
    proposal = run.proposals[0]
    # Points on the image border are moved onto the border pixels' centres (marks take
    # 0 … size − 1, half-open on the right and bottom), so the accepted mark covers the true
    # region (plain numpy on the marks' pixel masks) but for the image's last row and the one
    # inner corner pixel the majority vote leaves out (docs/references.md § Anomaly proposals).
    xs = [x for x, _ in proposal.points]
    ys = [y for _, y in proposal.points]
    assert min(xs) == 0.0 and max(ys) == 119.0
    mark = services.proposal_accept(proposal=proposal, user=thermographer.user)
    covered = mark_mask(field.shape, mark.kind, mark.points)
    truth = field < 12.63
    assert not (covered & ~truth).any()
    missed = np.argwhere(truth & ~covered)
    assert len(missed) <= 41 and set(missed[:, 0].tolist()) <= {80, 119}
    assert mark.kind == "polygon" and mark.stats["max_c"] == pytest.approx(10.0)


@pytest.mark.services
@pytest.mark.slow
def test_it_proposes_marks_in_a_real_worker(
    redis_url, postgres_url, transactional_db, settings, electrical_survey, lug_scene, tmp_path
):
    """Upload through Redis to a separate worker process: the row comes back ready with the
    proposals the eager task makes."""
    from survey.celery import app

    broker = fresh_broker(redis_url, TEST_REDIS_DB)
    log_path = tmp_path / "worker.log"
    worker = start_worker(broker, postgres_url, str(settings.MEDIA_ROOT), log_path)
    settings.CELERY_TASK_ALWAYS_EAGER = False
    app.conf.task_always_eager = False
    try:
        with broker_at(app, broker):
            thermogram = thermogram_ingest(
                survey=electrical_survey,
                uploaded_file=npy_upload(lug_scene.temperatures_c),
                user=None,
                emissivity=1.0,
            )
            deadline = time.monotonic() + 90
            while time.monotonic() < deadline:
                thermogram.refresh_from_db()
                done = thermogram.status not in {"queued", "processing"}
                if (done and thermogram.proposals.exists()) or worker.poll() is not None:
                    break
                time.sleep(0.25)
    finally:
        app.conf.task_always_eager = True
        stop_worker(worker)
    log_text = log_path.read_text(errors="replace")
    assert thermogram.status == Thermogram.Status.READY, log_text[-3000:]
    result = score(lug_scene, list(thermogram.proposals.all()))
    assert (result.true_positives, result.false_positives, result.false_negatives) == (1, 0, 0)


def test_it_answers_bad_json_and_unknown_ids_plainly(client, electrical_survey, thermographer):
    client.force_login(thermographer.user)
    response = client.post(
        reverse("survey:api-proposal-accept", args=[999999]),
        data=json.dumps({}),
        content_type="application/json",
    )
    assert response.status_code == 404
