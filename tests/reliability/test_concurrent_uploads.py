"""Uploads racing each other, from threads, against the real PostgreSQL.

Identical files sent at the same moment are stored once (the others are told the file is
already there); different files get sequence numbers 1, 2, 3… without repeats.
"""

import io
import threading
from pathlib import Path

import numpy as np
import pytest
from django.core.exceptions import ValidationError
from django.core.files.uploadedfile import SimpleUploadedFile
from django.db import connection

from survey.services.ingest import thermogram_ingest

THREADS = 6


def _npy(base_c: float) -> bytes:
    buffer = io.BytesIO()
    np.save(buffer, np.full((4, 5), base_c, dtype=np.float32))
    return buffer.getvalue()


def _race(survey, files: list[tuple[str, bytes]]) -> tuple[list, list[str]]:
    """Upload each file from its own thread, all released at once."""
    barrier = threading.Barrier(len(files))
    stored, refused = [], []

    def upload(name: str, data: bytes) -> None:
        try:
            barrier.wait()
            thermogram = thermogram_ingest(
                survey=survey, uploaded_file=SimpleUploadedFile(name, data), user=None
            )
            stored.append(thermogram)
        except ValidationError as error:
            refused.append(" ".join(error.messages))
        finally:
            connection.close()

    threads = [threading.Thread(target=upload, args=file) for file in files]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join(timeout=60)
    return stored, refused


@pytest.mark.services
def test_it_stores_identical_concurrent_uploads_once(
    postgres_url, transactional_db, envelope_survey, settings
):
    data = _npy(21.5)
    stored, refused = _race(envelope_survey, [(f"copy-{i}.npy", data) for i in range(THREADS)])
    assert len(stored) == 1 and len(refused) == THREADS - 1
    assert all(message.startswith("Already in this survey as") for message in refused)
    assert envelope_survey.thermograms.count() == 1
    originals = [p for p in Path(settings.MEDIA_ROOT).rglob("originals/**/*") if p.is_file()]
    assert len(originals) == 1  # the refused copies left no file behind


@pytest.mark.services
def test_it_numbers_concurrent_uploads_without_repeats(
    postgres_url, transactional_db, envelope_survey
):
    files = [(f"IR_{i:04d}.npy", _npy(20.0 + i)) for i in range(THREADS)]
    stored, refused = _race(envelope_survey, files)
    assert refused == []
    sequences = sorted(envelope_survey.thermograms.values_list("sequence", flat=True))
    assert sequences == list(range(1, THREADS + 1))
