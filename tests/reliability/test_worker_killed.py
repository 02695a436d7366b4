"""A worker killed in the middle of processing a thermogram: the job is done again, once.

Two ways a worker dies, each with a real Celery worker process, Redis and PostgreSQL:

- the whole worker is killed (SIGKILL: power lost, container killed). Its task was taken
  but not acknowledged (acks_late), so Redis hands it out again once the visibility timeout
  passes; the test starts a second worker with CELERY_VISIBILITY_TIMEOUT=2 (production
  default: the task time limit plus 300 s) so it does not wait. The second worker reclaims
  the row once the first one's heartbeat is stale (THERMOGRAM_STALLED_AFTER_SECONDS=2,
  production 120). In production the re-queue job finds it sooner still: see
  test_stalled_jobs.py.
- only the pool process doing the work is killed (the kernel's out-of-memory killer picks
  the biggest process). The worker sees it lost (reject_on_worker_lost) and puts the task
  back at once; the new delivery finds the row still `processing` and retries after the
  stall time instead of dropping the job.

Either way: one thermogram row, status ready, one preview, one array, one upload in the
audit log, and no half-written files left in its folder.

The same two deaths in the middle of rendering a report's PDF (a draft when the whole worker
dies, an issued version when only the pool process dies): the version ends ready (or
issued) once, one ReportVersion row, one PDF file on disk whose sha256 is the stored one.
Reports count as stalled after REPORT_STALLED_AFTER_SECONDS (production 120 s; here 2 s, or
8 s for the pool-process case).
"""

import hashlib
import io
import os
import signal
import time
from pathlib import Path

import numpy as np
import pytest
from django.core.files.uploadedfile import SimpleUploadedFile

from reports.models import ReportVersion
from reports.services import report_create, report_issue, report_request_draft
from survey.models import AuditEvent, Thermogram
from survey.services.ingest import thermogram_ingest
from survey.services.marks import mark_add
from tests.factories import make_thermogram, synthetic_field
from tests.workers import broker_at, fresh_broker, start_worker, stop_worker

ROOT = Path(__file__).resolve().parents[2]
STALL_SECONDS = 2
# Noise compresses badly, so the preview PNG takes a few seconds: time to kill the worker.
HEIGHT, WIDTH = 2400, 3200


def _start_worker(broker, postgres_url, media_root, log_path, pool, **extra):
    """A worker that counts a job stalled after STALL_SECONDS and restores unacked tasks fast;
    `extra` environment variables override those."""
    environment = {
        "CELERY_VISIBILITY_TIMEOUT": "2",
        "CELERY_UNACKED_RESTORE_INTERVAL": "1",
        "THERMOGRAM_STALLED_AFTER_SECONDS": str(STALL_SECONDS),
        "REPORT_STALLED_AFTER_SECONDS": str(STALL_SECONDS),
    }
    environment.update(extra)
    return start_worker(broker, postgres_url, media_root, log_path, pool, **environment)


def _pool_children(pid: int) -> list[int]:
    path = Path(f"/proc/{pid}/task/{pid}/children")
    return [int(child) for child in path.read_text().split()] if path.exists() else []


def _wait_for(predicate, seconds: float, step: float = 0.02) -> bool:
    deadline = time.monotonic() + seconds
    while time.monotonic() < deadline:
        if predicate():
            return True
        time.sleep(step)
    return False


def _status(pk: int) -> str:
    return Thermogram.objects.values_list("status", flat=True).get(pk=pk)


def _upload(survey) -> Thermogram:
    noise = np.random.default_rng(7).uniform(15.0, 35.0, (HEIGHT, WIDTH)).astype(np.float32)
    buffer = io.BytesIO()
    np.save(buffer, noise)
    return thermogram_ingest(
        survey=survey,
        uploaded_file=SimpleUploadedFile("IR_killed.npy", buffer.getvalue()),
        user=None,
    )


def _assert_done_once(thermogram: Thermogram, survey, log_text: str) -> None:
    thermogram.refresh_from_db()
    assert thermogram.status == Thermogram.Status.READY, log_text[-4000:]
    assert survey.thermograms.count() == 1
    assert (thermogram.height, thermogram.width) == (HEIGHT, WIDTH)
    # The noise drawn above lies within 15..35 °C.
    assert 15.0 <= thermogram.min_c < thermogram.max_c <= 35.0
    folder = Path(thermogram.preview.path).parent
    assert sorted(p.name for p in folder.iterdir()) == [
        "preview.png",
        "temperatures.npy",
        "thumbnail.png",
    ]
    assert np.load(thermogram.array.path).shape == (HEIGHT, WIDTH)
    uploads = AuditEvent.objects.filter(action="upload", object_id=str(thermogram.pk))
    assert uploads.count() == 1
    assert log_text.count("Task survey.tasks.process_thermogram[") >= 2  # delivered twice


def _writing(thermogram: Thermogram, media_root: str) -> bool:
    folder = Path(media_root) / "derived" / str(thermogram.organization_id) / str(thermogram.pk)
    return any(folder.glob(".tmp-*"))


def _kill_mid_processing(thermogram: Thermogram, victim, moment=None) -> None:
    """Wait until the worker has claimed the row (and `moment()` holds), then SIGKILL."""
    assert _wait_for(lambda: _status(thermogram.pk) == Thermogram.Status.PROCESSING, 60)
    if moment is None:
        time.sleep(0.5)
    else:
        assert _wait_for(moment, 60, 0.001), "never caught the worker writing"
    os.kill(victim(), signal.SIGKILL)
    thermogram.refresh_from_db()
    assert thermogram.status == Thermogram.Status.PROCESSING, "finished before the kill"
    assert not thermogram.preview


@pytest.mark.services
@pytest.mark.slow
def test_it_redelivers_the_task_of_a_killed_worker_to_another_worker(
    redis_url, postgres_url, transactional_db, settings, envelope_survey, tmp_path, publisher
):
    """SIGKILL the whole worker mid-render; a second worker finishes the job exactly once."""
    broker = fresh_broker(redis_url, 14)
    log_path = tmp_path / "workers.log"
    first = _start_worker(broker, postgres_url, str(settings.MEDIA_ROOT), log_path, "solo")
    second = None
    try:
        with broker_at(publisher, broker):
            thermogram = _upload(envelope_survey)
        # Killed while writing a derived file: its temporary file is left behind.
        media_root = str(settings.MEDIA_ROOT)
        _kill_mid_processing(
            thermogram, lambda: first.pid, moment=lambda: _writing(thermogram, media_root)
        )
        first.wait(timeout=10)
        time.sleep(STALL_SECONDS + 0.5)
        second = _start_worker(broker, postgres_url, str(settings.MEDIA_ROOT), log_path, "solo")
        _wait_for(lambda: _status(thermogram.pk) == Thermogram.Status.READY, 90, 0.25)
    finally:
        stop_worker(first)
        if second is not None:
            stop_worker(second)
    _assert_done_once(thermogram, envelope_survey, log_path.read_text(errors="replace"))


@pytest.mark.services
@pytest.mark.slow
def test_it_redelivers_the_task_of_a_killed_pool_process(
    redis_url, postgres_url, transactional_db, settings, envelope_survey, tmp_path, publisher
):
    """SIGKILL only the pool process mid-render; the task comes back and finishes once."""
    broker = fresh_broker(redis_url, 15)
    log_path = tmp_path / "worker.log"
    # A stall time longer than the worker takes to notice a dead pool process (its pool
    # upkeep runs every 5 s), so the new delivery finds the row still `processing` with a
    # live-looking heartbeat; no redelivery by timeout here.
    worker = _start_worker(
        broker,
        postgres_url,
        str(settings.MEDIA_ROOT),
        log_path,
        "prefork",
        THERMOGRAM_STALLED_AFTER_SECONDS="8",
        CELERY_VISIBILITY_TIMEOUT="600",
    )
    try:
        assert _wait_for(lambda: _pool_children(worker.pid), 30, 0.1), "no pool process"
        with broker_at(publisher, broker):
            thermogram = _upload(envelope_survey)
        _kill_mid_processing(thermogram, lambda: _pool_children(worker.pid)[0])
        _wait_for(lambda: _status(thermogram.pk) == Thermogram.Status.READY, 90, 0.25)
    finally:
        stop_worker(worker)
    log_text = log_path.read_text(errors="replace")
    assert "WorkerLostError" in log_text, log_text[-4000:]
    assert "Retry in 9" in log_text, log_text[-4000:]
    _assert_done_once(thermogram, envelope_survey, log_text)


# --- report renders ------------------------------------------------------------------------

# Enough thermograms that the render spends a few seconds drawing them, one by one.
REPORT_THERMOGRAMS = 6


def _report_of(survey, member):
    """A report of `survey` whose every thermogram has a mark, so each is drawn in the PDF."""
    for index in range(REPORT_THERMOGRAMS):
        thermogram = make_thermogram(
            survey, synthetic_field(base_c=18.0 + index), title=f"Wall {index + 1}"
        )
        mark_add(thermogram=thermogram, kind="point", points=[[40, 30]], user=None)
    return report_create(survey=survey, user=member.user)


def _version_row(pk: int) -> dict:
    return ReportVersion.objects.values("status", "stage", "sha256").get(pk=pk)


def _kill_mid_render(version: ReportVersion, victim) -> None:
    """SIGKILL as soon as the worker is drawing thermograms or laying out pages (a heartbeat
    was just written), before the PDF is written. Pictures are drawn in parallel, so any
    drawing stage counts, not one in particular."""

    def mid_render() -> bool:
        stage = _version_row(version.pk)["stage"]
        return stage.startswith("Drawing thermogram") or stage == "Laying out the pages"

    assert _wait_for(mid_render, 60, 0.002), _version_row(version.pk)
    os.kill(victim(), signal.SIGKILL)
    row = _version_row(version.pk)
    assert row["status"] == ReportVersion.Status.RENDERING, "finished before the kill"
    assert row["sha256"] == ""


def _assert_rendered_once(version: ReportVersion, status: str, log_text: str, media_root):
    version.refresh_from_db()
    assert version.status == status, (version.status, version.error, log_text[-4000:])
    assert ReportVersion.objects.filter(report=version.report).count() == 1
    pdfs = sorted(Path(media_root).rglob("*.pdf"))
    assert pdfs == [Path(version.pdf.path)], pdfs
    data = pdfs[0].read_bytes()
    assert data.startswith(b"%PDF-") and data.rstrip().endswith(b"%%EOF")
    assert hashlib.sha256(data).hexdigest() == version.sha256
    assert version.page_count >= 1 and version.progress_pct == 100
    assert log_text.count("Task reports.tasks.render_report[") >= 2  # delivered twice


@pytest.mark.services
@pytest.mark.slow
def test_it_redelivers_a_report_render_of_a_killed_worker_to_another_worker(
    redis_url,
    postgres_url,
    transactional_db,
    settings,
    envelope_survey,
    thermographer,
    tmp_path,
    publisher,
):
    """SIGKILL the whole worker mid-render of a draft; a second worker renders it once."""
    broker = fresh_broker(redis_url, 12)
    media_root = str(settings.MEDIA_ROOT)
    log_path = tmp_path / "workers.log"
    report = _report_of(envelope_survey, thermographer)
    first = _start_worker(broker, postgres_url, media_root, log_path, "solo")
    second = None
    try:
        with broker_at(publisher, broker):
            version = report_request_draft(report=report, user=thermographer.user)
        _kill_mid_render(version, lambda: first.pid)
        first.wait(timeout=10)
        time.sleep(STALL_SECONDS + 0.5)
        # Asking again while the row says `rendering` returns it instead of a second draft.
        assert report_request_draft(report=report, user=thermographer.user) == version
        second = _start_worker(broker, postgres_url, media_root, log_path, "solo")
        _wait_for(lambda: _version_row(version.pk)["sha256"] != "", 60, 0.25)
    finally:
        stop_worker(first)
        if second is not None:
            stop_worker(second)
    log_text = log_path.read_text(errors="replace")
    _assert_rendered_once(version, ReportVersion.Status.READY, log_text, media_root)
    assert version.is_draft and version.issued_at is None


@pytest.mark.services
@pytest.mark.slow
def test_it_redelivers_a_report_render_of_a_killed_pool_process(
    redis_url,
    postgres_url,
    transactional_db,
    settings,
    envelope_survey,
    reviewer,
    tmp_path,
    publisher,
):
    """SIGKILL only the pool process mid-render of an issue; the version is issued once."""
    broker = fresh_broker(redis_url, 11)
    media_root = str(settings.MEDIA_ROOT)
    log_path = tmp_path / "worker.log"
    report = _report_of(envelope_survey, reviewer)
    # The task comes back while the claim's heartbeat is fresh and must wait for the stall
    # time, not be dropped. The worker notices a dead pool process within 5 s (its pool
    # upkeep runs every 5 s), so a stall time of 8 s keeps the heartbeat fresh until then.
    worker = _start_worker(
        broker,
        postgres_url,
        media_root,
        log_path,
        "prefork",
        REPORT_STALLED_AFTER_SECONDS="8",
        CELERY_VISIBILITY_TIMEOUT="600",
    )
    try:
        assert _wait_for(lambda: _pool_children(worker.pid), 30, 0.1), "no pool process"
        with broker_at(publisher, broker):
            version = report_issue(report=report, user=reviewer.user)
        _kill_mid_render(version, lambda: _pool_children(worker.pid)[0])
        _wait_for(lambda: _version_row(version.pk)["sha256"] != "", 60, 0.25)
    finally:
        stop_worker(worker)
    log_text = log_path.read_text(errors="replace")
    assert "WorkerLostError" in log_text, log_text[-4000:]
    assert "Retry in 9" in log_text, log_text[-4000:]
    _assert_rendered_once(version, ReportVersion.Status.ISSUED, log_text, media_root)
    assert version.issued_at is not None and version.issued_by == reviewer.user
    issues = AuditEvent.objects.filter(action="report.issue", object_id=str(version.pk))
    assert issues.count() == 1
