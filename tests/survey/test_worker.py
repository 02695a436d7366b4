"""Upload to ready through a real Celery worker process, Redis and PostgreSQL."""

import io
import os
import subprocess
import sys
import time
from pathlib import Path
from urllib.parse import urlparse, urlunparse

import numpy as np
import pytest
from django.conf import settings as django_settings
from django.core.files.uploadedfile import SimpleUploadedFile

from survey.models import Thermogram
from survey.services.ingest import thermogram_ingest
from tests.survey.brokers import broker_at

ROOT = Path(__file__).resolve().parents[2]
# Redis database of this test only, so that no other worker on the machine takes its tasks.
TEST_REDIS_DB = "/13"


def _database_url(postgres_url: str) -> str:
    """The URL of the test database pytest-django created (test_<name>)."""
    parsed = urlparse(postgres_url)
    return urlunparse(parsed._replace(path="/" + django_settings.DATABASES["default"]["NAME"]))


@pytest.mark.services
@pytest.mark.slow
def test_it_processes_an_upload_in_a_real_worker(
    redis_url, postgres_url, transactional_db, settings, envelope_survey, tmp_path
):
    """A file uploaded with the broker up is decoded by a separate worker process."""
    from survey.celery import app

    broker = urlunparse(urlparse(redis_url)._replace(path=TEST_REDIS_DB))
    subprocess.run(
        ["redis-cli", "-u", broker, "FLUSHDB"], capture_output=True, timeout=10, check=False
    )
    env = dict(
        os.environ,
        DATABASE_URL=_database_url(postgres_url),
        REDIS_URL=broker,
        CELERY_EAGER="0",
        MEDIA_ROOT=str(settings.MEDIA_ROOT),
        DJANGO_SETTINGS_MODULE="survey.settings",
    )
    log_path = tmp_path / "worker.log"
    celery = Path(sys.executable).with_name("celery")
    with open(log_path, "wb") as log:
        worker = subprocess.Popen(
            [
                str(celery),
                "-A",
                "survey.celery",
                "worker",
                "--pool=solo",
                "-c",
                "1",
                "-l",
                "INFO",
                "--without-gossip",
                "--without-mingle",
                "--without-heartbeat",
            ],
            cwd=ROOT,
            env=env,
            stdout=log,
            stderr=subprocess.STDOUT,
        )
    settings.CELERY_TASK_ALWAYS_EAGER = False
    app.conf.task_always_eager = False
    try:
        buffer = io.BytesIO()
        np.save(buffer, np.array([[20.0, 21.5], [19.0, 24.25]], dtype=np.float32))
        with broker_at(app, broker):
            thermogram = thermogram_ingest(
                survey=envelope_survey,
                uploaded_file=SimpleUploadedFile("worker.npy", buffer.getvalue()),
                user=None,
            )
            deadline = time.monotonic() + 90
            while time.monotonic() < deadline:
                thermogram.refresh_from_db()
                if thermogram.status not in {"queued", "processing"} or worker.poll() is not None:
                    break
                time.sleep(0.25)
    finally:
        app.conf.task_always_eager = True
        worker.terminate()
        try:
            worker.wait(timeout=20)
        except subprocess.TimeoutExpired:
            worker.kill()
            worker.wait()
    log_text = log_path.read_text(errors="replace")
    assert thermogram.status == Thermogram.Status.READY, log_text[-3000:]
    # The values written into the file above.
    assert (thermogram.min_c, thermogram.max_c) == (19.0, 24.25)
    assert thermogram.preview and Path(thermogram.preview.path).exists()
    assert "process_thermogram" in log_text
