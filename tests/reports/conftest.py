"""A small hand-built survey for report tests: every number in it is known in advance.

The envelope thermogram is a flat 18.0 °C field (apparent) with a 6 × 6 pixel patch at
12.0 °C; mark A is a point in the patch, B a rectangle on the sound wall and A's reference.

WeasyPrint takes most of a report test's time, so each module renders the hand-built
survey once (:func:`hand_built_render`, real WeasyPrint) and shares the bytes, the text and
the pypdf reader: :func:`issued_version` stores that one render as the issued file of each
test's own report. Tests of the render itself (claiming, freezing, failures) use
:func:`freshly_issued_version`, which renders for the test.
"""

import dataclasses
import datetime
import functools
import hashlib
import io
from types import SimpleNamespace

import numpy as np
import pytest
from django.db import transaction
from django.test import override_settings

from survey.models import Asset, Finding, HeatLossEstimate, Member, Survey
from tests.factories import make_thermogram

SOUND_C, COLD_C = 18.0, 12.0
EMISSIVITY, REFLECTED_C = 0.93, 19.0


def envelope_field() -> np.ndarray:
    field = np.full((30, 40), SOUND_C, dtype=np.float32)
    field[10:16, 5:11] = COLD_C
    return field


@pytest.fixture
def report_survey(envelope_survey, thermographer, reviewer) -> Survey:
    return build_report_survey(envelope_survey, thermographer, reviewer)


def build_report_survey(envelope_survey: Survey, thermographer, reviewer) -> Survey:
    """Mark, finding and heat-loss estimate of the hand-built report survey."""
    from survey.services.marks import mark_add

    envelope_survey.reviewer = reviewer
    envelope_survey.instrument = "Invented LW-320 camera, serial 0001"
    envelope_survey.save()
    thermographer.qualification = "Thermography certificate, level 2"
    thermographer.save()
    thermogram = make_thermogram(
        envelope_survey,
        envelope_field(),
        title="North wall, bedroom 2",
        emissivity=EMISSIVITY,
        reflected_c=REFLECTED_C,
        created_by=thermographer.user,
    )
    sound = mark_add(thermogram=thermogram, kind="rectangle", points=[[20, 5], [35, 25]], user=None)
    cold = mark_add(
        thermogram=thermogram,
        kind="point",
        points=[[7, 12]],
        user=None,
        reference_kind="mark",
        reference_mark=sound,
    )
    finding = Finding.objects.create(
        organization=envelope_survey.organization,
        survey=envelope_survey,
        thermogram=thermogram,
        category="missing_insulation",
        location="Corner above the window",
        description="Cold patch at the wall-ceiling junction.",
        level=2,
        recommendation="Open up the corner and refit the insulation.",
    )
    finding.marks.set([cold])
    HeatLossEstimate.objects.create(
        organization=envelope_survey.organization,
        survey=envelope_survey,
        label="Cold corner",
        inputs={"area_m2": 0.5, "t_surface_c": 12.0, "t_air_c": 20.0},
        results={"total_w_m2": 40.0, "watts": 20.0, "kwh_per_year": 100.0},
    )
    return envelope_survey


@pytest.fixture
def electrical_report_survey(electrical_survey, thermographer) -> Survey:
    asset = Asset.objects.create(
        organization=electrical_survey.organization,
        site=electrical_survey.site,
        name="Main switchboard MSB-1",
        kind=Asset.Kind.PANEL,
    )
    thermogram = make_thermogram(
        electrical_survey, asset=asset, title="MSB-1 incomer", created_by=thermographer.user
    )
    Finding.objects.create(
        organization=electrical_survey.organization,
        survey=electrical_survey,
        thermogram=thermogram,
        asset=asset,
        category="connection",
        location="Incomer, phase L2 lug",
        level=1,
        rise_c=20.0,
        recommendation="De-energize and re-terminate the L2 lug.",
    )
    return electrical_survey


def kind_survey(org, site, thermographer, kind: str) -> Survey:
    return Survey.objects.create(
        organization=org,
        site=site,
        kind=kind,
        date=datetime.date(2026, 2, 1),
        thermographer=thermographer,
    )


@pytest.fixture
def draft_version(report_survey, thermographer, django_capture_on_commit_callbacks):
    from reports.services import report_create, report_request_draft

    report = report_create(survey=report_survey, user=thermographer.user)
    with django_capture_on_commit_callbacks(execute=True):
        version = report_request_draft(report=report, user=thermographer.user)
    version.refresh_from_db()
    return version


@pytest.fixture
def freshly_issued_version(report_survey, reviewer, django_capture_on_commit_callbacks):
    """An issued version rendered for this test by the render task (eager on commit)."""
    from reports.services import report_create, report_issue

    report = report_create(survey=report_survey, user=reviewer.user)
    with django_capture_on_commit_callbacks(execute=True):
        version = report_issue(report=report, user=reviewer.user)
    version.refresh_from_db()
    return version


class Rendered(SimpleNamespace):
    """A render shared by a module: the PDF bytes, its text and its pypdf reader, each
    read once."""

    @functools.cached_property
    def text(self) -> str:
        from tests.reports.helpers import pdf_text

        return pdf_text(self.pdf)

    @functools.cached_property
    def cells(self) -> str:
        from tests.reports.helpers import flat, pdf_text

        return flat(pdf_text(self.pdf, layout=False))

    @functools.cached_property
    def reader(self):
        from pypdf import PdfReader

        return PdfReader(io.BytesIO(self.pdf))


def render_hand_built(django_db_blocker, media: str, *, drafts: tuple[bool, ...]) -> dict:
    """The hand-built survey rendered once per entry of `drafts` (True: a draft), in a
    transaction rolled back afterwards, with the digest of its results."""
    from reports.document import render_pdf
    from reports.models import Report, ReportVersion
    from reports.results import results_file, survey_results
    from tests.conftest import make_envelope_survey, make_organization, make_person, make_site

    hasher = ["django.contrib.auth.hashers.MD5PasswordHasher"]
    renders = {}
    with (
        django_db_blocker.unblock(),
        override_settings(MEDIA_ROOT=media, PASSWORD_HASHERS=hasher),
        transaction.atomic(),
    ):
        org = make_organization()
        thermographer = make_person(org, "theo", Member.Role.THERMOGRAPHER, "Theo Thermographer")
        reviewer = make_person(org, "rita", Member.Role.REVIEWER, "Rita Reviewer")
        survey = make_envelope_survey(org, make_site(org), thermographer)
        build_report_survey(survey, thermographer, reviewer)
        for draft in drafts:
            Report.objects.all().delete()
            report = Report.objects.create(organization=org, survey=survey, number="R-T1")
            version = ReportVersion.objects.create(
                report=report, version=1, is_draft=draft, issued_by=None if draft else reviewer.user
            )
            renders[draft] = Rendered(**dataclasses.asdict(render_pdf(version)))
        # The SHA-256 of the results file a user exports (hashlib, FIPS 180-4).
        renders["digest"] = hashlib.sha256(results_file(survey_results(survey))).hexdigest()
        transaction.set_rollback(True)
    return renders


@pytest.fixture(scope="module")
def hand_built_render(django_db_setup, django_db_blocker, tmp_path_factory) -> Rendered:
    """The hand-built survey's issued version, rendered once for the whole module."""
    media = str(tmp_path_factory.mktemp("media"))
    return render_hand_built(django_db_blocker, media, drafts=(False,))[False]


def issue_with_render(survey: Survey, reviewer, rendered: Rendered):
    """Issue a report of `survey` for real, with `rendered` as its file.

    The issuing service runs; its render task, queued on commit, never runs (the test's
    transaction is rolled back), and the task's own store step keeps the shared bytes,
    with their sha256 and page count, as the issued file.
    """
    from reports import rendering
    from reports.models import ReportVersion
    from reports.services import report_create, report_issue

    report = report_create(survey=survey, user=reviewer.user)
    version = report_issue(report=report, user=reviewer.user)
    ReportVersion.objects.filter(pk=version.pk).update(status=ReportVersion.Status.RENDERING)
    version.refresh_from_db()
    assert rendering._store_pdf(version, rendered)
    version.refresh_from_db()
    return version


@pytest.fixture
def issued_version(report_survey, reviewer, hand_built_render):
    """An issued version of this test's report survey whose file is the module's one render."""
    return issue_with_render(report_survey, reviewer, hand_built_render)
