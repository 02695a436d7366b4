"""Roof surveys: the plan (validated with Pillow, never overwritten), thermograms placed on
it, core and moisture-meter checks, and the total wet area with its combined ±."""

import datetime
import io

import numpy as np
import pytest
from django.core.exceptions import ValidationError
from django.core.files.uploadedfile import SimpleUploadedFile
from PIL import Image

from survey.models import AuditEvent
from survey.services import roof
from survey.services.findings import finding_create, finding_suggest
from survey.services.marks import mark_add
from tests.factories import make_thermogram
from tests.survey.findings_data import equipment_survey


@pytest.fixture
def roof_survey(org, site, thermographer):
    return equipment_survey(org, site, thermographer, kind="roof", surfaces_dry=True)


def picture(kind: str = "PNG", size=(300, 200), colour="white") -> bytes:
    buffer = io.BytesIO()
    Image.new("RGB", size, colour).save(buffer, kind)
    return buffer.getvalue()


def upload(survey, data: bytes, name: str = "plan.png", user=None):
    return roof.roof_plan_upload(
        survey=survey, uploaded_file=SimpleUploadedFile(name, data), user=user
    )


def wet_finding(survey, user, x0: int, size: int):
    field = np.full((60, 80), 4.0, dtype=np.float32)
    field[x0 : x0 + size, x0 : x0 + size] = 6.5
    thermogram = make_thermogram(survey, field, distance_m=20.0)
    mark = mark_add(
        thermogram=thermogram,
        kind="rectangle",
        points=[[x0, x0], [x0 + size - 1, x0 + size - 1]],
        user=None,
    )
    return finding_create(
        survey=survey,
        user=user,
        category="wet_insulation",
        suggestion=finding_suggest(survey=survey, basis="roof", marks=[mark]),
        marks=[mark],
        level=3,
        override_reason="Small area, to watch at the next survey.",
    )


def test_it_stores_the_plan_unchanged_with_its_size_and_digest(roof_survey, thermographer):
    data = picture("JPEG", (640, 480))
    upload(roof_survey, data, "roof.jpg", thermographer.user)
    roof_survey.refresh_from_db()
    with roof_survey.roof_plan.open("rb") as handle:
        assert handle.read() == data
    assert (roof_survey.roof_plan_width, roof_survey.roof_plan_height) == (640, 480)
    assert roof_survey.roof_plan_name == "roof.jpg"
    assert len(roof_survey.roof_plan_sha256) == 64
    assert AuditEvent.objects.filter(object_id=str(roof_survey.pk), action="update").exists()


def test_it_keeps_the_old_plan_file_when_a_new_one_is_uploaded(roof_survey):
    upload(roof_survey, picture(colour="white"))
    first = roof_survey.roof_plan.name
    first_bytes = roof_survey.roof_plan.storage.open(first).read()
    upload(roof_survey, picture(colour="grey"))
    assert roof_survey.roof_plan.name != first
    assert roof_survey.roof_plan.storage.open(first).read() == first_bytes


@pytest.mark.parametrize(
    ("data", "message"),
    [
        (b"", "is empty"),
        (b"not a picture at all", "could not be read as a PNG or JPEG"),
        (picture()[:200], "could not be read as a PNG or JPEG"),  # cut short
        (picture("GIF"), "give the plan as PNG or JPEG"),
    ],
)
def test_it_refuses_a_plan_that_is_not_a_whole_png_or_jpeg(roof_survey, data, message):
    with pytest.raises(ValidationError, match=message):
        upload(roof_survey, data)
    roof_survey.refresh_from_db()
    assert not roof_survey.roof_plan


def test_it_refuses_a_plan_over_the_size_limits(roof_survey, monkeypatch):
    monkeypatch.setattr(roof, "ROOF_PLAN_MAX_BYTES", 1000)
    with pytest.raises(ValidationError, match="may be at most"):
        upload(roof_survey, picture("PNG", (600, 600), "red") + b"\0" * 1000)
    monkeypatch.setattr(roof, "ROOF_PLAN_MAX_BYTES", 10**7)
    monkeypatch.setattr(roof, "ROOF_PLAN_MAX_PIXELS", 100 * 100)
    with pytest.raises(ValidationError, match="million pixels"):
        upload(roof_survey, picture("PNG", (101, 100)))


def test_it_refuses_a_plan_on_a_survey_that_is_not_a_roof(envelope_survey):
    with pytest.raises(ValidationError, match="Only a roof survey"):
        upload(envelope_survey, picture())


def test_it_places_a_thermogram_and_takes_it_off(roof_survey):
    thermogram = make_thermogram(roof_survey)
    with pytest.raises(ValidationError, match="Upload the roof plan"):
        roof.thermogram_place_on_plan(thermogram=thermogram, x_pct=10, y_pct=20, user=None)
    upload(roof_survey, picture())
    thermogram.survey.refresh_from_db()
    roof.thermogram_place_on_plan(thermogram=thermogram, x_pct=12.5, y_pct=80, user=None)
    thermogram.refresh_from_db()
    assert (thermogram.plan_x_pct, thermogram.plan_y_pct) == (12.5, 80.0)
    with pytest.raises(ValidationError):
        roof.thermogram_place_on_plan(thermogram=thermogram, x_pct=101, y_pct=5, user=None)
    with pytest.raises(ValidationError, match="both"):
        roof.thermogram_place_on_plan(thermogram=thermogram, x_pct=None, y_pct=5, user=None)
    thermogram.refresh_from_db()
    assert (thermogram.plan_x_pct, thermogram.plan_y_pct) == (12.5, 80.0)
    roof.thermogram_place_on_plan(thermogram=thermogram, x_pct=None, y_pct=None, user=None)
    thermogram.refresh_from_db()
    assert thermogram.plan_x_pct is None


def test_it_records_a_core_check_against_a_roof_finding(roof_survey, thermographer):
    finding = wet_finding(roof_survey, thermographer.user, 10, 10)
    check = roof.moisture_check_add(
        finding=finding,
        user=thermographer.user,
        method="core",
        checked_on=datetime.date(2026, 3, 4),
        result="wet",
        reading="wet through",
    )
    assert list(finding.moisture_checks.all()) == [check]
    with pytest.raises(ValidationError):
        roof.moisture_check_add(
            finding=finding,
            user=None,
            method="guess",
            checked_on=datetime.date(2026, 3, 4),
            result="wet",
        )
    assert finding.moisture_checks.count() == 1


def test_it_refuses_a_moisture_check_on_a_finding_of_another_kind(electrical_survey, thermographer):
    from tests.survey.findings_data import hot_and_reference

    _, hot, _ = hot_and_reference(electrical_survey, 20.0, 30.0)
    finding = finding_create(
        survey=electrical_survey,
        user=thermographer.user,
        category="connection",
        suggestion=finding_suggest(survey=electrical_survey, basis="similar", marks=[hot]),
        marks=[hot],
    )
    with pytest.raises(ValidationError, match="roof findings"):
        roof.moisture_check_add(
            finding=finding,
            user=None,
            method="meter",
            checked_on=datetime.date(2026, 3, 4),
            result="dry",
        )


def test_wet_area_total_sums_areas_and_combines_their_spread_in_quadrature(
    roof_survey, thermographer
):
    """Total = Σ areas; ± = √(Σ ±²) for independent terms (JCGM 100:2008, 5.1.2 with unit
    sensitivity coefficients), checked against each finding's own stored values."""
    findings = [
        wet_finding(roof_survey, thermographer.user, 5, 8),
        wet_finding(roof_survey, thermographer.user, 20, 15),
    ]
    total = roof.wet_area_total(findings + [])
    areas = [f.suggestion["values"]["wet_area_m2"] for f in findings]
    spreads = [f.suggestion["values"]["wet_area_u_m2"] for f in findings]
    assert total["total_m2"] == pytest.approx(sum(areas), rel=1e-9)
    assert total["total_u_m2"] == pytest.approx(np.hypot(*spreads), rel=1e-9)
    assert total["total_u_m2"] < sum(spreads)
    assert [row["finding"] for row in total["rows"]] == findings


def test_wet_area_total_of_no_finding_is_zero(roof_survey):
    assert roof.wet_area_total([]) == {"rows": [], "total_m2": 0, "total_u_m2": 0.0}


def test_the_results_export_carries_the_checks_and_the_plan(roof_survey, thermographer):
    """The data fingerprint printed in the report covers the checks and the plan."""
    from reports.results import content_digest, survey_results

    finding = wet_finding(roof_survey, thermographer.user, 10, 10)
    before = content_digest(survey_results(roof_survey))
    upload(roof_survey, picture())
    roof.moisture_check_add(
        finding=finding,
        user=None,
        method="meter",
        checked_on=datetime.date(2026, 3, 4),
        result="dry",
        reading="18 on the meter's relative scale",
    )
    results = survey_results(roof_survey)
    assert content_digest(results) != before
    assert results["survey"]["roof_plan_sha256"] == roof_survey.roof_plan_sha256
    assert results["findings"][0]["moisture_checks"] == [
        {
            "method": "meter",
            "checked_on": "2026-03-04",
            "result": "dry",
            "reading": "18 on the meter's relative scale",
            "note": "",
        }
    ]


def test_it_refuses_a_cut_short_plan_once_weasyprint_is_loaded(roof_survey):
    """WeasyPrint relaxes Pillow for the whole process; the plan check stays strict."""
    import weasyprint  # noqa: F401 - loading it sets ImageFile.LOAD_TRUNCATED_IMAGES
    from PIL import ImageFile

    assert ImageFile.LOAD_TRUNCATED_IMAGES
    with pytest.raises(ValidationError, match="could not be read"):
        upload(roof_survey, picture("PNG", (300, 200), "red")[:300])
