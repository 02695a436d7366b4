"""Invented thermograms for the judgement tests: a uniform background with one block.

With emissivity 1 the corrected temperature equals the apparent one, so a test can set
the rise it needs exactly.
"""

import datetime

import numpy as np

from survey.models import Asset, Conditions, Survey
from survey.services.marks import mark_add
from tests.factories import make_thermogram

HOT = [[10, 10], [20, 20]]
BACKGROUND = [[40, 40], [60, 60]]


def block_field(background_c: float, block_c: float) -> np.ndarray:
    field = np.full((80, 100), background_c, dtype=np.float32)
    field[8:23, 8:23] = block_c
    return field


def hot_and_reference(survey: Survey, background_c: float, block_c: float, **fields):
    """A thermogram with mark A on the block (reference: mark B on the background)."""
    fields.setdefault("created_by", survey.thermographer.user)
    thermogram = make_thermogram(
        survey, block_field(background_c, block_c), emissivity=1.0, **fields
    )
    reference = mark_add(thermogram=thermogram, kind="rectangle", points=BACKGROUND, user=None)
    hot = mark_add(
        thermogram=thermogram,
        kind="rectangle",
        points=HOT,
        user=None,
        reference_kind="mark",
        reference_mark=reference,
    )
    hot.refresh_from_db()
    return thermogram, hot, reference


def equipment_survey(
    org, site, thermographer, *, kind="electrical", date=(2026, 3, 2), **conditions
):
    survey = Survey.objects.create(
        organization=org,
        site=site,
        kind=kind,
        date=datetime.date(*date),
        thermographer=thermographer,
        ifov_mrad=1.309,
    )
    Conditions.objects.create(survey=survey, **conditions)
    return survey


def make_asset(org, site, name="Panel DB-3") -> Asset:
    return Asset.objects.create(organization=org, site=site, name=name, kind="panel")
