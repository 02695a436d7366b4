"""Media in an S3 bucket: every file goes through the storage API, on every process.

A real S3 API (moto's server on loopback), PostgreSQL, Redis, gunicorn and a Celery worker,
all with DEBUG=0 and each with its own empty MEDIA_ROOT: what one process stores, another
can only read through the bucket. In-process tests cover the operator commands on a bucket.
"""

import datetime
import hashlib
import io
import json
from pathlib import Path

import numpy as np
import pytest
from django.contrib.auth.hashers import PBKDF2PasswordHasher
from django.core.files.uploadedfile import SimpleUploadedFile
from django.core.management import call_command
from django.utils import timezone
from PIL import Image
from pypdf import PdfReader

from reports.models import Report, ReportVersion
from survey.models import Survey, Thermogram
from survey.services.ingest import thermogram_ingest
from tests.conftest import PASSWORD
from tests.factories import synthetic_field
from tests.objectstore import (
    bucket_keys,
    bucket_versions,
    client,
    local_files,
    make_bucket,
    s3_environment,
)
from tests.processes import Browser, production_stack, wait_until
from tests.workers import fresh_broker

# Redis database of these tests (this helper's own; no other test worker takes its tasks).
TEST_REDIS_DB = 7


def npy_bytes(array: np.ndarray) -> bytes:
    buffer = io.BytesIO()
    np.save(buffer, np.asarray(array, dtype=np.float32), allow_pickle=False)
    return buffer.getvalue()


def png_bytes(width: int = 64, height: int = 48) -> bytes:
    buffer = io.BytesIO()
    Image.new("RGB", (width, height), (90, 120, 150)).save(buffer, format="PNG")
    return buffer.getvalue()


def usable_password(member) -> None:
    """Store the persona's password with a hasher the production processes know."""
    member.user.password = PBKDF2PasswordHasher().encode(PASSWORD, "productiontests")
    member.user.save(update_fields=["password"])


@pytest.mark.services
@pytest.mark.slow
def test_it_keeps_every_file_in_the_bucket_from_upload_to_issued_report(
    redis_url,
    postgres_url,
    transactional_db,
    s3_endpoint,
    collected_static,
    tmp_path,
    owner,
    outsider,
    envelope_survey,
):
    """Upload, process on a worker without the web disk, issue, download: nothing on disk."""
    bucket = make_bucket(s3_endpoint, versioned=True)
    broker = fresh_broker(redis_url, TEST_REDIS_DB)
    usable_password(owner)
    usable_password(outsider)
    arrays = {
        "IR_0001.npy": synthetic_field(64, 48, base_c=18.0),
        "IR_0002.npy": synthetic_field(64, 48, base_c=21.0),
    }
    with production_stack(
        tmp_path,
        postgres_url=postgres_url,
        broker=broker,
        static_root=collected_static,
        storage=s3_environment(s3_endpoint, bucket),
    ) as stack:
        browser = Browser(stack.web.url)
        browser.sign_in(owner.user.username, PASSWORD)
        files = [
            ("files", (name, npy_bytes(a), "application/octet-stream"))
            for name, a in arrays.items()
        ]
        files.append(("photos", ("IR_0001.png", png_bytes(), "image/png")))
        response = browser.post(
            f"/surveys/{envelope_survey.pk}/upload/", {"source_unit": "C"}, files=files
        )
        assert response.status_code == 302, response.text[:500]
        thermograms = Thermogram.objects.filter(survey=envelope_survey)
        wait_until(
            lambda: (
                thermograms.count() == 2
                and not thermograms.filter(status__in=["queued", "processing"]).exists()
            ),
            timeout=90,
            message=stack.logs(),
        )
        assert set(thermograms.values_list("status", flat=True)) == {"ready"}, stack.logs()
        for thermogram in thermograms:
            array = arrays[thermogram.original_name]
            # The decoded range is the range of the values uploaded above.
            assert thermogram.min_c == pytest.approx(float(array.min()))
            assert thermogram.max_c == pytest.approx(float(array.max()))
        first = thermograms.get(original_name="IR_0001.npy")
        thumbnail = browser.get(f"/thermograms/{first.pk}/thumbnail.png")
        assert thumbnail.status_code == 200 and thumbnail.content.startswith(b"\x89PNG")
        original = browser.get(f"/thermograms/{first.pk}/original/")
        assert original.content == npy_bytes(arrays["IR_0001.npy"])

        assert browser.post(f"/reports/survey/{envelope_survey.pk}/create/").status_code == 302
        report = Report.objects.get(survey=envelope_survey)
        issued = browser.post(f"/reports/{report.pk}/issue/", {"change_note": "", "confirm": "on"})
        assert issued.status_code == 302, issued.text[:500]
        version = ReportVersion.objects.get(report=report, is_draft=False)
        wait_until(
            lambda: (
                ReportVersion.objects.get(pk=version.pk).status
                in {ReportVersion.Status.ISSUED, ReportVersion.Status.FAILED}
            ),
            timeout=120,
            message=stack.logs(),
        )
        version.refresh_from_db()
        assert version.status == ReportVersion.Status.ISSUED, (version.error, stack.logs())
        download = browser.get(f"/reports/versions/{version.pk}/pdf/")
        assert download.status_code == 200
        assert download.headers["Content-Type"] == "application/pdf"
        assert hashlib.sha256(download.content).hexdigest() == version.sha256
        text = "".join(
            page.extract_text() for page in PdfReader(io.BytesIO(download.content)).pages
        )
        assert "Harbour Lane" in text

        stranger = Browser(stack.web.url)
        stranger.sign_in(outsider.user.username, PASSWORD)
        assert stranger.get(f"/reports/versions/{version.pk}/pdf/").status_code == 404
        assert stranger.get(f"/thermograms/{first.pk}/original/").status_code == 404

        assert local_files(stack.web_media) == []
        assert [local_files(folder) for folder in stack.worker_media] == [[]]
        assert "Traceback" not in stack.logs()
        worker_log = stack.worker_logs[0].read_text(errors="replace").splitlines()

    # The worker logs JSON lines; those written inside a task carry its id and organization.
    entries = [json.loads(line) for line in worker_log if line.startswith("{")]
    inside = [e for e in entries if e["message"].startswith("Processing thermogram")]
    assert len(inside) == 2
    assert all(e["task_id"] and e["organization_id"] == owner.organization_id for e in inside)

    keys = bucket_keys(s3_endpoint, bucket)
    assert sum(key.startswith("originals/") for key in keys) == 2
    assert sum(key.startswith("photos/") for key in keys) == 1
    assert sum(key.startswith("reports/") and key.endswith(".pdf") for key in keys) == 1
    for thermogram in thermograms:
        for name in ("temperatures.npy", "preview.png", "thumbnail.png"):
            assert f"derived/{thermogram.organization_id}/{thermogram.pk}/{name}" in keys
    versions, deleted = bucket_versions(s3_endpoint, bucket)
    assert set(versions.values()) == {1} and deleted == [], (versions, deleted)


def _ingest(survey: Survey, name: str, base_c: float, on_commit) -> Thermogram:
    """Upload and process (in-process, as on the embedded default) with media in the bucket."""
    upload = SimpleUploadedFile(name, npy_bytes(synthetic_field(48, 32, base_c=base_c)))
    with on_commit(execute=True):
        return thermogram_ingest(survey=survey, uploaded_file=upload, user=None)


def test_it_verifies_originals_kept_in_a_bucket(
    s3_media, envelope_survey, settings, capsys, django_capture_on_commit_callbacks
):
    """verify_media reads each original from the bucket and flags the one changed there."""
    intact = _ingest(envelope_survey, "IR_0101.npy", 17.0, django_capture_on_commit_callbacks)
    changed = _ingest(envelope_survey, "IR_0102.npy", 19.0, django_capture_on_commit_callbacks)
    assert Thermogram.objects.get(pk=intact.pk).status == Thermogram.Status.READY
    call_command("verify_media")
    assert "2 intact, 0 damaged" in capsys.readouterr().out
    client(s3_media["S3_ENDPOINT_URL"]).put_object(
        Bucket=s3_media["S3_BUCKET"], Key=changed.original.name, Body=b"not the original"
    )
    with pytest.raises(SystemExit) as exit_status:
        call_command("verify_media")
    assert exit_status.value.code == 1
    assert "1 intact, 1 damaged" in capsys.readouterr().out
    assert Thermogram.objects.get(pk=changed.pk).status == Thermogram.Status.DAMAGED
    assert local_files(Path(settings.MEDIA_ROOT)) == []


def test_it_purges_a_deleted_survey_and_its_objects(
    s3_media, envelope_survey, settings, django_capture_on_commit_callbacks
):
    """purge_deleted removes the survey's originals and derived files from the bucket."""
    endpoint, bucket = s3_media["S3_ENDPOINT_URL"], s3_media["S3_BUCKET"]
    _ingest(envelope_survey, "IR_0201.npy", 17.0, django_capture_on_commit_callbacks)
    _ingest(envelope_survey, "IR_0202.npy", 19.0, django_capture_on_commit_callbacks)
    assert len(bucket_keys(endpoint, bucket)) == 2 * 4  # original, array, preview, thumbnail
    Survey.objects.filter(pk=envelope_survey.pk).update(
        status=Survey.Status.DELETED, deleted_at=timezone.now() - datetime.timedelta(days=31)
    )
    with django_capture_on_commit_callbacks(execute=True):
        call_command("purge_deleted", "--days", "30")
    assert local_files(Path(settings.MEDIA_ROOT)) == []
    assert bucket_keys(endpoint, bucket) == []
    assert not Survey.objects.filter(pk=envelope_survey.pk).exists()


def test_it_lets_reports_load_media_from_the_bucket(s3_media):
    """The report URL fetcher reads media through the storage API, refusing escapes."""
    from django.core.files.base import ContentFile
    from django.core.files.storage import default_storage

    from reports.fetcher import BASE_URL, LocalOnlyFetcher

    name = default_storage.save("photos/wall.png", ContentFile(png_bytes()))
    fetched = LocalOnlyFetcher().fetch(f"{BASE_URL}media/{name}")
    assert (fetched.read(), fetched.content_type) == (png_bytes(), "image/png")
    for url in (f"{BASE_URL}media/../photos/wall.png", f"{BASE_URL}media/photos/none.png"):
        with pytest.raises(ValueError):
            LocalOnlyFetcher().fetch(url)
