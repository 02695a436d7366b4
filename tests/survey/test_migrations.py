"""Data migrations run against rows as an older version left them."""

import importlib

from django.apps import apps

from survey.models import Mark
from survey.thermal.marks import MAX_PROFILE_SAMPLES
from tests.factories import make_thermogram


def test_it_caps_line_profiles_stored_before_the_cap(envelope_survey):
    """A 5000-point profile (as stored before) keeps at most the cap, with its extremes."""
    migration = importlib.import_module("survey.migrations.0013_cap_line_profiles")
    thermogram = make_thermogram(envelope_survey)
    profile = [[float(d), 20.0 + (d % 7) / 10] for d in range(5000)]
    profile[1234][1], profile[4321][1] = 95.5, -3.0
    for gap in range(100, 130):  # a stretch without readings stays a gap
        profile[gap][1] = None
    stats = {"min_c": -3.0, "max_c": 95.5, "pixels": 4999, "profile": profile}
    mark = Mark.objects.create(
        thermogram=thermogram, label="A", kind="line", points=[[0, 5], [150, 5]], stats=stats
    )
    migration.cap_profiles(apps, None)
    mark.refresh_from_db()
    capped = mark.stats["profile"]
    assert len(capped) <= MAX_PROFILE_SAMPLES
    values = [v for _, v in capped if v is not None]
    assert (max(values), min(values)) == (95.5, -3.0)
    assert any(v is None for _, v in capped)
    assert mark.stats["min_c"] == -3.0 and mark.stats["pixels"] == 4999
