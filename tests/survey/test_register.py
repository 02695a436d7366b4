"""The asset register, due dates, rounds, recoverable deletes and the thermogram lock.

Dates are checked against the Gregorian calendar as Python's `calendar` module gives it
(docs/references.md § Units and inspection intervals).
"""

import calendar
import csv
import datetime
import io

import numpy as np
import pytest
from django.core.exceptions import ValidationError
from django.utils import timezone

from reports.models import Report, ReportVersion
from survey.models import (
    Asset,
    Client,
    Finding,
    Mark,
    RoundStop,
    Site,
    SpanRule,
    Survey,
    Thermogram,
)
from survey.services import deletion, register, rounds, surveys
from survey.services.marks import mark_add
from tests.factories import make_thermogram


def make_asset(site, name="Panel P-1", **fields) -> Asset:
    return surveys.asset_create(site=site, user=None, name=name, **fields)


def issue(survey, number="R2026-101") -> ReportVersion:
    report = Report.objects.create(organization=survey.organization, survey=survey, number=number)
    return ReportVersion.objects.create(
        report=report,
        version=1,
        is_draft=False,
        status=ReportVersion.Status.ISSUED,
        issued_at=timezone.now(),
    )


# --- dates --------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("start", "months", "expected"),
    [
        # Gregorian calendar: 2024 is a leap year, 2025 is not (calendar.isleap).
        (datetime.date(2025, 3, 14), 12, datetime.date(2026, 3, 14)),
        (datetime.date(2024, 1, 31), 1, datetime.date(2024, 2, 29)),
        (datetime.date(2025, 1, 31), 1, datetime.date(2025, 2, 28)),
        (datetime.date(2025, 11, 30), 3, datetime.date(2026, 2, 28)),
        (datetime.date(2024, 2, 29), 12, datetime.date(2025, 2, 28)),
    ],
)
def test_add_months_keeps_the_day_or_the_months_last_day(start, months, expected):
    """Moving by calendar months keeps the day, or falls back to the month's last day."""
    assert rounds.add_months(start, months) == expected
    # Independent check of the clamping: the last day as the calendar module gives it.
    last_day = calendar.monthrange(expected.year, expected.month)[1]
    assert expected.day == min(start.day, last_day)


def test_due_state_by_interval_with_the_nfpa_default(site):
    """Inspected 2025-03-02 with the default 12 months: due 2026-03-02."""
    asset = make_asset(site)
    # NFPA 70B (2023): infrared inspection at least every 12 months (from memory,
    # docs/references.md § Units and inspection intervals).
    assert asset.inspection_interval_months == 12
    last = datetime.date(2025, 3, 2)
    assert rounds.due_state(asset, last, datetime.date(2026, 1, 1)).status == "ok"
    # Within the 30-day window before the due date (ours): due.
    assert rounds.due_state(asset, last, datetime.date(2026, 2, 1)).status == "due"
    assert rounds.due_state(asset, last, datetime.date(2026, 3, 2)).status == "due"
    assert rounds.due_state(asset, last, datetime.date(2026, 3, 3)).status == "overdue"
    assert rounds.due_state(asset, None, datetime.date(2026, 3, 3)).status == "never"
    asset.retired_at = timezone.now()
    assert rounds.due_state(asset, last, datetime.date(2027, 1, 1)).status == "retired"


def test_it_counts_the_latest_live_survey_with_a_thermogram_of_the_asset(
    org, site, electrical_survey
):
    """The last inspection is the date of the last live survey that photographed it."""
    asset = make_asset(site, inspection_interval_months=6)
    make_thermogram(electrical_survey, asset=asset)
    later = Survey.objects.create(
        organization=org, site=site, kind="electrical", date=datetime.date(2026, 5, 2)
    )
    make_thermogram(later, asset=asset)
    state = rounds.register_states(Asset.objects.filter(pk=asset.pk), datetime.date(2026, 6, 1))[0]
    assert state.last_inspected == datetime.date(2026, 5, 2)
    assert state.due_on == datetime.date(2026, 11, 2)
    # A deleted survey no longer counts.
    later.status = Survey.Status.DELETED
    later.save()
    state = rounds.register_states(Asset.objects.filter(pk=asset.pk), datetime.date(2026, 6, 1))[0]
    assert state.last_inspected == electrical_survey.date


def test_it_lists_due_assets_most_urgent_first_and_never_retired_ones(org, site, other_org):
    """Overdue, then never inspected, then due soon; retired and other firms' assets not."""
    never = make_asset(site, "Never")
    overdue = make_asset(site, "Overdue")
    register.asset_retire(asset=make_asset(site, "Retired"), user=None)
    old = Survey.objects.create(organization=org, site=site, kind="electrical", date="2024-01-10")
    make_thermogram(old, asset=overdue)
    other_client = Client.objects.create(organization=other_org, name="Other")
    other_site = Site.objects.create(organization=other_org, client=other_client, name="Other")
    make_asset(other_site, "Foreign")
    due = rounds.assets_due(organization=org, today=datetime.date(2026, 1, 1))
    assert [state.asset.name for state in due] == ["Overdue", "Never"]
    assert never.name == "Never"


# --- register and CSV ------------------------------------------------------------------------


def test_it_retires_and_reinstates_an_asset_with_its_history(site, electrical_survey):
    """A retired asset keeps its thermograms and is not due; reinstating brings it back."""
    asset = make_asset(site)
    make_thermogram(electrical_survey, asset=asset)
    register.asset_retire(asset=asset, user=None)
    assert asset.is_retired and asset.thermograms.count() == 1
    assert rounds.assets_due(site=site, today=datetime.date(2030, 1, 1)) == []
    register.asset_reinstate(asset=asset, user=None)
    assert [s.asset for s in rounds.assets_due(site=site, today=datetime.date(2030, 1, 1))] == [
        asset
    ]


def test_it_refuses_a_rating_without_its_unit(site):
    with pytest.raises(ValidationError, match="A or kW"):
        make_asset(site, rating=160.0)
    asset = make_asset(site, rating=160.0, rating_unit="A")
    with pytest.raises(ValidationError, match="A or kW"):
        register.asset_update(asset=asset, user=None, rating_unit="")


def _csv(rows: list[list[str]], header=None) -> bytes:
    buffer = io.StringIO()
    writer = csv.writer(buffer)
    writer.writerow(header or ["name", "tag", "kind", "rating", "rating_unit", "criticality"])
    writer.writerows(rows)
    return buffer.getvalue().encode()


def test_it_imports_a_register_and_exports_it_back(site):
    """200 assets in; the export has the same 200 rows, and importing it again adds none."""
    rows = [[f"Panel {n}", f"P-{n:03d}", "panel", "160", "A", "high"] for n in range(200)]
    result = register.assets_import(site=site, user=None, data=_csv(rows))
    assert (result.created, result.updated) == (200, 0)
    asset = Asset.objects.get(tag="P-007")
    assert (asset.rating, asset.rating_unit, asset.criticality) == (160.0, "A", "high")
    exported = register.assets_csv(site)
    parsed = list(csv.DictReader(io.StringIO(exported)))
    assert len(parsed) == 200 and parsed[0]["rating"] == "160"
    again = register.assets_import(site=site, user=None, data=exported.encode())
    assert (again.created, again.updated) == (0, 200)
    assert Asset.objects.filter(site=site).count() == 200


def test_it_reports_each_bad_row_and_saves_nothing(site):
    """Three bad rows among 200: row, column and reason of each, and no asset saved."""
    rows = [[f"Panel {n}", f"P-{n:03d}", "panel", "160", "A", "high"] for n in range(200)]
    rows[9][2] = "toaster"  # spreadsheet row 11 (the header is row 1)
    rows[49][3] = "lots"  # row 51
    rows[119][1] = "P-000"  # row 121: the tag of row 2 again
    with pytest.raises(register.ImportRefused) as refused:
        register.assets_import(site=site, user=None, data=_csv(rows))
    errors = [(e.row, e.column) for e in refused.value.result.errors]
    assert errors == [(11, "kind"), (51, "rating"), (121, "tag")]
    messages = [e.message for e in refused.value.result.errors]
    assert "toaster" in messages[0] and "not a number" in messages[1] and "row 2" in messages[2]
    assert Asset.objects.filter(site=site).count() == 0


@pytest.mark.parametrize(
    ("data", "expected"),
    [
        (b"", "empty"),
        (b"\xff\xfe\x00n\x00a", "UTF-8"),
        (b"tag,kind\nP-1,panel\n", "no name column"),
        (b"name,colour\nPanel,red\n", "Unknown column"),
        (b"name\n", "no asset rows"),
        (b"name,rating\nPanel,12\n", "A or kW"),
        (b"name,inspection_interval_months\nPanel,0\n", "1–120"),
    ],
)
def test_it_refuses_bad_files_with_a_reason(site, data, expected):
    with pytest.raises(register.ImportRefused) as refused:
        register.assets_import(site=site, user=None, data=data)
    assert expected in " ".join(e.message for e in refused.value.result.errors)
    assert not Asset.objects.exists()


def test_it_reads_semicolons_and_decimal_commas(site):
    """Spreadsheets in many countries write CSV with ; and a decimal comma."""
    data = b"name;rating;rating_unit\nMotor M-1;7,5;kW\n"
    register.assets_import(site=site, user=None, data=data)
    assert Asset.objects.get().rating == 7.5


# --- rounds ------------------------------------------------------------------------------------


def test_a_new_visit_copies_the_last_one_and_lists_the_due_assets_in_order(
    org, site, electrical_survey, thermographer
):
    """Kind, instrument, conditions and upload defaults come from the last visit."""
    electrical_survey.instrument = "Camera DEMO-7"
    electrical_survey.default_emissivity = 0.93
    electrical_survey.save()
    second = make_asset(site, "Second", round_order=2)
    first = make_asset(site, "First", round_order=1)
    retired = make_asset(site, "Retired", round_order=0)
    register.asset_retire(asset=retired, user=None)
    fields, conditions, previous = rounds.visit_defaults(site)
    assert previous == electrical_survey
    assert fields["kind"] == "electrical" and fields["instrument"] == "Camera DEMO-7"
    assert fields["default_emissivity"] == 0.93
    assert conditions["ambient_air_c"] == 24.0 and conditions["load_pct"] == 65.0
    survey = rounds.round_start(
        organization=org,
        site=site,
        user=thermographer.user,
        date=datetime.date(2026, 6, 1),
        conditions=conditions,
        **fields,
    )
    assert survey.conditions.load_pct == 65.0 and survey.default_emissivity == 0.93
    assert [s.asset for s in survey.round_stops.all()] == [first, second]


def test_round_progress_and_skips(org, site, electrical_survey):
    """A stop is visited once a thermogram is tied to it; skipped with a reason; else pending."""
    a, b, c = (make_asset(site, name, round_order=n) for n, name in enumerate("ABC"))
    survey = rounds.round_start(
        organization=org, site=site, user=None, date=datetime.date(2026, 6, 1), kind="electrical"
    )
    t1 = make_thermogram(survey)
    t2 = make_thermogram(survey)
    assert rounds.suggested_ties(survey) == {t1.pk: a.pk, t2.pk: b.pk}
    rounds.thermograms_tie_assets(survey=survey, user=None, ties={t1: a, t2: None})
    stop_c = survey.round_stops.get(asset=c)
    rounds.round_stop_skip(stop=stop_c, user=None, reason="Locked by the site")
    states = {s.stop.asset.name: s.status for s in rounds.round_progress(survey)}
    assert states == {"A": "visited", "B": "pending", "C": "skipped"}
    rounds.round_stop_skip(stop=stop_c, user=None, reason="")
    assert {s.stop.asset.name: s.status for s in rounds.round_progress(survey)}["C"] == "pending"


def test_it_refuses_to_tie_an_asset_of_another_site(org, site, envelope_survey):
    other_site = Site.objects.create(organization=org, client=site.client, name="Elsewhere")
    foreign = make_asset(other_site)
    thermogram = make_thermogram(envelope_survey)
    with pytest.raises(ValidationError, match="not an asset of"):
        rounds.thermograms_tie_assets(survey=envelope_survey, user=None, ties={thermogram: foreign})
    thermogram.refresh_from_db()
    assert thermogram.asset is None


# --- deletes, restores and the lock of issued thermograms -----------------------------------


def test_it_deletes_and_restores_a_thermogram_with_its_findings(envelope_survey, owner):
    thermogram = make_thermogram(envelope_survey)
    finding = Finding.objects.create(
        organization=envelope_survey.organization,
        survey=envelope_survey,
        thermogram=thermogram,
        category="other",
    )
    deletion.thermogram_delete(thermogram=thermogram, user=owner.user)
    assert not envelope_survey.thermograms.exists()
    assert not envelope_survey.findings.exists()
    assert Thermogram.all_objects.get(pk=thermogram.pk).deleted_at is not None
    items = deletion.deleted_items(envelope_survey.organization)
    assert items["thermogram"] == [thermogram] and items["finding"] == []
    deletion.thermogram_restore(thermogram=Thermogram.all_objects.get(pk=thermogram.pk), user=None)
    assert list(envelope_survey.thermograms.all()) == [thermogram]
    assert list(envelope_survey.findings.all()) == [finding]


def test_it_locks_a_thermogram_that_an_issued_report_shows(envelope_survey):
    """No delete, settings change, mark or asset tie on it; one uploaded later stays open."""
    shown = make_thermogram(envelope_survey)
    mark = mark_add(thermogram=shown, kind="point", points=[[5, 5]], user=None)
    issue(envelope_survey)
    later = make_thermogram(envelope_survey)
    for attempt in (
        lambda: deletion.thermogram_delete(thermogram=shown, user=None),
        lambda: surveys.thermogram_update_settings(thermogram=shown, user=None, emissivity=0.5),
        lambda: mark_add(thermogram=shown, kind="point", points=[[6, 6]], user=None),
        lambda: rounds.thermograms_tie_assets(
            survey=envelope_survey, user=None, ties={shown: make_asset(envelope_survey.site)}
        ),
    ):
        with pytest.raises(ValidationError, match="R2026-101 version 1 shows"):
            attempt()
    shown.refresh_from_db()
    assert shown.deleted_at is None and shown.emissivity == 0.95 and shown.asset is None
    assert list(shown.marks.all()) == [mark]
    deletion.thermogram_delete(thermogram=later, user=None)
    assert Thermogram.all_objects.get(pk=later.pk).deleted_at is not None


def test_a_client_goes_with_its_sites_and_assets_and_comes_back_with_them(org, site, owner):
    asset = make_asset(site)
    deletion.client_delete(client=site.client, user=owner.user)
    assert not Client.objects.exists() and not Site.objects.exists()
    assert not Asset.objects.exists()
    deletion.client_restore(client=Client.all_objects.get(), user=owner.user)
    assert list(Site.objects.all()) == [site] and list(Asset.objects.all()) == [asset]


def test_a_site_with_a_live_survey_is_not_deleted(site, envelope_survey):
    with pytest.raises(ValidationError, match="delete or move them first"):
        deletion.site_delete(site=site, user=None)
    assert Site.objects.filter(pk=site.pk).exists()


def test_restoring_a_survey_brings_its_deleted_site_back(site, envelope_survey, reviewer):
    surveys.survey_soft_delete(survey=envelope_survey, user=reviewer.user)
    deletion.site_delete(site=site, user=reviewer.user)
    surveys.survey_restore(survey=envelope_survey, user=reviewer.user)
    assert Site.objects.filter(pk=site.pk).exists()


def test_purge_removes_only_what_was_deleted_long_enough_ago(envelope_survey, settings):
    """After the retention period the rows and the files go; younger deletes stay."""
    import pathlib

    old = make_thermogram(envelope_survey)
    young = make_thermogram(envelope_survey)
    original = pathlib.Path(settings.MEDIA_ROOT) / old.original.name
    assert original.exists()
    deletion.thermogram_delete(thermogram=old, user=None)
    deletion.thermogram_delete(thermogram=young, user=None)
    Thermogram.all_objects.filter(pk=old.pk).update(
        deleted_at=timezone.now() - datetime.timedelta(days=40)
    )
    assert deletion.items_purge(days=30, dry_run=True)["thermogram"] == 1
    assert Thermogram.all_objects.filter(pk=old.pk).exists()
    counts = deletion.items_purge(days=30)
    assert counts["thermogram"] == 1
    assert not Thermogram.all_objects.filter(pk=old.pk).exists()
    assert Thermogram.all_objects.filter(pk=young.pk).exists()


# --- view defaults and the span including every mark ------------------------------------------


def test_the_automatic_span_covers_every_mark_whatever_the_rule(envelope_survey):
    """The percentile span clips the hottest percent; with a mark on the hot pixel the
    automatic span reaches it, under either span rule (issue 14)."""
    from survey.services.processing import automatic_span

    field = np.linspace(10.0, 30.0, 60 * 80, dtype=np.float32).reshape(60, 80)
    field[30, 40] = 60.0  # one hot pixel: above the 99th percentile cut
    thermogram = make_thermogram(envelope_survey, field)
    # numpy's percentiles of the field are the independent reference of the plain span.
    p1, p99 = (float(v) for v in np.percentile(field, [1, 99]))
    assert automatic_span(thermogram, field) == pytest.approx((p1, p99), abs=1e-4)
    assert p99 < 31.0
    mark_add(thermogram=thermogram, kind="point", points=[[40, 30]], user=None, single_pixel=True)
    for rule in (SpanRule.AUTO, SpanRule.MARKS):
        thermogram.span_rule = rule
        assert automatic_span(thermogram, field) == pytest.approx((p1, 60.0), abs=1e-4)


def test_view_defaults_apply_to_all_but_an_issued_thermogram(envelope_survey):
    shown = make_thermogram(envelope_survey)
    issue(envelope_survey)
    other = make_thermogram(envelope_survey, span_low_c=10.0, span_high_c=30.0)
    result = surveys.survey_set_view_defaults(
        survey=envelope_survey,
        user=None,
        palette="perceptual",
        span_rule=SpanRule.MARKS,
        apply_to_all=True,
    )
    assert result == {"applied": 1, "kept": [str(shown)]}
    other.refresh_from_db()
    assert (other.palette, other.span_rule, other.span_low_c) == ("perceptual", "marks", None)
    shown.refresh_from_db()
    assert shown.palette == "black-red-yellow"
    with pytest.raises(ValidationError):
        surveys.survey_set_view_defaults(
            survey=envelope_survey, user=None, palette="no-such", span_rule="auto"
        )


def test_new_uploads_take_the_surveys_defaults(envelope_survey):
    from django.core.files.uploadedfile import SimpleUploadedFile

    from survey.services.ingest import thermogram_ingest

    envelope_survey.default_palette = "perceptual"
    envelope_survey.default_span_rule = SpanRule.MARKS
    envelope_survey.default_emissivity = 0.91
    envelope_survey.save()
    buffer = io.BytesIO()
    np.save(buffer, np.full((4, 4), 20.0, dtype=np.float32))
    thermogram = thermogram_ingest(
        survey=envelope_survey,
        uploaded_file=SimpleUploadedFile("a.npy", buffer.getvalue()),
        user=None,
    )
    assert (thermogram.palette, thermogram.span_rule) == ("perceptual", "marks")
    assert thermogram.emissivity == 0.91


# --- load current per mark ----------------------------------------------------------------------


def test_a_marks_caption_says_its_load_of_the_assets_rating(electrical_survey):
    """118 A measured on a 160 A rated panel reads "118 A of 160 A"."""
    from survey.captions import mark_caption
    from survey.services.readings import mark_readings

    asset = make_asset(electrical_survey.site, rating=160.0, rating_unit="A")
    thermogram = make_thermogram(electrical_survey, asset=asset)
    mark = mark_add(
        thermogram=thermogram, kind="point", points=[[5, 5]], user=None, load_current_a=118.0
    )
    assert mark_caption(mark) == "118 A of 160 A"
    assert mark_readings(mark)["caption"] == "118 A of 160 A"
    with pytest.raises(ValidationError):
        mark_add(thermogram=thermogram, kind="point", points=[[6, 6]], user=None, load_current_a=-1)
    assert Mark.objects.count() == 1


def test_round_stops_are_unique_per_survey(org, site):
    asset = make_asset(site)
    survey = Survey.objects.create(organization=org, site=site, kind="electrical", date="2026-1-1")
    RoundStop.objects.create(survey=survey, asset=asset)
    with pytest.raises(ValidationError):
        RoundStop(survey=survey, asset=asset).full_clean()


def test_the_workspace_opens_a_locked_thermogram_read_only(owner_client, envelope_survey):
    """The thermogram's JSON says why it cannot be changed, and offers no editing."""
    from django.urls import reverse

    thermogram = make_thermogram(envelope_survey)
    url = reverse("survey:api-thermogram", args=[thermogram.pk])
    assert owner_client.get(url).json()["can_edit"] is True
    issue(envelope_survey)
    data = owner_client.get(url).json()
    assert data["can_edit"] is False and "R2026-101" in data["locked"]


def test_the_mark_api_reads_and_changes_the_load_current(owner_client, electrical_survey):
    """PATCH load_current_a; the answer carries the caption; bad values get a clear 400."""
    import json

    from django.urls import reverse

    asset = make_asset(electrical_survey.site, rating=160.0, rating_unit="A")
    thermogram = make_thermogram(electrical_survey, asset=asset)
    mark = mark_add(thermogram=thermogram, kind="point", points=[[5, 5]], user=None)
    url = reverse("survey:api-mark", args=[mark.pk])

    def patch(body):
        return owner_client.patch(url, data=json.dumps(body), content_type="application/json")

    answer = patch({"load_current_a": 118})
    assert answer.status_code == 200
    assert (answer.json()["load_current_a"], answer.json()["caption"]) == (118.0, "118 A of 160 A")
    for bad in ("lots", -3, True):
        refused = patch({"load_current_a": bad})
        assert refused.status_code == 400 and "load_current_a" in refused.json()["fields"]
    assert owner_client.get(url).json()["load_current_a"] == 118.0
    assert patch({"load_current_a": None}).json()["caption"] == ""
