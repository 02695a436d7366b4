"""Survey archives built to hurt: zip bombs, lies in the manifest, broken zips.

Each is refused with a message saying what is wrong, writes nothing, and never holds the
archive's contents in memory at once.
"""

import io
import json
import tracemalloc
import zipfile

import pytest
from django.core.exceptions import ValidationError

from reports.archive import survey_export, survey_import
from survey.models import Mark, Survey, Thermogram
from survey.thermal.marks import MAX_PROFILE_SAMPLES
from tests.reliability.test_archive import (  # noqa: F401 - the fixtures
    full_survey,
    report_file,
)

MB = 1024 * 1024


def _rewrite(data: bytes, change=None, extra: dict[str, bytes] | None = None) -> bytes:
    """The archive with its manifest changed by `change(manifest)` and `extra` files added
    (listed in the manifest with their true sha256)."""
    import hashlib

    out = io.BytesIO()
    with zipfile.ZipFile(io.BytesIO(data)) as source:
        manifest = json.loads(source.read("manifest.json"))
        if change:
            change(manifest)
        for name, content in (extra or {}).items():
            manifest["files"][name] = hashlib.sha256(content).hexdigest()
        with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as target:
            target.writestr("manifest.json", json.dumps(manifest))
            for info in source.infolist():
                if info.filename != "manifest.json":
                    target.writestr(info, source.read(info.filename))
            for name, content in (extra or {}).items():
                target.writestr(name, content)
    return out.getvalue()


def _counts():
    return Survey.objects.count(), Thermogram.objects.count(), Mark.objects.count()


@pytest.fixture
def archive(full_survey):  # noqa: F811
    return survey_export(survey=full_survey, user=None)


def test_it_streams_entries_instead_of_holding_them(archive, other_org, settings):
    """Five 20 MB entries of zeros (a 100 MB archive in a few hundred kB) are checked a
    chunk at a time: the import's Python allocations stay far below their size."""
    zeros = bytes(20 * MB)
    data = _rewrite(archive, extra={f"padding/{i}.bin": zeros for i in range(5)})
    del zeros
    assert len(data) < 2 * MB
    tracemalloc.start()
    try:
        survey_import(data=data, organization=other_org, user=None)
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    assert peak < 40 * MB, f"peak {peak / MB:.0f} MB"


def test_it_refuses_an_archive_over_the_total_limit(archive, other_org, settings):
    settings.ARCHIVE_MAX_BYTES = 5 * MB
    data = _rewrite(archive, extra={f"padding/{i}.bin": bytes(2 * MB) for i in range(5)})
    before = _counts()
    with pytest.raises(ValidationError, match=r"may hold at most 5.0 MB"):
        survey_import(data=data, organization=other_org, user=None)
    assert _counts() == before


def test_it_refuses_an_issued_version_that_claims_to_be_a_draft(archive, other_org):
    def draft(manifest):
        manifest["reports"][0]["versions"][0]["is_draft"] = True

    before = _counts()
    with pytest.raises(ValidationError, match="claims to be a draft"):
        survey_import(data=_rewrite(archive, draft), organization=other_org, user=None)
    assert _counts() == before


def test_it_refuses_marks_outside_their_image(archive, other_org):
    def outside(manifest):
        manifest["thermograms"][0]["marks"][0]["points"] = [[5000, 5000], [5010, 5010]]

    with pytest.raises(ValidationError, match=r"Mark A of .* outside the image \(0–159"):
        survey_import(data=_rewrite(archive, outside), organization=other_org, user=None)


def test_it_caps_an_imported_line_profile(archive, other_org, django_capture_on_commit_callbacks):
    def long_profile(manifest):
        line = next(m for m in manifest["thermograms"][0]["marks"] if m["kind"] == "line")
        line["stats"]["profile"] = [[float(d), 20.0] for d in range(50_000)]

    with django_capture_on_commit_callbacks(execute=True):
        survey = survey_import(
            data=_rewrite(archive, long_profile), organization=other_org, user=None
        )
    line = Mark.objects.get(thermogram__survey=survey, kind="line")
    assert len(line.stats["profile"]) <= MAX_PROFILE_SAMPLES


def _corrupt_entry(data: bytes, prefix: str) -> bytes:
    """Flip bytes inside the compressed data of the entry starting with `prefix`."""
    with zipfile.ZipFile(io.BytesIO(data)) as archive:
        info = next(i for i in archive.infolist() if i.filename.startswith(prefix))
    damaged = bytearray(data)
    start = info.header_offset + 30 + len(info.filename.encode()) + len(info.extra)
    for offset in range(start + 5, start + min(info.compress_size, 40)):
        damaged[offset] ^= 0x55
    return bytes(damaged)


@pytest.mark.parametrize(
    "spoil, message",
    [
        (lambda data: data[: len(data) // 2], "not a zip file"),
        (lambda data: _corrupt_entry(data, "originals/0001"), "damaged"),
        (lambda data: _corrupt_entry(data, "manifest.json"), "damaged"),
    ],
)
def test_it_turns_a_broken_zip_into_a_clear_message(archive, other_org, spoil, message):
    before = _counts()
    with pytest.raises(ValidationError) as caught:
        survey_import(data=spoil(archive), organization=other_org, user=None)
    text = " ".join(caught.value.messages)
    assert message in text and " at 0x" not in text
    assert _counts() == before
