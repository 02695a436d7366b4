"""Nothing lost: a survey exported as one archive and imported elsewhere, and purging.

The round trip must give the same numbers (every mark's readings, every finding, every
condition and heat-loss estimate) and the same issued PDF byte for byte.
"""

import datetime
import hashlib
import io
import json
import zipfile
from pathlib import Path

import numpy as np
import pytest
from django.core.exceptions import ValidationError
from django.core.files.base import ContentFile
from django.core.files.uploadedfile import SimpleUploadedFile
from django.core.management import CommandError, call_command
from django.utils import timezone
from PIL import Image

from reports.archive import survey_export, survey_import
from reports.models import Report, ReportVersion
from reports.results import survey_results
from survey.models import (
    AuditEvent,
    Finding,
    HeatLossEstimate,
    Instrument,
    Mark,
    Survey,
    Thermogram,
)
from survey.services.findings import finding_changes, finding_create, finding_suggest
from survey.services.ingest import thermogram_ingest
from survey.services.marks import mark_add
from tests.factories import make_thermogram, synthetic_field
from tests.reports.conftest import issue_with_render, render_hand_built
from tests.survey.findings_data import equipment_survey, hot_and_reference


def _png() -> bytes:
    buffer = io.BytesIO()
    Image.new("RGB", (16, 12), (90, 120, 40)).save(buffer, format="PNG")
    return buffer.getvalue()


@pytest.fixture(scope="module")
def report_file(django_db_setup, django_db_blocker, tmp_path_factory):
    """A real issued report, rendered once for the module (the archive carries its bytes)."""
    media = str(tmp_path_factory.mktemp("media"))
    return render_hand_built(django_db_blocker, media, drafts=(False,))[False]


@pytest.fixture
def full_survey(
    envelope_survey, reviewer, thermographer, report_file, django_capture_on_commit_callbacks
):
    """A survey with two thermograms (one a °F CSV), marks, a finding, an estimate, and an
    issued report whose file is the module's one real render."""
    survey = envelope_survey
    survey.title = "Harbour Lane block C, winter visit"
    survey.instrument = "Invented LW-320, serial 0001"
    survey.notes = "North and east walls; loft hatch not reachable."
    survey.reviewer = reviewer
    survey.save()
    survey.conditions.outdoor_rh_pct = 85.0
    survey.conditions.sky = "overcast"
    survey.conditions.save()
    first = make_thermogram(
        survey, synthetic_field(), title="North wall", emissivity=0.93, reflected_c=18.5
    )
    first.photo.save("IR_0001.png", ContentFile(_png()), save=False)
    first.photo_alignment = [[1.0, 0.0, 2.0], [0.0, 1.0, -1.0]]
    first.save()
    rows = "\n".join(";".join(f"{64 + 0.5 * (x + y):.1f}" for x in range(12)) for y in range(9))
    with django_capture_on_commit_callbacks(execute=True):
        second = thermogram_ingest(
            survey=survey,
            uploaded_file=SimpleUploadedFile("east-wall-fahrenheit.csv", rows.encode()),
            user=thermographer.user,
            unit="F",
            emissivity=0.9,
        )
    second.refresh_from_db()
    assert second.status == Thermogram.Status.READY
    sound = mark_add(thermogram=first, kind="rectangle", points=[[5, 5], [40, 30]], user=None)
    hot = mark_add(
        thermogram=first,
        kind="ellipse",
        points=[[100, 40], [125, 55]],
        user=None,
        reference_kind="mark",
        reference_mark=sound,
        emissivity=0.85,
    )
    mark_add(thermogram=first, kind="line", points=[[0, 60], [159, 60]], user=None)
    mark_add(thermogram=second, kind="point", points=[[3, 4]], user=None, reference_kind="ambient")
    finding = Finding.objects.create(
        organization=survey.organization,
        survey=survey,
        thermogram=first,
        category="missing_insulation",
        location="Above the bedroom window",
        level=2,
        recommendation="Open the lining and refit the insulation.",
    )
    finding.marks.set([hot, sound])
    HeatLossEstimate.objects.create(
        organization=survey.organization,
        survey=survey,
        finding=finding,
        mark=hot,
        label="Warm patch",
        inputs={"area_m2": 0.4, "t_surface_c": 31.0, "t_air_c": 20.0},
        results={"total_w_m2": 75.0, "watts": 30.0},
    )
    version = issue_with_render(survey, reviewer, report_file)
    assert version.status == ReportVersion.Status.ISSUED, version.error
    return survey


def _without_ids(value):
    """Results with this installation's row ids and people left out."""
    if isinstance(value, dict):
        return {
            key: _without_ids(item)
            for key, item in value.items()
            if key not in {"id", "thermogram_id", "thermographer", "reviewer"}
        }
    if isinstance(value, list):
        return [_without_ids(item) for item in value]
    return value


def _media_files(settings) -> set[str]:
    return {str(p) for p in Path(settings.MEDIA_ROOT).rglob("*") if p.is_file()}


def test_it_moves_a_survey_to_another_organization_with_the_same_numbers(
    full_survey, other_org, outsider, django_capture_on_commit_callbacks
):
    """Export, import elsewhere, decode again: same readings, same issued PDF bytes."""
    data = survey_export(survey=full_survey, user=None)
    with zipfile.ZipFile(io.BytesIO(data)) as archive:
        names = set(archive.namelist())
        manifest = json.loads(archive.read("manifest.json"))
    assert "manifest.json" in names
    assert {n for n in names if n.startswith("originals/")} == {
        "originals/0001-IMG_0001.npy",
        "originals/0002-east-wall-fahrenheit.csv",
    }
    assert any(n.startswith("photos/") for n in names)
    assert any(n.startswith("reports/") and n.endswith(".pdf") for n in names)
    assert manifest["conditions"]["outdoor_rh_pct"] == 85.0
    assert manifest["thermograms"][1]["decode_settings"]["unit"] == "F"

    with django_capture_on_commit_callbacks(execute=True):
        imported = survey_import(data=data, organization=other_org, user=outsider.user)
    imported = Survey.objects.get(pk=imported.pk)
    assert imported.organization == other_org and imported.pk != full_survey.pk
    assert (
        imported.site.organization == other_org and imported.site.client.organization == other_org
    )
    assert set(imported.thermograms.values_list("status", flat=True)) == {"ready"}
    assert imported.thermographer is None  # people are matched by username, none here

    expected = _without_ids(survey_results(full_survey))
    got = _without_ids(survey_results(imported))
    assert got == expected
    assert got == _without_ids(manifest["results"])
    readings = [m for t in got["thermograms"] for m in t["marks"]]
    assert len(readings) == 4 and all(m["apparent"]["count"] for m in readings)

    first = imported.thermograms.get(sequence=1)
    assert first.photo_alignment == [[1.0, 0.0, 2.0], [0.0, 1.0, -1.0]]
    hot = first.marks.get(label="B")
    assert (hot.reference_mark.label, hot.emissivity) == ("A", 0.85)
    finding = imported.findings.get()
    assert sorted(finding.marks.values_list("label", flat=True)) == ["A", "B"]
    assert imported.heat_loss_estimates.get().mark == hot

    original = ReportVersion.objects.get(report__survey=full_survey, status="issued")
    copy = ReportVersion.objects.get(report__survey=imported, status="issued")
    with original.pdf.open("rb") as a, copy.pdf.open("rb") as b:
        original_pdf, copied_pdf = a.read(), b.read()
    assert copied_pdf == original_pdf
    assert copy.sha256 == hashlib.sha256(copied_pdf).hexdigest() == original.sha256
    assert copy.report.number == original.report.number
    assert AuditEvent.objects.filter(action="import", organization=other_org).count() == 1


def test_it_imports_nothing_from_an_archive_that_does_not_fit(
    full_survey, org, settings, django_capture_on_commit_callbacks
):
    """Same firm again (its report number is taken), or a damaged file: no rows, no files."""
    data = survey_export(survey=full_survey, user=None)
    rows = (Survey.objects.count(), Thermogram.objects.count(), Mark.objects.count())
    files = _media_files(settings)
    with pytest.raises(ValidationError, match="already exists"):
        survey_import(data=data, organization=org, user=None)
    assert (Survey.objects.count(), Thermogram.objects.count(), Mark.objects.count()) == rows
    assert _media_files(settings) == files

    damaged = io.BytesIO()
    with zipfile.ZipFile(io.BytesIO(data)) as source, zipfile.ZipFile(damaged, "w") as target:
        for info in source.infolist():
            content = source.read(info.filename)
            if info.filename.startswith("originals/0001"):
                content = content[:-1] + bytes([content[-1] ^ 1])
            target.writestr(info, content)
    with pytest.raises(ValidationError, match="damaged"):
        survey_import(data=damaged.getvalue(), organization=org, user=None)
    with pytest.raises(ValidationError, match="not a zip"):
        survey_import(data=b"PK\x03\x04 not really", organization=org, user=None)
    assert (Survey.objects.count(), Thermogram.objects.count(), Mark.objects.count()) == rows
    assert _media_files(settings) == files


def test_it_exports_and_imports_from_the_command_line(full_survey, other_org, tmp_path):
    """export_survey writes the zip; import_survey reads it into the named organization."""
    path = tmp_path / "survey.zip"
    out = io.StringIO()
    call_command("export_survey", full_survey.pk, str(path), stdout=out)
    assert path.is_file() and "Wrote" in out.getvalue()
    out = io.StringIO()
    call_command("import_survey", str(path), organization="ridgeback", stdout=out)
    assert "2 thermogram(s), 1 report(s)" in out.getvalue()
    assert Survey.objects.filter(organization=other_org).count() == 1
    with pytest.raises(CommandError, match="Nothing was imported"):
        call_command("import_survey", str(path), organization="northwind")
    with pytest.raises(CommandError, match="No survey"):
        call_command("export_survey", 999999, str(path))


def _deleted_survey(org, site, days_ago: float) -> Survey:
    survey = Survey.objects.create(
        organization=org,
        site=site,
        kind=Survey.Kind.ROOF,
        date=datetime.date(2025, 11, 3),
        status=Survey.Status.DELETED,
        deleted_at=timezone.now() - datetime.timedelta(days=days_ago),
    )
    thermogram = make_thermogram(survey, np.full((4, 4), 5.0))
    mark_add(thermogram=thermogram, kind="point", points=[[1, 1]], user=None)
    return survey


def test_it_purges_only_surveys_deleted_long_enough_ago(
    org, site, envelope_survey, django_capture_on_commit_callbacks
):
    """purge_deleted --days 30 removes a survey deleted 40 days ago, rows and files."""
    old = _deleted_survey(org, site, 40)
    recent = _deleted_survey(org, site, 5)
    old_files = [Path(t.original.path) for t in old.thermograms.all()]
    assert all(p.exists() for p in old_files)
    out = io.StringIO()
    call_command("purge_deleted", "--days", "30", "--dry-run", stdout=out)
    assert "Would purge 1 survey(s)" in out.getvalue()
    assert Survey.objects.filter(pk=old.pk).exists()
    out = io.StringIO()
    with django_capture_on_commit_callbacks(execute=True):
        call_command("purge_deleted", "--days", "30", stdout=out)
    assert "Purged 1 survey(s)" in out.getvalue()
    assert not Survey.objects.filter(pk=old.pk).exists()
    assert not Mark.objects.filter(thermogram__survey_id=old.pk).exists()
    assert not any(p.exists() for p in old_files)
    assert Survey.objects.filter(pk=recent.pk, status="deleted").exists()
    assert Survey.objects.filter(pk=envelope_survey.pk, status="active").exists()
    assert AuditEvent.objects.filter(action="purge", object_id=str(old.pk)).count() == 1


def test_it_keeps_a_survey_with_an_issued_report_from_any_deletion(full_survey, reviewer):
    """Soft delete is refused once a report was issued, so it can never be purged."""
    from survey.services.retention import survey_purge
    from survey.services.surveys import survey_soft_delete

    with pytest.raises(ValidationError, match="issued report"):
        survey_soft_delete(survey=full_survey, user=reviewer.user)
    Survey.objects.filter(pk=full_survey.pk).update(status=Survey.Status.DELETED)
    full_survey.refresh_from_db()
    with pytest.raises(ValidationError, match="issued report"):
        survey_purge(survey=full_survey, user=None)
    assert Report.objects.filter(survey=full_survey).exists()


def test_it_moves_the_camera_and_what_a_finding_was_judged_on(
    org, site, thermographer, other_org, outsider, django_capture_on_commit_callbacks
):
    """The survey's camera arrives as the other firm's record; the finding keeps its
    reference, rise method and n, and is not taken for stale once the worker has decoded
    the originals again."""
    survey = equipment_survey(org, site, thermographer, ambient_air_c=24.0, load_pct=80.0)
    survey.camera = Instrument.objects.create(
        organization=org,
        model_name="Invented LW-640",
        serial_number="7",
        detector_width_px=640,
        detector_height_px=480,
        lens_hfov_deg=45.0,
    )
    survey.save()
    _, hot, reference = hot_and_reference(survey, 20.0, 30.0)
    suggestion = finding_suggest(survey=survey, basis="similar", marks=[hot], load_exponent=1.6)
    finding_create(
        survey=survey,
        user=thermographer.user,
        category="connection",
        suggestion=suggestion,
        marks=[hot],
    )
    data = survey_export(survey=survey, user=None)
    with django_capture_on_commit_callbacks(execute=True):
        imported = survey_import(data=data, organization=other_org, user=outsider.user)
    imported = Survey.objects.get(pk=imported.pk)
    assert imported.camera.organization == other_org
    assert (imported.camera.model_name, imported.camera.lens_hfov_deg) == ("Invented LW-640", 45)
    finding = imported.findings.get()
    assert finding.reference_mark.label == "A"
    assert (finding.rise_method, finding.load_exponent) == ("hottest_to_hottest", 1.6)
    assert finding_changes(finding) == []


def test_it_carries_the_logged_conditions_over(
    full_survey, other_org, outsider, django_capture_on_commit_callbacks
):
    """The loggers' series travel in the archive: the copy's thermograms take the same logged
    air (22:05 is halfway between 18.0 °C / 60 % and 19.0 °C / 62 %: 18.5 °C, 61 %)."""
    import datetime as dt

    from survey.models import ConditionLog
    from survey.services.loggers import condition_log_import, thermogram_logged_conditions

    first = full_survey.thermograms.get(sequence=1)
    first.captured_at = dt.datetime(2026, 1, 14, 22, 5, tzinfo=dt.UTC)
    first.save()
    condition_log_import(
        survey=full_survey,
        role="inside",
        name="hall.csv",
        data=b"time,t,rh\n2026-01-14T22:00Z,18.0,60\n2026-01-14T22:10Z,19.0,62\n",
        user=None,
        time_column="time",
        temperature_column="t",
        humidity_column="rh",
    )
    data = survey_export(survey=full_survey, user=None)
    with django_capture_on_commit_callbacks(execute=True):
        imported = survey_import(data=data, organization=other_org, user=outsider.user)
    log = ConditionLog.objects.get(survey=imported)
    assert (log.organization, log.role, log.temperature_c) == (other_org, "inside", [18.0, 19.0])
    copy = imported.thermograms.get(sequence=1)
    logged = thermogram_logged_conditions(copy)["inside"]
    assert (logged["t_air_c"], logged["rh_pct"]) == (18.5, 61.0)
    assert _without_ids(survey_results(imported)) == _without_ids(survey_results(full_survey))


def test_it_carries_the_roof_plan_places_and_moisture_checks_over(
    org, site, thermographer, other_org, outsider, django_capture_on_commit_callbacks
):
    """The plan arrives byte for byte, the thermogram keeps its place on it and the finding
    its core check; before, the plan's file field stopped the export altogether."""
    from survey.services.roof import moisture_check_add, roof_plan_upload

    survey = Survey.objects.create(
        organization=org, site=site, kind=Survey.Kind.ROOF, date=datetime.date(2026, 2, 5)
    )
    plan = _png()
    roof_plan_upload(survey=survey, uploaded_file=SimpleUploadedFile("plan.png", plan), user=None)
    thermogram = make_thermogram(survey, synthetic_field())
    thermogram.plan_x_pct, thermogram.plan_y_pct = 25.0, 75.0
    thermogram.save()
    finding = Finding.objects.create(
        organization=org, survey=survey, thermogram=thermogram, category="wet_insulation"
    )
    moisture_check_add(
        finding=finding,
        user=None,
        method="core",
        checked_on=datetime.date(2026, 2, 6),
        result="wet",
        reading="core wet to the deck",
    )
    data = survey_export(survey=survey, user=None)
    with django_capture_on_commit_callbacks(execute=True):
        imported = survey_import(data=data, organization=other_org, user=outsider.user)
    imported = Survey.objects.get(pk=imported.pk)
    assert imported.roof_plan.read() == plan
    assert imported.roof_plan_sha256 == hashlib.sha256(plan).hexdigest()
    moved = imported.thermograms.get()
    assert (moved.plan_x_pct, moved.plan_y_pct) == (25.0, 75.0)
    check = imported.findings.get().moisture_checks.get()
    assert (check.method, check.result, check.reading) == ("core", "wet", "core wet to the deck")
