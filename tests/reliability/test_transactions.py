"""A database error in the middle of a multi-step write leaves nothing half-written.

No mocks: a trigger makes the database itself refuse one particular write (as a full disk,
a lost connection or a constraint would), after the service's earlier writes went through.
"""

import contextlib
import datetime
import io
from pathlib import Path

import numpy as np
import pytest
from django.core.files.uploadedfile import SimpleUploadedFile
from django.db import IntegrityError, connection
from django.urls import reverse

from reports.models import Report, ReportVersion, ShareLink
from survey.models import AuditEvent, Conditions, Mark, Survey, Thermogram
from tests.factories import make_thermogram


@contextlib.contextmanager
def database_refuses(table: str, condition_sql: str, event: str = "INSERT"):
    """Make the database refuse `event` on `table` for rows where `condition_sql` holds.

    `condition_sql` speaks of the new row as NEW (both SQLite and PostgreSQL triggers do).
    """
    name = f"refuse_{table}_{event.lower()}"
    with connection.cursor() as cursor:
        if connection.vendor == "postgresql":
            cursor.execute(
                f"CREATE FUNCTION {name}() RETURNS trigger AS $$ BEGIN "
                f"IF {condition_sql} THEN RAISE EXCEPTION 'refused by the database' "
                f"USING ERRCODE = 'check_violation'; END IF; RETURN NEW; END $$ "
                f"LANGUAGE plpgsql"
            )
            cursor.execute(
                f"CREATE TRIGGER {name} BEFORE {event} ON {table} "
                f"FOR EACH ROW EXECUTE FUNCTION {name}()"
            )
        else:
            cursor.execute(
                f"CREATE TRIGGER {name} BEFORE {event} ON {table} WHEN {condition_sql} "
                f"BEGIN SELECT RAISE(ABORT, 'refused by the database'); END"
            )
    try:
        yield
    finally:
        with connection.cursor() as cursor:
            cursor.execute(
                f"DROP TRIGGER IF EXISTS {name}"
                + (f" ON {table}" if connection.vendor == "postgresql" else "")
            )
            if connection.vendor == "postgresql":
                cursor.execute(f"DROP FUNCTION IF EXISTS {name}()")


def _counts() -> dict:
    models = (Survey, Conditions, Thermogram, Mark, Report, ReportVersion, ShareLink, AuditEvent)
    return {model.__name__: model.objects.count() for model in models}


def _npy() -> bytes:
    buffer = io.BytesIO()
    np.save(buffer, np.array([[20.0, 21.0], [22.0, 23.0]], dtype=np.float32))
    return buffer.getvalue()


def _create_survey(world):
    from survey.services.surveys import survey_create

    survey_create(
        organization=world["survey"].organization,
        user=world["user"],
        site=world["survey"].site,
        kind="envelope",
        date=datetime.date(2026, 1, 21),
        conditions={"indoor_air_c": 20.0, "indoor_rh_pct": 40.0},
    )


def _add_mark(world):
    from survey.services.marks import mark_add

    mark_add(thermogram=world["thermogram"], kind="point", points=[[3, 3]], user=world["user"])


def _ingest(world):
    from survey.services.ingest import thermogram_ingest

    thermogram_ingest(
        survey=world["survey"],
        uploaded_file=SimpleUploadedFile("refused.npy", _npy()),
        user=world["user"],
    )


def _issue(world):
    from reports.services import report_issue

    report_issue(report=world["report"], user=world["reviewer"])


def _share(world):
    from reports.services import share_link_create

    share_link_create(version=world["version"], user=world["reviewer"])


@pytest.fixture
def world(envelope_survey, reviewer, thermographer):
    report = Report.objects.create(
        organization=envelope_survey.organization, survey=envelope_survey, number="R2026-900"
    )
    version = ReportVersion.objects.create(
        report=report, version=1, is_draft=False, status=ReportVersion.Status.ISSUED
    )
    # Uploaded after the issue: the issued report does not show it, so it can still be marked.
    thermogram = make_thermogram(envelope_survey)
    return {
        "survey": envelope_survey,
        "thermogram": thermogram,
        # A second report of the survey, never issued: issuing it needs no change note.
        "report": Report.objects.create(
            organization=envelope_survey.organization, survey=envelope_survey, number="R2026-901"
        ),
        "version": version,
        "user": thermographer.user,
        "reviewer": reviewer.user,
    }


@pytest.mark.parametrize(
    "service, refused_action",
    [
        (_create_survey, "create"),
        (_add_mark, "mark_add"),
        (_ingest, "upload"),
        (_issue, "report.issue"),
        (_share, "share_link.create"),
    ],
)
def test_it_writes_nothing_when_the_last_write_is_refused(world, settings, service, refused_action):
    """The audit line is each service's last write: refuse it and nothing else stays."""
    before = _counts()
    with database_refuses("survey_auditevent", f"NEW.action = '{refused_action}'"):
        with pytest.raises(IntegrityError):
            service(world)
    assert _counts() == before
    # An upload's original went to storage first: it is removed again.
    stored = [p for p in Path(settings.MEDIA_ROOT).rglob("refused*")]
    assert stored == []


def test_it_keeps_a_survey_edit_whole_when_its_conditions_are_refused(
    client, owner, envelope_survey, thermographer
):
    """The survey fields and its conditions are saved together or not at all."""
    client.force_login(owner.user)
    client.raise_request_exception = False
    data = {
        "site": envelope_survey.site_id,
        "kind": "envelope",
        "date": "2026-01-14",
        "title": "A new title that must not stay alone",
        "camera_accuracy_c": "2",
        "camera_accuracy_pct": "2",
        "indoor_air_c": "21",
        "indoor_rh_pct": "50",
        "conditions_notes": "refuse me",
    }
    with database_refuses("survey_conditions", "NEW.notes = 'refuse me'", "UPDATE"):
        response = client.post(reverse("survey:survey_edit", args=[envelope_survey.pk]), data)
    assert response.status_code == 500
    envelope_survey.refresh_from_db()
    assert envelope_survey.title == ""
    assert envelope_survey.conditions.indoor_air_c == 20.0
    assert not AuditEvent.objects.filter(object_type="Survey", action="update").exists()
