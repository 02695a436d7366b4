"""The restore README "Production" describes, done for real: a survey archive exported from
one installation (database A, bucket A) and imported into another (database B, bucket B),
both running with DEBUG=0 through `manage.py`. The same numbers and the same issued PDF,
byte for byte, come out of the other side.
"""

import hashlib
import json
import subprocess
import sys
from urllib.parse import urlparse, urlunparse

import psycopg
import pytest
from django.core.files.uploadedfile import SimpleUploadedFile

from reports.models import ReportVersion
from reports.services import report_create, report_issue
from survey.models import Thermogram
from survey.services.ingest import thermogram_ingest
from survey.services.marks import mark_add
from tests.factories import synthetic_field
from tests.objectstore import bucket_keys, client, make_bucket, s3_environment
from tests.processes import ROOT, production_environment
from tests.production.test_object_storage import npy_bytes, png_bytes
from tests.workers import test_database_url

READ_BACK = """
import json, django
django.setup()
from reports.archive import _opened, _read_manifest
from reports.models import ReportVersion
from reports.results import survey_results
from survey.models import Survey
survey = Survey.objects.get()
with _opened(ARCHIVE) as archive:
    manifest = _read_manifest(archive)
by_sequence = {t.sequence: t for t in survey.thermograms.all()}
problems = []
# Each thermogram's values rebuilt from its original must equal those the archive recorded.
for entry in manifest.get("thermograms", []):
    thermogram = by_sequence.get(entry.get("sequence"))
    if thermogram is None:
        problems.append(f"thermogram {entry.get('original_name')} is missing")
        continue
    for name, value in (entry.get("derived") or {}).items():
        if getattr(thermogram, name) != value:
            problems.append(f"{thermogram}: {name} {getattr(thermogram, name)} != {value}")
print(json.dumps({
    "thermograms": sorted(
        [t.original_name, t.status, t.width, t.height, t.min_c, t.max_c, t.original_sha256]
        for t in survey.thermograms.all()
    ),
    "problems": problems,
    "pdfs": sorted(v.sha256 for v in ReportVersion.objects.filter(status="issued")),
    "results": survey_results(survey)["thermograms"],
}, default=str))
"""


def _without_ids(value):
    """`value` with the row ids (which differ between installations) left out."""
    if isinstance(value, dict):
        return {
            key: _without_ids(item)
            for key, item in value.items()
            if key != "id" and not key.endswith("_id")
        }
    if isinstance(value, list):
        return [_without_ids(item) for item in value]
    return value


def _run(environment: dict, *arguments: str) -> str:
    result = subprocess.run(
        [sys.executable, *arguments],
        cwd=ROOT,
        env=environment,
        capture_output=True,
        text=True,
        timeout=300,
    )
    assert result.returncode == 0, result.stdout[-2000:] + result.stderr[-3000:]
    return result.stdout


def _second_database(postgres_url: str) -> tuple[str, str]:
    """(admin URL, URL) of database B: the configured database's name plus "b"."""
    parsed = urlparse(postgres_url)
    name = parsed.path.lstrip("/") + "b"
    return postgres_url, urlunparse(parsed._replace(path="/" + name))


@pytest.mark.services
@pytest.mark.slow
def test_it_restores_a_survey_into_another_database_and_bucket(
    postgres_url,
    transactional_db,
    s3_media,
    s3_endpoint,
    envelope_survey,
    reviewer,
    thermographer,
    tmp_path,
):
    """export_survey from A, import_survey into B: same readings, same PDF, own bucket."""
    first = thermogram_ingest(
        survey=envelope_survey,
        uploaded_file=SimpleUploadedFile("IR_0301.npy", npy_bytes(synthetic_field(96, 72))),
        photo=SimpleUploadedFile("IR_0301.png", png_bytes()),
        user=thermographer.user,
    )
    thermogram_ingest(
        survey=envelope_survey,
        uploaded_file=SimpleUploadedFile("IR_0302.npy", npy_bytes(synthetic_field(96, 72, 16))),
        user=thermographer.user,
    )
    first.refresh_from_db()
    assert first.status == Thermogram.Status.READY
    mark_add(thermogram=first, kind="rectangle", points=[[50, 10], [80, 50]], user=None)
    report = report_create(survey=envelope_survey, user=thermographer.user)
    issued = report_issue(report=report, user=reviewer.user)
    issued.refresh_from_db()
    assert issued.status == ReportVersion.Status.ISSUED, issued.error
    bucket_a = s3_media["S3_BUCKET"]
    archive = tmp_path / "survey.zip"
    source = production_environment(
        DATABASE_URL=test_database_url(postgres_url),
        MEDIA_ROOT=str(tmp_path / "media-a"),
        **s3_media,
    )
    _run(source, "manage.py", "export_survey", str(envelope_survey.pk), str(archive))

    admin_url, database_b = _second_database(postgres_url)
    name_b = urlparse(database_b).path.lstrip("/")
    with psycopg.connect(admin_url, autocommit=True) as connection:
        connection.execute(f'DROP DATABASE IF EXISTS "{name_b}" WITH (FORCE)')
        connection.execute(f'CREATE DATABASE "{name_b}"')
    try:
        bucket_b = make_bucket(s3_endpoint)
        target = production_environment(
            DATABASE_URL=database_b,
            MEDIA_ROOT=str(tmp_path / "media-b"),
            **s3_environment(s3_endpoint, bucket_b),
        )
        _run(target, "manage.py", "migrate", "--noinput", "-v", "0")
        _run(
            target,
            "manage.py",
            "shell",
            "-c",
            "from survey.models import Organization; "
            "Organization.objects.create(name='Northwind Thermal', slug='northwind')",
        )
        _run(target, "manage.py", "import_survey", str(archive), "--organization", "northwind")
        restored = json.loads(
            _run(target, "-c", f"ARCHIVE = {str(archive)!r}\n{READ_BACK}").splitlines()[-1]
        )
    finally:
        with psycopg.connect(admin_url, autocommit=True) as connection:
            connection.execute(f'DROP DATABASE IF EXISTS "{name_b}" WITH (FORCE)')

    original = json.loads(
        _run(source, "-c", f"ARCHIVE = {str(archive)!r}\n{READ_BACK}").splitlines()[-1]
    )
    assert restored["problems"] == []
    assert restored["thermograms"] == original["thermograms"]
    assert {row[1] for row in restored["thermograms"]} == {"ready"}
    assert restored["pdfs"] == original["pdfs"] == [issued.sha256]
    assert _without_ids(restored["results"]) == _without_ids(original["results"])
    # Bucket B holds its own copies: the same originals, photo and PDF, byte for byte.
    s3 = client(s3_endpoint)

    def digests(bucket: str, prefix: str) -> list[str]:
        return sorted(
            hashlib.sha256(s3.get_object(Bucket=bucket, Key=key)["Body"].read()).hexdigest()
            for key in bucket_keys(s3_endpoint, bucket)
            if key.startswith(prefix)
        )

    for prefix in ("originals/", "photos/", "reports/"):
        assert digests(bucket_b, prefix) == digests(bucket_a, prefix), prefix
        assert digests(bucket_b, prefix), prefix
    assert not list((tmp_path / "media-b").rglob("*.*"))
