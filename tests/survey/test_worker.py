"""Upload to ready through a real Celery worker process, Redis and PostgreSQL."""

import io
import time
from pathlib import Path

import numpy as np
import pytest
from django.core.files.uploadedfile import SimpleUploadedFile

from survey.models import Thermogram
from survey.services.ingest import thermogram_ingest
from tests.workers import broker_at, fresh_broker, start_worker, stop_worker

# Redis database of this test only, so that no other worker on the machine takes its tasks.
TEST_REDIS_DB = 13


@pytest.mark.services
@pytest.mark.slow
def test_it_processes_an_upload_in_a_real_worker(
    redis_url, postgres_url, transactional_db, settings, envelope_survey, tmp_path
):
    """A file uploaded with the broker up is decoded by a separate worker process."""
    from survey.celery import app

    broker = fresh_broker(redis_url, TEST_REDIS_DB)
    log_path = tmp_path / "worker.log"
    worker = start_worker(broker, postgres_url, str(settings.MEDIA_ROOT), log_path)
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
        stop_worker(worker)
    log_text = log_path.read_text(errors="replace")
    assert thermogram.status == Thermogram.Status.READY, log_text[-3000:]
    # The values written into the file above.
    assert (thermogram.min_c, thermogram.max_c) == (19.0, 24.25)
    assert thermogram.preview and Path(thermogram.preview.path).exists()
    assert "process_thermogram" in log_text
