"""Lost workers are noticed from the heartbeat within the stall time, not the broker's hour.

With real Celery worker processes on PostgreSQL and a private Redis: a worker killed in the
middle of a decode or a report render leaves its row `processing`/`rendering`; its heartbeat
stops, and the re-queue job (what celery beat runs every minute) sends the job again once
the heartbeat is older than the stall time. Redis's visibility timeout stays at its
production default (the time limit plus five minutes), so it is not what recovers the job.
Stall times are 2 s here (production 120 s) and heartbeats every second (production 15 s).
"""

import io
import os
import signal
import time

import numpy as np
import pytest
from django.core.files.uploadedfile import SimpleUploadedFile

from reports.jobs import requeue_reports
from reports.models import ReportVersion
from reports.rendering import LOST_TOO_OFTEN as RENDER_LOST_TOO_OFTEN
from reports.rendering import report_render
from reports.services import report_create, report_request_draft
from survey.jobs import requeue_thermograms
from survey.models import Thermogram
from survey.services.ingest import thermogram_ingest
from survey.services.marks import mark_add
from survey.services.processing import LOST_TOO_OFTEN, thermogram_process, thermogram_status_text
from tests.factories import make_thermogram, synthetic_field
from tests.workers import broker_at, start_worker, stop_worker

STALL_SECONDS = 2
# Noise compresses badly: processing this takes a few seconds, longer than the stall time.
HEIGHT, WIDTH = 4000, 5000


def _wait_for(predicate, seconds: float, step: float = 0.02) -> bool:
    deadline = time.monotonic() + seconds
    while time.monotonic() < deadline:
        if predicate():
            return True
        time.sleep(step)
    return False


def _worker(private_redis, postgres_url, settings, log_path):
    return start_worker(
        private_redis.url(1),
        postgres_url,
        str(settings.MEDIA_ROOT),
        log_path,
        THERMOGRAM_STALLED_AFTER_SECONDS=str(STALL_SECONDS),
        REPORT_STALLED_AFTER_SECONDS=str(STALL_SECONDS),
        TASK_HEARTBEAT_SECONDS="1",
    )


@pytest.fixture
def short_stalls(settings):
    """The test process (where the re-queue job runs) uses the workers' stall time."""
    settings.THERMOGRAM_STALLED_AFTER_SECONDS = STALL_SECONDS
    settings.REPORT_STALLED_AFTER_SECONDS = STALL_SECONDS


def _upload(survey, publisher, private_redis) -> Thermogram:
    noise = np.random.default_rng(11).uniform(15.0, 35.0, (HEIGHT, WIDTH)).astype(np.float32)
    buffer = io.BytesIO()
    np.save(buffer, noise)
    return thermogram_ingest(
        survey=survey,
        uploaded_file=SimpleUploadedFile("IR_long.npy", buffer.getvalue()),
        user=None,
    )


def _status(pk: int) -> str:
    return Thermogram.objects.values_list("status", flat=True).get(pk=pk)


@pytest.mark.services
@pytest.mark.slow
def test_it_requeues_a_decode_whose_worker_was_killed(
    transactional_db,
    postgres_url,
    settings,
    short_stalls,
    envelope_survey,
    private_redis,
    publisher,
    tmp_path,
):
    """SIGKILL the worker mid-decode: within the stall time the page says so, the re-queue
    job sends it again and a second worker finishes it."""
    log_path = tmp_path / "workers.log"
    first = _worker(private_redis, postgres_url, settings, log_path)
    second = None
    try:
        with broker_at(publisher, private_redis.url(1)):
            thermogram = _upload(envelope_survey, publisher, private_redis)
            assert _wait_for(lambda: _status(thermogram.pk) == "processing", 60)
            time.sleep(0.3)
            os.kill(first.pid, signal.SIGKILL)
            first.wait(timeout=10)
            assert _status(thermogram.pk) == "processing", "finished before the kill"
            time.sleep(STALL_SECONDS + 0.5)
            thermogram.refresh_from_db()
            assert thermogram_status_text(thermogram) == "Stalled; it will be queued again"
            assert requeue_thermograms() == 1
            thermogram.refresh_from_db()
            assert thermogram_status_text(thermogram) == "Stalled, re-queued"
            second = _worker(private_redis, postgres_url, settings, log_path)
            _wait_for(lambda: _status(thermogram.pk) == "ready", 90, 0.25)
    finally:
        stop_worker(first)
        if second is not None:
            stop_worker(second)
    thermogram.refresh_from_db()
    log_text = log_path.read_text(errors="replace")
    assert thermogram.status == "ready", log_text[-3000:]
    assert (thermogram.height, thermogram.width) == (HEIGHT, WIDTH)
    assert thermogram.attempts == 2
    # The workers know the periodic jobs celery beat sends them (CELERY_IMPORTS).
    for job in ("survey.jobs.requeue_thermograms", "reports.jobs.requeue_reports"):
        assert job in log_text


@pytest.mark.services
@pytest.mark.slow
def test_it_keeps_a_long_decode_alive_with_its_heartbeat(
    transactional_db,
    postgres_url,
    settings,
    short_stalls,
    envelope_survey,
    private_redis,
    publisher,
    tmp_path,
):
    """A decode longer than the stall time is never taken for stalled while its worker lives."""
    log_path = tmp_path / "worker.log"
    worker = _worker(private_redis, postgres_url, settings, log_path)
    requeued = 0
    started = None
    try:
        with broker_at(publisher, private_redis.url(1)):
            thermogram = _upload(envelope_survey, publisher, private_redis)
            assert _wait_for(lambda: _status(thermogram.pk) == "processing", 60)
            started = time.monotonic()
            while _status(thermogram.pk) == "processing" and time.monotonic() - started < 90:
                requeued += requeue_thermograms()
                time.sleep(0.25)
            took = time.monotonic() - started
    finally:
        stop_worker(worker)
    thermogram.refresh_from_db()
    assert thermogram.status == "ready", log_path.read_text(errors="replace")[-3000:]
    assert took > STALL_SECONDS, f"the decode took {took:.1f} s: too short to show anything"
    assert requeued == 0 and thermogram.attempts == 1


@pytest.mark.services
@pytest.mark.slow
def test_it_requeues_a_report_render_whose_worker_was_killed(
    transactional_db,
    postgres_url,
    settings,
    short_stalls,
    envelope_survey,
    thermographer,
    private_redis,
    publisher,
    tmp_path,
):
    """SIGKILL the worker mid-render: the progress says stalled, then re-queued; it finishes."""
    from django.test import Client
    from django.urls import reverse

    for index in range(6):
        thermogram = make_thermogram(envelope_survey, synthetic_field(base_c=18.0 + index))
        mark_add(thermogram=thermogram, kind="point", points=[[40, 30]], user=None)
    report = report_create(survey=envelope_survey, user=thermographer.user)
    log_path = tmp_path / "workers.log"
    first = _worker(private_redis, postgres_url, settings, log_path)
    second = None
    client = Client()
    client.force_login(thermographer.user)
    try:
        with broker_at(publisher, private_redis.url(1)):
            version = report_request_draft(report=report, user=thermographer.user)

            def drawing() -> bool:
                stage = ReportVersion.objects.values_list("stage", flat=True).get(pk=version.pk)
                return stage.startswith("Drawing") or stage == "Laying out the pages"

            assert _wait_for(drawing, 60, 0.002)
            os.kill(first.pid, signal.SIGKILL)
            first.wait(timeout=10)
            time.sleep(STALL_SECONDS + 0.5)
            progress = client.get(reverse("reports:progress", args=[version.pk])).json()
            assert progress["stage"].startswith("Stalled: its worker was lost")
            assert requeue_reports() == 1
            progress = client.get(reverse("reports:progress", args=[version.pk])).json()
            assert (progress["status"], progress["stage"]) == ("queued", "Stalled, re-queued")
            second = _worker(private_redis, postgres_url, settings, log_path)
            _wait_for(lambda: ReportVersion.objects.get(pk=version.pk).sha256 != "", 90, 0.25)
    finally:
        stop_worker(first)
        if second is not None:
            stop_worker(second)
    version.refresh_from_db()
    assert version.status == "ready", log_path.read_text(errors="replace")[-3000:]
    assert version.attempts == 2 and report.versions.count() == 1


def test_it_fails_a_decode_that_lost_its_worker_too_often(envelope_survey, settings):
    """A file whose processing kills its worker every time is failed, not retried for ever."""
    thermogram = make_thermogram(envelope_survey)
    Thermogram.objects.filter(pk=thermogram.pk).update(
        status=Thermogram.Status.QUEUED, attempts=settings.TASK_MAX_ATTEMPTS
    )
    assert thermogram_process(thermogram.pk) == Thermogram.Status.FAILED
    thermogram.refresh_from_db()
    assert thermogram.error == LOST_TOO_OFTEN


def test_it_fails_a_render_that_lost_its_worker_too_often(envelope_survey, reviewer, settings):
    report = report_create(survey=envelope_survey, user=reviewer.user)
    version = ReportVersion.objects.create(
        report=report, version=1, attempts=settings.TASK_MAX_ATTEMPTS
    )
    assert not report_render(version.pk)
    version.refresh_from_db()
    assert (version.status, version.error) == ("failed", RENDER_LOST_TOO_OFTEN)
