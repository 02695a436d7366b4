"""A small hand-built survey for report tests: every number in it is known in advance.

The envelope thermogram is a flat 18.0 °C field (apparent) with a 6 × 6 pixel patch at
12.0 °C; mark A is a point in the patch, B a rectangle on the sound wall and A's reference.
"""

import datetime

import numpy as np
import pytest

from survey.models import Asset, Finding, HeatLossEstimate, Survey
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
def issued_version(report_survey, reviewer, django_capture_on_commit_callbacks):
    from reports.services import report_create, report_issue

    report = report_create(survey=report_survey, user=reviewer.user)
    with django_capture_on_commit_callbacks(execute=True):
        version = report_issue(report=report, user=reviewer.user)
    version.refresh_from_db()
    return version
