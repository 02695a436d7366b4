"""Hypothesis fuzzing of the decoders, the survey and thermogram forms and the marks API.

Every case must end in a result or a clear message: a `ThermogramFormatError` from a
decoder, a form page with the field's error, a JSON 400 with an `error`; never a 500, and
never a half-saved row (rows are counted before and after each case). The number of cases
tried is printed at the end of the module.
"""

import datetime
import io
import json
import math
import time
from collections import Counter

import numpy as np
import pytest
import tifffile
from django.forms.models import model_to_dict
from django.urls import reverse
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from PIL import Image

from survey.models import Conditions, Mark, Member, Survey, Thermogram
from survey.services.marks import MAX_MARKS_PER_THERMOGRAM, MAX_POLYGON_VERTICES
from survey.thermal import ThermogramFormatError, read_temperatures
from tests.factories import make_thermogram
from tests.hypothesis_profiles import examples

CASES: Counter = Counter()
FUZZ = settings(
    max_examples=examples(60),
    deadline=None,
    suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow],
    database=None,
)


_SUMMARY = {"seconds": 0.0, "registered": False}


@pytest.fixture(autouse=True)
def _report_case_count(request):
    """Time each fuzz test; print the number of cases tried once, at the end of the session."""
    if not _SUMMARY["registered"]:
        _SUMMARY["registered"] = True

        def summary():
            total = sum(CASES.values())
            detail = ", ".join(f"{name} {count}" for name, count in sorted(CASES.items()))
            print(f"\nfuzzing: {total} cases tried in {_SUMMARY['seconds']:.1f} s ({detail})")

        request.config.add_cleanup(summary)
    started = time.monotonic()
    yield
    _SUMMARY["seconds"] += time.monotonic() - started


# --- decoders -------------------------------------------------------------------------------

# Decoding a few kilobytes takes well under a millisecond: many more cases for the same time.
DECODER_FUZZ = settings(FUZZ, max_examples=examples(400))

EXTENSIONS = [".tif", ".tiff", ".png", ".csv", ".tsv", ".txt", ".npy", ".jpg"]
MAGIC = [b"II*\x00", b"MM\x00*", b"\x89PNG\r\n\x1a\n", b"\x93NUMPY\x01\x00", b"\xff\xd8\xff", b""]


def _decode(data: bytes, name: str) -> None:
    """A decoder answers an array of °C or a ThermogramFormatError; nothing else."""
    try:
        values = read_temperatures(data, name)
    except ThermogramFormatError as error:
        assert str(error).strip(), "an error without a message"
        # Messages reach the user: no Python object or library internals in them.
        assert " at 0x" not in str(error) and "<ast." not in str(error), str(error)
        return
    assert isinstance(values, np.ndarray) and values.dtype == np.float32
    assert values.ndim == 2


@DECODER_FUZZ
@given(data=st.binary(max_size=4096), extension=st.sampled_from(EXTENSIONS))
def test_it_decodes_random_bytes_or_says_why_not(data, extension):
    """Random bytes under any accepted file name."""
    CASES["random bytes"] += 1
    _decode(data, "fuzz" + extension)


@DECODER_FUZZ
@given(
    magic=st.sampled_from(MAGIC),
    tail=st.binary(max_size=2048),
    extension=st.sampled_from(EXTENSIONS),
)
def test_it_decodes_random_bytes_behind_a_real_signature(magic, tail, extension):
    """A real format signature followed by garbage reaches the format's own parser."""
    CASES["signature + garbage"] += 1
    _decode(magic + tail, "fuzz" + extension)


def _valid_files() -> dict[str, bytes]:
    field = (20 + np.arange(48, dtype=np.float32).reshape(6, 8) / 4).astype(np.float32)
    files = {}
    buffer = io.BytesIO()
    tifffile.imwrite(buffer, field)
    files["float.tif"] = buffer.getvalue()
    buffer = io.BytesIO()
    Image.fromarray((field * 100 + 27315).astype(np.uint16)).save(buffer, format="PNG")
    files["centikelvin.png"] = buffer.getvalue()
    buffer = io.BytesIO()
    np.save(buffer, field)
    files["field.npy"] = buffer.getvalue()
    files["field.csv"] = "\n".join(",".join(f"{v:.2f}" for v in row) for row in field).encode()
    return files


VALID = _valid_files()


@DECODER_FUZZ
@given(name=st.sampled_from(sorted(VALID)), cut=st.floats(0, 1, exclude_max=True))
def test_it_refuses_truncated_files_clearly(name, cut):
    """Each format cut short anywhere."""
    CASES["truncated"] += 1
    data = VALID[name]
    _decode(data[: int(len(data) * cut)], name)


@DECODER_FUZZ
@given(
    name=st.sampled_from(sorted(VALID)), position=st.integers(0, 10_000), byte=st.integers(0, 255)
)
def test_it_survives_a_flipped_byte(name, position, byte):
    """Each format with one byte changed."""
    CASES["flipped byte"] += 1
    data = bytearray(VALID[name])
    data[position % len(data)] = byte
    _decode(bytes(data), name)


def _npy_claiming(shape: tuple[int, int]) -> bytes:
    header = repr({"descr": "<f4", "fortran_order": False, "shape": shape}).encode()
    header += b" " * (-(len(header) + 11) % 64) + b"\n"
    return b"\x93NUMPY\x01\x00" + len(header).to_bytes(2, "little") + header + b"\x00" * 64


def _png_claiming(width: int, height: int) -> bytes:
    import struct
    import zlib

    def chunk(kind: bytes, body: bytes) -> bytes:
        return (
            struct.pack(">I", len(body)) + kind + body + struct.pack(">I", zlib.crc32(kind + body))
        )

    ihdr = struct.pack(">IIBBBBB", width, height, 16, 0, 0, 0, 0)
    return b"\x89PNG\r\n\x1a\n" + chunk(b"IHDR", ihdr) + chunk(b"IDAT", zlib.compress(b"\0" * 64))


def _tiff_claiming(width: int, height: int) -> bytes:
    buffer = io.BytesIO()
    tifffile.imwrite(buffer, np.zeros((2, 2), np.float32))
    data = bytearray(buffer.getvalue())
    # Rewrite the ImageWidth (256) and ImageLength (257) entries of the first directory.
    offset = int.from_bytes(data[4:8], "little")
    count = int.from_bytes(data[offset : offset + 2], "little")
    for index in range(count):
        entry = offset + 2 + 12 * index
        tag = int.from_bytes(data[entry : entry + 2], "little")
        kind = int.from_bytes(data[entry + 2 : entry + 4], "little")
        if tag in (256, 257):
            value = width if tag == 256 else height
            size = 2 if kind == 3 else 4
            data[entry + 8 : entry + 8 + size] = min(value, 256**size - 1).to_bytes(size, "little")
    return bytes(data)


@pytest.mark.parametrize(
    "name, data",
    [
        ("huge.npy", _npy_claiming((200_000, 200_000))),
        ("huge.png", _png_claiming(65_535, 65_535)),
        ("huge.tif", _tiff_claiming(65_535, 65_535)),
    ],
)
def test_it_refuses_huge_declared_sizes_quickly(name, data):
    """A header that claims a gigapixel image is refused from the header, in well under 2 s."""
    CASES["huge header"] += 1
    started = time.monotonic()
    with pytest.raises(ThermogramFormatError) as caught:
        read_temperatures(data, name)
    assert time.monotonic() - started < 2
    assert "megapixel" in str(caught.value) or "pixels" in str(caught.value), str(caught.value)


def test_it_answers_a_csv_with_a_million_columns(
    envelope_survey, django_capture_on_commit_callbacks
):
    """One row of a million numbers: refused at upload by its shape, in seconds."""
    from django.core.exceptions import ValidationError
    from django.core.files.uploadedfile import SimpleUploadedFile

    from survey.services.ingest import thermogram_ingest

    CASES["million columns"] += 1
    data = (",".join(["20.5"] * 1_000_000) + "\n").encode()
    started = time.monotonic()
    with django_capture_on_commit_callbacks(execute=True), pytest.raises(ValidationError) as caught:
        thermogram_ingest(
            survey=envelope_survey, uploaded_file=SimpleUploadedFile("wide.csv", data), user=None
        )
    assert time.monotonic() - started < 15
    assert "1000000×1 pixels" in " ".join(caught.value.messages)
    assert not envelope_survey.thermograms.exists()


# --- forms ----------------------------------------------------------------------------------

NASTY_NUMBERS = st.sampled_from(
    [
        "nan",
        "NaN",
        "inf",
        "-inf",
        "Infinity",
        "1e309",
        "-1e309",
        "150",
        "-1",
        "-0.0",
        "0",
        "2",
        "1e-320",
        "0x10",
        "1,5",
        " 12 ",
        "",
        "abc",
        "١٢",
        "9" * 400,
    ]
) | st.floats(allow_nan=True, allow_infinity=True).map(repr)
NASTY_DATES = st.sampled_from(
    [
        "9999-12-31",
        "10000-01-01",
        "0001-01-01",
        "0000-01-01",
        "2026-02-30",
        "2026-13-01",
        "-2026-01-01",
        "",
        "today",
        "2026-01-14T00:00:00",
    ]
) | st.dates().map(datetime.date.isoformat)
NASTY_TEXT = st.sampled_from(["", "x" * 1_000_000, "\x00", "<script>alert(1)</script>", "é" * 300])

SURVEY_NUMBERS = [
    "ifov_mrad",
    "camera_accuracy_c",
    "camera_accuracy_pct",
    "indoor_air_c",
    "outdoor_air_c",
    "ambient_air_c",
    "indoor_rh_pct",
    "outdoor_rh_pct",
    "wind_m_s",
    "hours_since_sun",
    "delta_t_hours",
    "load_pct",
]
SURVEY_TEXTS = ["title", "crew", "instrument", "notes", "scope_examined", "conditions_notes"]


def _survey_post(site, thermographer) -> dict:
    return {
        "site": site.pk,
        "kind": "envelope",
        "date": "2026-01-20",
        "thermographer": thermographer.pk,
        "camera_accuracy_c": "2",
        "camera_accuracy_pct": "2",
        "indoor_air_c": "20",
        "indoor_rh_pct": "45",
        "outdoor_air_c": "-3",
    }


def _survey_changes():
    return st.fixed_dictionaries(
        {},
        optional={
            **{name: NASTY_NUMBERS for name in SURVEY_NUMBERS},
            **{name: NASTY_TEXT for name in SURVEY_TEXTS},
            "date": NASTY_DATES,
            "surfaces_dry": st.sampled_from(["yes", "no", "", "maybe"]),
        },
    ).filter(bool)


def _snapshot(survey_pk: int) -> tuple:
    survey = Survey.objects.get(pk=survey_pk)
    conditions = Conditions.objects.filter(survey_id=survey_pk).first()
    return model_to_dict(survey, exclude=["updated_at"]), model_to_dict(
        conditions
    ) if conditions else None


def _assert_saved_values_valid(survey: Survey) -> None:
    survey.full_clean()
    survey.conditions.full_clean()
    for value in model_to_dict(survey.conditions).values():
        assert not (isinstance(value, float) and not math.isfinite(value))


@FUZZ
@given(changes=_survey_changes(), unit=st.sampled_from(["C", "F"]))
def test_it_answers_every_survey_form_input(client, owner, site, thermographer, changes, unit):
    """Create a survey with nasty values: saved whole and valid, or a message and no row."""
    CASES["survey create form"] += 1
    Member.objects.filter(pk=owner.pk).update(temperature_unit=unit)
    client.force_login(owner.user)
    before = (Survey.objects.count(), Conditions.objects.count())
    response = client.post(
        reverse("survey:survey_create"), _survey_post(site, thermographer) | changes
    )
    assert response.status_code in (200, 302), response.status_code
    if response.status_code == 302:
        assert (Survey.objects.count(), Conditions.objects.count()) == (
            before[0] + 1,
            before[1] + 1,
        )
        _assert_saved_values_valid(Survey.objects.order_by("-id").first())
    else:
        assert (Survey.objects.count(), Conditions.objects.count()) == before
        assert 'class="errorlist' in response.content.decode()


@FUZZ
@given(changes=_survey_changes(), unit=st.sampled_from(["C", "F"]))
def test_it_answers_every_survey_edit(client, owner, envelope_survey, thermographer, changes, unit):
    """Edit with nasty values: all of it saved and valid, or nothing changed and a message."""
    CASES["survey edit form"] += 1
    Member.objects.filter(pk=owner.pk).update(temperature_unit=unit)
    client.force_login(owner.user)
    before = _snapshot(envelope_survey.pk)
    url = reverse("survey:survey_edit", args=[envelope_survey.pk])
    response = client.post(url, _survey_post(envelope_survey.site, thermographer) | changes)
    assert response.status_code in (200, 302), response.status_code
    if response.status_code == 302:
        _assert_saved_values_valid(Survey.objects.get(pk=envelope_survey.pk))
    else:
        assert _snapshot(envelope_survey.pk) == before
        assert 'class="errorlist' in response.content.decode()


@pytest.fixture
def ready_thermogram(envelope_survey) -> Thermogram:
    return make_thermogram(envelope_survey)


SETTINGS_FIELDS = {
    "emissivity": NASTY_NUMBERS | st.sampled_from(["0", "2", "1", "0.0099", "1.0001"]),
    "distance_m": NASTY_NUMBERS,
    "reflected_c": NASTY_NUMBERS,
    "span_low_c": NASTY_NUMBERS,
    "span_high_c": NASTY_NUMBERS,
    "palette": st.sampled_from(["black-red-yellow", "no-such-palette", ""]),
    "note": NASTY_TEXT,
    "title": NASTY_TEXT,
}


@FUZZ
@given(changes=st.fixed_dictionaries({}, optional=SETTINGS_FIELDS).filter(bool))
def test_it_answers_every_thermogram_settings_input(client, owner, ready_thermogram, changes):
    """Capture settings with emissivity 0 or 2, negative distances, NaN: all or nothing."""
    CASES["thermogram settings form"] += 1
    client.force_login(owner.user)
    before = model_to_dict(Thermogram.objects.get(pk=ready_thermogram.pk))
    data = {"emissivity": "0.95", "reflected_c": "20", "palette": "black-red-yellow"} | changes
    url = reverse("survey:thermogram_settings", args=[ready_thermogram.pk])
    response = client.post(url, data)
    assert response.status_code in (200, 302), response.status_code
    after = Thermogram.objects.get(pk=ready_thermogram.pk)
    if response.status_code == 302:
        after.full_clean()
        assert 0 < after.emissivity <= 1
        assert after.distance_m is None or 0 < after.distance_m
    else:
        assert model_to_dict(after) == before
        assert 'class="errorlist' in response.content.decode()


# --- JSON API -------------------------------------------------------------------------------

JSON = st.recursive(
    st.none()
    | st.booleans()
    | st.integers(-(2**70), 2**70)
    | st.floats(allow_nan=True, allow_infinity=True)
    | st.text(max_size=20),
    lambda inner: (
        st.lists(inner, max_size=5) | st.dictionaries(st.text(max_size=12), inner, max_size=5)
    ),
    max_leaves=20,
)
COORDINATE = st.floats(allow_nan=True, allow_infinity=True) | st.integers(-(10**6), 10**6) | JSON
MARK_BODY = st.fixed_dictionaries(
    {},
    optional={
        "kind": st.sampled_from(["point", "rectangle", "ellipse", "polygon", "line", "circle", ""])
        | JSON,
        "points": st.lists(st.lists(COORDINATE, min_size=0, max_size=3), max_size=6) | JSON,
        "emissivity": COORDINATE,
        "reflected_c": COORDINATE,
        "note": st.text(max_size=50) | JSON,
        "reference": st.sampled_from(["A", "ambient", "none", "ZZ", ""]) | JSON,
        "single_pixel": JSON,
    },
)


def _post_json(client, url: str, body: str):
    return client.post(url, data=body, content_type="application/json")


def _check_api_answer(response, before: int, after: int) -> None:
    assert response.status_code in (201, 400), (response.status_code, response.content[:300])
    if response.status_code == 400:
        assert response.json()["error"].strip()
        assert after == before
    else:
        assert after == before + 1


@FUZZ
@given(body=MARK_BODY | JSON)
def test_it_answers_every_mark_posted(client, owner, ready_thermogram, body):
    """Random JSON (NaN and Infinity included) to the marks endpoint: 201 or a clear 400."""
    CASES["marks API JSON"] += 1
    client.force_login(owner.user)
    before = Mark.objects.count()
    # json.dumps writes NaN and Infinity as bare words, as a careless client would.
    response = _post_json(
        client, reverse("survey:api-marks", args=[ready_thermogram.pk]), json.dumps(body)
    )
    _check_api_answer(response, before, Mark.objects.count())
    if response.status_code == 201:
        mark = Mark.objects.get(pk=response.json()["id"])
        assert all(math.isfinite(v) for point in mark.points for v in point)


@FUZZ
@given(body=st.binary(max_size=200) | st.text(max_size=200).map(str.encode))
def test_it_answers_a_body_that_is_not_json(client, owner, ready_thermogram, body):
    """Bytes that are not a JSON object answer 400 with a message."""
    CASES["marks API bytes"] += 1
    client.force_login(owner.user)
    before = Mark.objects.count()
    url = reverse("survey:api-marks", args=[ready_thermogram.pk])
    response = client.post(url, data=body, content_type="application/json")
    _check_api_answer(response, before, Mark.objects.count())


def test_it_stops_marks_at_the_limit_and_huge_polygons(client, owner, ready_thermogram):
    """A polygon of 10 000 vertices and marks past the per-thermogram limit: clear 400s."""
    client.force_login(owner.user)
    url = reverse("survey:api-marks", args=[ready_thermogram.pk])
    angles = np.linspace(0, 2 * np.pi, 10_000, endpoint=False)
    polygon = [[80 + 30 * float(np.cos(a)), 60 + 30 * float(np.sin(a))] for a in angles]
    response = _post_json(client, url, json.dumps({"kind": "polygon", "points": polygon}))
    CASES["marks API limits"] += 1
    assert response.status_code == 400
    assert str(MAX_POLYGON_VERTICES) in json.dumps(response.json())
    sent = 0
    while sent < 10_000:
        sent += 1
        CASES["marks API limits"] += 1
        point = [[sent % 150, (sent // 150) % 110]]
        response = _post_json(client, url, json.dumps({"kind": "point", "points": point}))
        if response.status_code != 201:
            break
    assert response.status_code == 400, response.content
    assert str(MAX_MARKS_PER_THERMOGRAM) in response.json()["error"]
    assert ready_thermogram.marks.count() == MAX_MARKS_PER_THERMOGRAM
    listing = client.get(url)
    assert listing.status_code == 200
    assert len(listing.json()["marks"]) == MAX_MARKS_PER_THERMOGRAM


@pytest.mark.parametrize(
    "changes, message",
    [
        ({"date": "9999-12-31"}, "Enter the date of the visit"),
        ({"date": "1066-10-14"}, "Enter the date of the visit"),
        ({"notes": "x" * 1_000_000}, "at most 20000 characters"),
        ({"indoor_rh_pct": "150"}, "Enter at most 100 %."),
        ({"indoor_air_c": "nan"}, "Enter a number in °C"),
        ({"wind_m_s": "-3"}, "Enter at least 0 m/s."),
    ],
)
def test_it_refuses_implausible_survey_input_with_a_message(
    owner_client, site, thermographer, changes, message
):
    """Year 9999, a 1 MB note, RH 150 %, NaN, negative wind: a message and no survey."""
    CASES["survey named cases"] += 1
    before = Survey.objects.count()
    data = _survey_post(site, thermographer) | changes
    response = owner_client.post(reverse("survey:survey_create"), data)
    assert response.status_code == 200
    assert message in response.content.decode()
    assert Survey.objects.count() == before
