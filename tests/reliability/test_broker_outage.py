"""The broker stops: nothing answers 500, nothing is stuck, everything is sent once it is back.

Each test starts a Redis server of its own on a free port (tests/brokers.py), points the
test process's publisher at it, stops it, and starts it again on the same port. Requests go
through the real views with real transactions (transactional_db), so the enqueue runs on
commit as in production.
"""

import io

import numpy as np
import pytest
from django.core.files.uploadedfile import SimpleUploadedFile
from django.core.management import call_command
from django.urls import reverse

from reports.jobs import requeue_reports
from reports.models import ReportVersion
from reports.rendering import report_render
from reports.services import report_create
from survey.jobs import requeue_thermograms
from survey.models import Thermogram
from survey.services.marks import mark_add
from tests.conftest import login
from tests.factories import make_thermogram
from tests.workers import broker_at


def _report(survey, member):
    thermogram = make_thermogram(survey, title="North wall")
    mark_add(thermogram=thermogram, kind="point", points=[[40, 30]], user=None)
    return report_create(survey=survey, user=member.user)


def _messages(response) -> str:
    return " ".join(str(message) for message in response.context["messages"])


@pytest.mark.services
def test_it_keeps_a_draft_and_an_issue_waiting_while_the_broker_is_down(
    transactional_db, client, envelope_survey, reviewer, private_redis, publisher
):
    """Draft and issue answer with a clear message, not 500; once Redis is back the re-queue
    job sends both, and each renders."""
    report = _report(envelope_survey, reviewer)
    login(client, reviewer)
    client.raise_request_exception = False
    with broker_at(publisher, private_redis.url(3)):
        private_redis.stop()
        draft = client.post(reverse("reports:draft", args=[report.pk]), follow=True)
        assert draft.status_code == 200
        assert "cannot be reached just now" in _messages(draft)
        issue = client.post(
            reverse("reports:issue", args=[report.pk]), {"confirm": "on"}, follow=True
        )
        assert issue.status_code == 200
        assert "cannot be reached just now" in _messages(issue)
        # Issuing again while the first one waits is not refused as "being issued already".
        again = client.post(
            reverse("reports:issue", args=[report.pk]), {"confirm": "on"}, follow=True
        )
        assert "being issued already" not in _messages(again)
        versions = list(report.versions.order_by("pk"))
        assert [(v.is_draft, v.status, v.waiting_for_broker) for v in versions] == [
            (True, "queued", True),
            (False, "queued", True),
        ]
        page = client.get(reverse("reports:survey", args=[envelope_survey.pk])).content.decode()
        assert "Waiting for the render queue" in page
        progress = client.get(reverse("reports:progress", args=[versions[1].pk])).json()
        assert progress["waiting_for_broker"] and "cannot be reached" in progress["stage"]

        private_redis.start()
        assert requeue_reports() == 2  # what celery beat runs every minute
        assert private_redis.queue_length(3) == 2
        assert requeue_reports() == 0  # nothing waits any more
    for version in versions:
        version.refresh_from_db()
        assert not version.waiting_for_broker and version.status == "queued"
        # What the worker does with the message (here in-process).
        assert report_render(version.pk)
        version.refresh_from_db()
    assert [v.status for v in versions] == ["ready", "issued"]


@pytest.mark.services
def test_it_sends_a_waiting_draft_again_on_the_next_request(
    transactional_db, client, envelope_survey, thermographer, private_redis, publisher
):
    """Asking for the draft again (or pressing "Send again now") re-queues it at once."""
    report = _report(envelope_survey, thermographer)
    login(client, thermographer)
    with broker_at(publisher, private_redis.url(4)):
        private_redis.stop()
        client.post(reverse("reports:draft", args=[report.pk]))
        version = report.versions.get()
        assert version.waiting_for_broker
        retry = client.post(reverse("reports:retry", args=[version.pk]), follow=True)
        assert "cannot be reached just now" in _messages(retry)
        private_redis.start()
        response = client.post(reverse("reports:draft", args=[report.pk]), follow=True)
        assert "Draft requested" in _messages(response)
        assert report.versions.count() == 1
        version.refresh_from_db()
        assert not version.waiting_for_broker
        assert private_redis.queue_length(4) == 1


def _npy() -> bytes:
    buffer = io.BytesIO()
    np.save(buffer, np.array([[20.0, 21.5], [19.0, 24.25]], dtype=np.float32))
    return buffer.getvalue()


@pytest.mark.services
def test_it_says_an_upload_waits_for_the_queue_and_sends_it_when_the_broker_is_back(
    transactional_db, client, envelope_survey, thermographer, private_redis, publisher
):
    """The page does not claim "processing has started"; the re-queue job sends the file."""
    login(client, thermographer)
    with broker_at(publisher, private_redis.url(5)):
        private_redis.stop()
        response = client.post(
            reverse("survey:survey_upload", args=[envelope_survey.pk]),
            {"files": [SimpleUploadedFile("IR_0001.npy", _npy())], "source_unit": "C"},
            follow=True,
        )
        text = _messages(response)
        assert "processing has started" not in text
        assert "processed automatically when it is back" in text
        thermogram = envelope_survey.thermograms.get()
        assert thermogram.status == Thermogram.Status.QUEUED and thermogram.waiting_for_broker
        status = client.get(reverse("survey:survey_status", args=[envelope_survey.pk])).json()
        assert status["thermograms"][0]["status_display"] == (
            "Stored; waiting for the processing queue"
        )
        assert requeue_thermograms() == 0  # still down: it keeps waiting
        private_redis.start()
        assert requeue_thermograms() == 1
        assert private_redis.queue_length(5) == 1
    thermogram.refresh_from_db()
    assert not thermogram.waiting_for_broker


@pytest.mark.services
def test_it_requeues_reports_from_the_command_line(
    transactional_db, envelope_survey, reviewer, private_redis, publisher
):
    """`manage.py requeue_reports` sends waiting and queued renders, like requeue_thermograms."""
    report = _report(envelope_survey, reviewer)
    version = ReportVersion.objects.create(report=report, version=1, requested_by=reviewer.user)
    out, err = io.StringIO(), io.StringIO()
    with broker_at(publisher, private_redis.url(6)):
        private_redis.stop()
        call_command("requeue_reports", stdout=out, stderr=err)
        assert "Could not reach the broker for 1 render(s)." in err.getvalue()
        version.refresh_from_db()
        assert version.waiting_for_broker
        private_redis.start()
        call_command("requeue_reports", stdout=out, stderr=err)
    assert "Queued 1 report render(s)." in out.getvalue()
    assert private_redis.queue_length(6) == 1
