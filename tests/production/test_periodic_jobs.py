"""Periodic jobs on Celery beat: purge deleted surveys, remove ended share links.

Each job is idempotent and safe to run twice at once (two beats by mistake, or a run that
overlaps the next): two runs started together do each piece of work, and write each audit
line, once. The last test runs the real `celery beat` and a worker with DEBUG=0.
"""

import datetime
import secrets
import subprocess
import sys
import threading
from pathlib import Path

import numpy as np
import pytest
from django.conf import settings as django_settings
from django.db import connection
from django.utils import timezone

from reports.models import DownloadLog, Report, ReportVersion, ShareLink
from reports.tasks import expire_share_links
from survey.celery import app
from survey.models import AuditEvent, Survey
from survey.tasks import purge_deleted_surveys
from tests.factories import make_thermogram
from tests.processes import ROOT, production_environment, wait_until
from tests.production.test_object_storage import TEST_REDIS_DB
from tests.workers import fresh_broker, start_worker, stop_worker, test_database_url


def run_twice_at_once(job) -> list:
    """Start `job` in two threads released together; their results."""
    barrier = threading.Barrier(2)
    results: list = [None, None]
    errors: list = []

    def run(index: int) -> None:
        try:
            barrier.wait(timeout=10)
            results[index] = job()
        except Exception as error:  # noqa: BLE001 - reported by the test below
            errors.append(error)
        finally:
            connection.close()

    threads = [threading.Thread(target=run, args=(i,)) for i in range(2)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join(timeout=60)
    assert errors == []
    return results


def _deleted_survey(org, site, days_ago: float) -> Survey:
    survey = Survey.objects.create(
        organization=org,
        site=site,
        kind=Survey.Kind.ROOF,
        date=datetime.date(2026, 2, 1),
        status=Survey.Status.DELETED,
        deleted_at=timezone.now() - datetime.timedelta(days=days_ago),
    )
    make_thermogram(survey, np.full((4, 4), 12.0))
    return survey


def _link(version: ReportVersion, *, expired_days: float = 0, revoked_days: float | None = None):
    now = timezone.now()
    return ShareLink.objects.create(
        version=version,
        token=secrets.token_urlsafe(32),
        expires_at=now - datetime.timedelta(days=expired_days)
        if expired_days
        else now + datetime.timedelta(days=10),
        revoked_at=None if revoked_days is None else now - datetime.timedelta(days=revoked_days),
    )


def _issued_version(survey: Survey) -> ReportVersion:
    report = Report.objects.create(organization=survey.organization, survey=survey, number="R1")
    return ReportVersion.objects.create(
        report=report, version=1, is_draft=False, status=ReportVersion.Status.ISSUED
    )


def test_it_schedules_both_jobs_on_beat():
    """Beat sends the two jobs every PERIODIC_JOB_INTERVAL_SECONDS; both are registered tasks."""
    schedule = django_settings.CELERY_BEAT_SCHEDULE
    tasks = {entry["task"] for entry in schedule.values()}
    assert {"survey.tasks.purge_deleted_surveys", "reports.tasks.expire_share_links"} <= tasks
    for entry in schedule.values():
        assert entry["task"] in app.tasks
    for key in ("purge-deleted-surveys", "expire-share-links"):
        assert schedule[key]["schedule"] == django_settings.PERIODIC_JOB_INTERVAL_SECONDS


@pytest.mark.services
def test_it_purges_each_due_survey_once_when_two_runs_overlap(
    postgres_url, transactional_db, org, site, settings
):
    """Two purges at once: the three due surveys go, one audit line each; the rest stay."""
    settings.PURGE_DELETED_AFTER_DAYS = 30
    due = [_deleted_survey(org, site, days_ago=31 + i) for i in range(3)]
    recent = _deleted_survey(org, site, days_ago=5)
    files = [Path(settings.MEDIA_ROOT) / t.original.name for s in due for t in s.thermograms.all()]
    assert all(path.exists() for path in files)
    results = run_twice_at_once(purge_deleted_surveys)
    assert sum(results) == 3
    assert not Survey.objects.filter(pk__in=[s.pk for s in due]).exists()
    assert Survey.objects.filter(pk=recent.pk).exists()
    purges = AuditEvent.objects.filter(action="purge").values_list("object_id", flat=True)
    assert sorted(purges) == sorted(str(s.pk) for s in due)
    assert not any(path.exists() for path in files)
    assert purge_deleted_surveys() == 0  # nothing left: a later run changes nothing


@pytest.mark.services
def test_it_removes_each_ended_share_link_once_when_two_runs_overlap(
    postgres_url, transactional_db, envelope_survey, settings
):
    """Links ended more than SHARE_LINK_KEEP_DAYS ago go once each; downloads stay logged."""
    settings.SHARE_LINK_KEEP_DAYS = 90
    version = _issued_version(envelope_survey)
    old_expired = [_link(version, expired_days=91), _link(version, expired_days=200)]
    old_revoked = _link(version, revoked_days=95)
    recent_expired = _link(version, expired_days=3)
    live = _link(version)
    DownloadLog.objects.create(version=version, share_link=old_expired[0])
    results = run_twice_at_once(expire_share_links)
    assert sum(results) == 3
    gone = [link.pk for link in [*old_expired, old_revoked]]
    assert not ShareLink.objects.filter(pk__in=gone).exists()
    assert set(ShareLink.objects.values_list("pk", flat=True)) == {recent_expired.pk, live.pk}
    lines = AuditEvent.objects.filter(action="share_link.expire").values_list(
        "object_id", flat=True
    )
    assert sorted(lines) == sorted(str(pk) for pk in gone)
    assert DownloadLog.objects.get(version=version).share_link is None
    assert expire_share_links() == 0


@pytest.mark.services
@pytest.mark.slow
def test_it_runs_the_jobs_from_a_real_beat_and_worker(
    redis_url, postgres_url, transactional_db, org, site, envelope_survey, tmp_path, settings
):
    """`celery beat` (DEBUG=0) sends both jobs; a worker runs them on the shared database."""
    due = _deleted_survey(org, site, days_ago=40)
    version = _issued_version(envelope_survey)
    ended = _link(version, expired_days=120)
    broker = fresh_broker(redis_url, TEST_REDIS_DB)
    shared = {
        "DEBUG": "0",
        "SECRET_KEY": "periodic-jobs-test",
        "ALLOWED_HOSTS": "127.0.0.1",
        "PERIODIC_JOB_INTERVAL_SECONDS": "1",
        "MEDIA_ROOT": str(settings.MEDIA_ROOT),
    }
    worker_log = tmp_path / "worker.log"
    worker = start_worker(broker, postgres_url, str(settings.MEDIA_ROOT), worker_log, **shared)
    beat_log = tmp_path / "beat.log"
    environment = production_environment(
        DATABASE_URL=test_database_url(postgres_url), REDIS_URL=broker, **shared
    )
    celery = Path(sys.executable).with_name("celery")
    command = [str(celery), "-A", "survey.celery", "beat", "-l", "INFO"]
    command += ["--schedule", str(tmp_path / "beat-schedule")]
    with open(beat_log, "ab") as log:
        beat = subprocess.Popen(
            command, cwd=ROOT, env=environment, stdout=log, stderr=subprocess.STDOUT
        )
    try:
        wait_until(
            lambda: (
                not Survey.objects.filter(pk=due.pk).exists()
                and not ShareLink.objects.filter(pk=ended.pk).exists()
            ),
            timeout=60,
            message=beat_log.read_text(errors="replace") + worker_log.read_text(errors="replace"),
        )
    finally:
        stop_worker(beat)
        stop_worker(worker)
    text = worker_log.read_text(errors="replace")
    assert "survey.tasks.purge_deleted_surveys" in text
    assert "reports.tasks.expire_share_links" in text
    assert "Sending due task purge-deleted-surveys" in beat_log.read_text(errors="replace")
