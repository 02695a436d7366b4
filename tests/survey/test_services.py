"""The survey services: upload pipeline end to end with real files, deletion rules."""

import datetime
import hashlib
import io
from pathlib import Path

import numpy as np
import pytest
from django.core.exceptions import ValidationError
from django.core.files.uploadedfile import SimpleUploadedFile
from django.core.management import call_command
from PIL import Image

from reports.models import Report, ReportVersion
from survey.models import Conditions, Survey, Thermogram
from survey.services import ingest as ingest_services
from survey.services import processing, surveys
from survey.services.arrays import ThermogramNotReady, thermogram_temperatures
from tests.workers import broker_at

# The field every test file is made from; the expected values are these numbers themselves
# (written by the test), converted with exact unit definitions: T[°C] = T[K] − 273.15 and
# T[°C] = (T[°F] − 32) × 5/9 (ISO 80000-5).
FIELD_C = np.array(
    [[18.0, 18.5, 19.0, 19.5], [17.0, 12.5, 19.0, 20.0], [18.0, 18.25, 21.0, 22.5]],
    dtype=np.float32,
)


def _tiff_float() -> bytes:
    import tifffile

    buffer = io.BytesIO()
    tifffile.imwrite(buffer, FIELD_C)
    return buffer.getvalue()


def _tiff_centikelvin() -> bytes:
    import tifffile

    buffer = io.BytesIO()
    tifffile.imwrite(buffer, np.round((FIELD_C + 273.15) * 100).astype(np.uint16))
    return buffer.getvalue()


def _png_centikelvin() -> bytes:
    counts = np.round((FIELD_C + 273.15) * 100).astype(np.uint16)
    buffer = io.BytesIO()
    Image.fromarray(counts).save(buffer, format="PNG")
    return buffer.getvalue()


def _csv_fahrenheit() -> bytes:
    rows = [";".join(f"{v * 9 / 5 + 32:.3f}".replace(".", ",") for v in row) for row in FIELD_C]
    return ("\n".join(rows) + "\n").encode()


def _npy() -> bytes:
    buffer = io.BytesIO()
    np.save(buffer, FIELD_C, allow_pickle=False)
    return buffer.getvalue()


def _false_colour_png() -> bytes:
    from survey.thermal import render

    rgb = render(FIELD_C, "black-red-yellow", 10.0, 25.0)
    buffer = io.BytesIO()
    Image.fromarray(rgb, "RGB").save(buffer, format="PNG")
    return buffer.getvalue()


FORMATS = [
    ("wall.tif", _tiff_float, {}, 1e-5),
    ("wall-ck.tif", _tiff_centikelvin, {"unit": "K", "scale": 0.01}, 0.006),
    ("wall-ck.png", _png_centikelvin, {"unit": "K", "scale": 0.01}, 0.006),
    ("wall.csv", _csv_fahrenheit, {"unit": "F"}, 0.001),
    ("wall.npy", _npy, {}, 1e-6),
    # Palette inversion recovers the ramp step: 15 K over 256 colours is about 0.06 K.
    (
        "wall-colour.png",
        _false_colour_png,
        {"palette_source": {"palette": "black-red-yellow", "low_c": 10.0, "high_c": 25.0}},
        0.1,
    ),
]


def upload(name: str, data: bytes) -> SimpleUploadedFile:
    return SimpleUploadedFile(name, data)


def ingest(survey, name, data, user=None, capture=None, **options) -> Thermogram:
    with capture(execute=True):
        thermogram = ingest_services.thermogram_ingest(
            survey=survey, uploaded_file=upload(name, data), user=user, **options
        )
    thermogram.refresh_from_db()
    return thermogram


def media_files(settings) -> list[Path]:
    return [p for p in Path(settings.MEDIA_ROOT).rglob("*") if p.is_file()]


@pytest.mark.parametrize(("name", "make", "options", "tolerance"), FORMATS)
def test_it_ingests_each_format_to_ready(
    envelope_survey,
    thermographer,
    django_capture_on_commit_callbacks,
    name,
    make,
    options,
    tolerance,
):
    """Each accepted format ends ready with its °C array, preview and thumbnail."""
    thermogram = ingest(
        envelope_survey,
        name,
        make(),
        thermographer.user,
        django_capture_on_commit_callbacks,
        **options,
    )
    assert thermogram.status == Thermogram.Status.READY, thermogram.error
    temperatures = thermogram_temperatures(thermogram)
    np.testing.assert_allclose(temperatures, FIELD_C, atol=tolerance)
    assert (thermogram.width, thermogram.height) == (4, 3)
    assert thermogram.min_c == pytest.approx(12.5, abs=tolerance)
    assert thermogram.max_c == pytest.approx(22.5, abs=tolerance)
    assert thermogram.estimated == ("palette_source" in options)
    with thermogram.preview.open("rb") as handle:
        assert handle.read(8) == b"\x89PNG\r\n\x1a\n"
    assert thermogram.thumbnail and thermogram.processed_at is not None


def test_it_stores_the_original_unchanged_with_its_sha256(
    envelope_survey, django_capture_on_commit_callbacks
):
    """The stored original is byte-identical, with its sha256, size and name recorded."""
    data = _csv_fahrenheit()
    thermogram = ingest(
        envelope_survey,
        "north wall.csv",
        data,
        capture=django_capture_on_commit_callbacks,
        unit="F",
    )
    with thermogram.original.open("rb") as handle:
        assert handle.read() == data
    assert thermogram.original_sha256 == hashlib.sha256(data).hexdigest()
    assert thermogram.original_size == len(data)
    assert thermogram.original_name == "north wall.csv"
    assert thermogram.decode_settings["unit"] == "F"


def test_it_rejects_an_unreadable_file_without_storing_anything(envelope_survey, settings):
    """A file of no accepted format is refused before anything is written."""
    with pytest.raises(ValidationError, match="not in a format"):
        ingest_services.thermogram_ingest(
            survey=envelope_survey,
            uploaded_file=upload("notes.bin", b"\x00\x01\x02garbage\x00"),
            user=None,
        )
    assert not Thermogram.objects.exists()
    assert media_files(settings) == []


def test_it_rejects_a_file_over_the_size_limit(envelope_survey, settings):
    """Files above THERMOGRAM_MAX_UPLOAD_BYTES are refused with the limit named."""
    settings.THERMOGRAM_MAX_UPLOAD_BYTES = 64
    with pytest.raises(ValidationError, match="limit"):
        ingest_services.thermogram_ingest(
            survey=envelope_survey, uploaded_file=upload("wall.npy", _npy()), user=None
        )
    assert not Thermogram.objects.exists()


def test_it_rejects_a_colour_picture_without_its_scale(envelope_survey):
    """A false-colour picture without palette and range is refused, not guessed."""
    with pytest.raises(ValidationError, match="colour picture"):
        ingest_services.thermogram_ingest(
            survey=envelope_survey, uploaded_file=upload("shot.png", _false_colour_png()), user=None
        )


def test_it_recognises_a_duplicate_upload_by_its_hash(
    envelope_survey, django_capture_on_commit_callbacks
):
    """The same content uploaded twice to a survey is refused the second time."""
    ingest(envelope_survey, "a.npy", _npy(), capture=django_capture_on_commit_callbacks)
    with pytest.raises(ValidationError, match="Already in this survey as a.npy"):
        ingest_services.thermogram_ingest(
            survey=envelope_survey, uploaded_file=upload("copy.npy", _npy()), user=None
        )
    assert envelope_survey.thermograms.count() == 1


def test_it_reports_each_rejected_file_of_a_batch_by_name(
    envelope_survey, django_capture_on_commit_callbacks
):
    """A batch stores every valid file and names every refused one with its reason."""
    files = [
        upload("good.npy", _npy()),
        upload("empty.csv", b""),
        upload("good.tif", _tiff_float()),
        upload("junk.bin", b"\x00\x00\x00\x00"),
    ]
    photos = [upload("good.jpg", _jpeg_photo()), upload("lonely.jpg", _jpeg_photo())]
    with django_capture_on_commit_callbacks(execute=True):
        result = ingest_services.thermograms_ingest_batch(
            survey=envelope_survey, files=files, photos=photos, user=None
        )
    assert sorted(t.original_name for t in result.created) == ["good.npy", "good.tif"]
    rejected = dict(result.rejected)
    assert set(rejected) == {"empty.csv", "junk.bin", "lonely.jpg"}
    assert "empty" in rejected["empty.csv"]
    assert envelope_survey.thermograms.count() == 2
    assert all(t.photo for t in envelope_survey.thermograms.all())


def _jpeg_photo() -> bytes:
    buffer = io.BytesIO()
    Image.new("RGB", (8, 6), (120, 130, 140)).save(buffer, format="JPEG")
    return buffer.getvalue()


def test_it_marks_a_corrupt_file_failed_with_its_message(
    envelope_survey, django_capture_on_commit_callbacks
):
    """A file that passes the header check but cannot be decoded ends failed, explained."""
    thermogram = ingest(
        envelope_survey,
        "cut.tif",
        _tiff_float()[:40],
        capture=django_capture_on_commit_callbacks,
    )
    assert thermogram.status == Thermogram.Status.FAILED
    assert "cut.tif" in thermogram.error
    with pytest.raises(ThermogramNotReady):
        thermogram_temperatures(thermogram)


@pytest.mark.parametrize(
    ("name", "data", "words"),
    [
        # Both a decimal comma and two columns (docs/references.md § Decoding and rendering).
        ("wall.csv", b"20,5\n21,3\n", "semicolons between values"),
        # Text under a TIFF's name (docs/references.md § Decoding and rendering).
        ("wall.tif", b"20.5;21.0\n22.0;23.5\n", "is not a TIFF"),
        ("ragged.csv", b"20.1,20.2,20.3\n20.4,20.5\n", "row 2"),
    ],
)
def test_it_refuses_at_upload_what_the_decoder_refuses(
    envelope_survey, settings, django_capture_on_commit_callbacks, name, data, words
):
    """The decoder's refusal reaches the uploader at once, with its fix; nothing is kept."""
    with pytest.raises(ValidationError) as error, django_capture_on_commit_callbacks():
        ingest_services.thermogram_ingest(
            survey=envelope_survey, uploaded_file=upload(name, data), user=None
        )
    assert words in " ".join(error.value.messages)
    assert not Thermogram.objects.exists()
    assert media_files(settings) == []


def test_it_reprocesses_a_failed_file_with_new_settings(
    envelope_survey, django_capture_on_commit_callbacks
):
    """A 16-bit file uploaded without its scale fails, then reads right once scale is given."""
    thermogram = ingest(
        envelope_survey,
        "counts.tif",
        _tiff_centikelvin(),
        capture=django_capture_on_commit_callbacks,
    )
    assert thermogram.status == Thermogram.Status.FAILED
    assert "scale" in thermogram.error
    with django_capture_on_commit_callbacks(execute=True):
        ingest_services.thermogram_reprocess(thermogram=thermogram, user=None, unit="K", scale=0.01)
    thermogram.refresh_from_db()
    assert thermogram.status == Thermogram.Status.READY
    np.testing.assert_allclose(thermogram_temperatures(thermogram), FIELD_C, atol=0.006)


def test_it_processes_idempotently(envelope_survey, django_capture_on_commit_callbacks):
    """Running the task again on a ready thermogram changes nothing."""
    thermogram = ingest(
        envelope_survey, "a.npy", _npy(), capture=django_capture_on_commit_callbacks
    )
    processed_at = thermogram.processed_at
    assert processing.thermogram_process(thermogram.pk) is None
    thermogram.refresh_from_db()
    assert thermogram.status == Thermogram.Status.READY
    assert thermogram.processed_at == processed_at


def test_it_reclaims_a_stalled_job_but_not_a_live_one(envelope_survey):
    """A job processing with a fresh heartbeat is left alone; a stale one is taken over."""
    from django.utils import timezone

    thermogram = ingest_services.thermogram_ingest(
        survey=envelope_survey, uploaded_file=upload("a.npy", _npy()), user=None
    )
    Thermogram.objects.filter(pk=thermogram.pk).update(
        status=Thermogram.Status.PROCESSING, heartbeat_at=timezone.now()
    )
    assert processing.thermogram_process(thermogram.pk) is None
    Thermogram.objects.filter(pk=thermogram.pk).update(
        heartbeat_at=timezone.now() - processing.stalled_after() - datetime.timedelta(minutes=1)
    )
    assert processing.thermogram_process(thermogram.pk) == Thermogram.Status.READY


def test_it_marks_a_changed_original_damaged(
    envelope_survey, django_capture_on_commit_callbacks, capsys
):
    """An original whose bytes changed on disk is reported damaged, not decoded."""
    thermogram = ingest(
        envelope_survey, "a.npy", _npy(), capture=django_capture_on_commit_callbacks
    )
    ingest(envelope_survey, "b.tif", _tiff_float(), capture=django_capture_on_commit_callbacks)
    Path(thermogram.original.path).write_bytes(_npy()[:-4] + b"\x00\x00\x80\x7f")
    with pytest.raises(SystemExit):
        call_command("verify_media")
    assert "Checked 2 original(s): 1 intact, 1 damaged." in capsys.readouterr().out
    thermogram.refresh_from_db()
    assert thermogram.status == Thermogram.Status.DAMAGED
    Thermogram.objects.filter(pk=thermogram.pk).update(status=Thermogram.Status.QUEUED)
    assert processing.thermogram_process(thermogram.pk) == Thermogram.Status.DAMAGED


def test_it_keeps_the_upload_queued_when_the_broker_is_down(
    envelope_survey, django_capture_on_commit_callbacks, settings, caplog
):
    """With no broker answering, the file is stored and queued; requeue finishes it later."""
    from survey.celery import app

    settings.CELERY_TASK_ALWAYS_EAGER = False
    app.conf.task_always_eager = False
    try:
        # Port 9 (discard) has no Redis on it: a real refused connection.
        with broker_at(app, "redis://127.0.0.1:9/0"):
            thermogram = ingest(
                envelope_survey, "a.npy", _npy(), capture=django_capture_on_commit_callbacks
            )
    finally:
        app.conf.task_always_eager = True
        settings.CELERY_TASK_ALWAYS_EAGER = True
    thermogram.refresh_from_db()
    assert thermogram.status == Thermogram.Status.QUEUED
    assert thermogram.waiting_for_broker
    assert thermogram.original and thermogram.original_sha256
    assert "waits for the broker" in caplog.text
    call_command("requeue_thermograms")
    thermogram.refresh_from_db()
    assert thermogram.status == Thermogram.Status.READY
    assert not thermogram.waiting_for_broker


def test_it_caches_the_array_until_it_is_rewritten(
    envelope_survey, django_capture_on_commit_callbacks
):
    """The array is read once, and read again after re-processing rewrites it."""
    thermogram = ingest(
        envelope_survey,
        "w.csv",
        _csv_fahrenheit(),
        capture=django_capture_on_commit_callbacks,
        unit="F",
    )
    first = thermogram_temperatures(thermogram)
    assert thermogram_temperatures(thermogram) is first
    with django_capture_on_commit_callbacks(execute=True):
        ingest_services.thermogram_reprocess(thermogram=thermogram, user=None, unit="C")
    thermogram.refresh_from_db()
    again = thermogram_temperatures(thermogram)
    # Read as °C, the °F numbers come back unconverted (same file, other unit).
    np.testing.assert_allclose(again, FIELD_C * 9 / 5 + 32, atol=0.001)


def test_it_rerenders_the_preview_when_the_palette_changes(
    envelope_survey, django_capture_on_commit_callbacks
):
    """Changing palette or span re-renders the preview from the stored array."""
    thermogram = ingest(
        envelope_survey, "a.npy", _npy(), capture=django_capture_on_commit_callbacks
    )
    before = Path(thermogram.preview.path).read_bytes()
    surveys.thermogram_update_settings(
        thermogram=thermogram, user=None, palette="grey white-warm", span_low_c=10, span_high_c=30
    )
    assert Path(thermogram.preview.path).read_bytes() != before
    with pytest.raises(ValidationError, match="warmer"):
        surveys.thermogram_update_settings(
            thermogram=thermogram, user=None, span_low_c=30, span_high_c=10
        )


def test_it_creates_a_survey_with_its_conditions(org, site, owner):
    """survey_create writes the survey and its Conditions row together."""
    survey = surveys.survey_create(
        organization=org,
        user=owner.user,
        site=site,
        kind=Survey.Kind.ENVELOPE,
        date=datetime.date(2026, 2, 1),
        conditions={"indoor_air_c": 21.0, "outdoor_air_c": 2.0},
    )
    assert Conditions.objects.get(survey=survey).inside_outside_difference_c == 19.0


def test_it_writes_nothing_when_the_conditions_are_invalid(org, site, owner):
    """An RH above 100 % rolls back the whole survey."""
    with pytest.raises(ValidationError):
        surveys.survey_create(
            organization=org,
            user=owner.user,
            site=site,
            kind=Survey.Kind.ENVELOPE,
            date=datetime.date(2026, 2, 1),
            conditions={"indoor_rh_pct": 140.0},
        )
    assert not Survey.objects.exists()


def test_it_refuses_a_site_of_another_organization(org, outsider, other_org, owner):
    """A survey cannot point at another firm's site."""
    from survey.models import Client, Site

    client = Client.objects.create(organization=other_org, name="Elsewhere")
    foreign = Site.objects.create(organization=other_org, client=client, name="Far away")
    with pytest.raises(ValidationError):
        surveys.survey_create(
            organization=org,
            user=owner.user,
            site=foreign,
            kind="envelope",
            date=datetime.date.today(),
        )


def test_it_refuses_to_delete_a_survey_with_an_issued_report(envelope_survey, owner):
    """Once a report was issued the survey stays; without one it is soft-deleted and restored."""
    report = Report.objects.create(
        organization=envelope_survey.organization, survey=envelope_survey, number="R-1"
    )
    version = ReportVersion.objects.create(
        report=report, version=1, is_draft=False, status=ReportVersion.Status.ISSUED
    )
    with pytest.raises(ValidationError, match="issued report"):
        surveys.survey_soft_delete(survey=envelope_survey, user=owner.user)
    envelope_survey.refresh_from_db()
    assert envelope_survey.status == Survey.Status.ACTIVE
    version.status = ReportVersion.Status.READY
    version.save()
    surveys.survey_soft_delete(survey=envelope_survey, user=owner.user)
    assert Survey.objects.get(pk=envelope_survey.pk).status == Survey.Status.DELETED
    surveys.survey_restore(survey=envelope_survey, user=owner.user)
    assert Survey.objects.get(pk=envelope_survey.pk).status == Survey.Status.ACTIVE


@pytest.mark.parametrize(
    "name, data",
    [
        # 2 rows of 2000 values: a 12 kB table of the kind that took a report worker to 3 GB.
        ("strip.csv", ("\n".join(";".join(["21.5"] * 2000) for _ in range(2)) + "\n").encode()),
        ("strip.csv", ("\n".join("21.5;22.5" for _ in range(2000)) + "\n").encode()),
    ],
)
def test_it_refuses_an_extreme_shape_at_upload(envelope_survey, settings, name, data):
    """Nothing is stored; the message gives the shape and the limit."""
    with pytest.raises(ValidationError) as caught:
        ingest_services.thermogram_ingest(
            survey=envelope_survey, uploaded_file=upload(name, data), user=None
        )
    assert "at most 20 times as wide as it is tall" in " ".join(caught.value.messages)
    assert not envelope_survey.thermograms.exists()
    assert media_files(settings) == []


def test_it_states_an_oversized_upload_in_one_unit(envelope_survey, settings):
    """One byte over the limit never reads "1.0 MB; the limit is 1 MB"."""
    settings.THERMOGRAM_MAX_UPLOAD_BYTES = 1_048_576
    with pytest.raises(ValidationError) as caught:
        ingest_services.thermogram_ingest(
            survey=envelope_survey, uploaded_file=upload("big.npy", bytes(1_048_577)), user=None
        )
    assert caught.value.messages == ["big.npy is 1,048,577 bytes; the limit is 1,048,576 bytes."]


def test_it_keeps_one_limit_for_text_tables(
    envelope_survey, settings, django_capture_on_commit_callbacks
):
    """THERMOGRAM_MAX_TEXT_BYTES refuses a larger table at upload; the worker decodes with the
    same limit (it once allowed 200 MB of text there, 1.3 GB of memory for 100 MB)."""
    settings.THERMOGRAM_MAX_TEXT_BYTES = 1000
    table = ((";".join(["21.5"] * 10) + "\n") * 30).encode()  # 10 × 30 values, 1500 bytes
    with pytest.raises(ValidationError, match="a text table may be at most 1,000 bytes"):
        ingest_services.thermogram_ingest(
            survey=envelope_survey, uploaded_file=upload("t.csv", table), user=None
        )
    settings.THERMOGRAM_MAX_TEXT_BYTES = 2000
    thermogram = ingest(envelope_survey, "t.csv", table, capture=django_capture_on_commit_callbacks)
    assert thermogram.status == Thermogram.Status.READY
    # The worker reads the same setting: lowered, decoding the table again is refused.
    settings.THERMOGRAM_MAX_TEXT_BYTES = 1000
    with django_capture_on_commit_callbacks(execute=True):
        ingest_services.thermogram_reprocess(thermogram=thermogram, user=None, unit="C")
    thermogram.refresh_from_db()
    assert thermogram.status == Thermogram.Status.FAILED
    assert "may be at most 1,000 bytes" in thermogram.error
