"""Roof wet areas: pixels with a temperature counted once, the pinhole footprint of the
survey's camera, the oblique-view factor, and the ± printed with the area."""

import math

import numpy as np
import pytest

from survey.models import Instrument
from survey.services.findings import finding_create, finding_suggest
from survey.services.instruments import survey_ifov
from survey.services.marks import mark_add
from tests.factories import make_thermogram
from tests.survey.findings_data import equipment_survey

DISTANCE_M = 20.0


@pytest.fixture
def roof(org, site, thermographer):
    return equipment_survey(org, site, thermographer, kind="roof", surfaces_dry=True)


def camera(survey, fov_deg: float, width_px: int = 320) -> Instrument:
    instrument = Instrument.objects.create(
        organization=survey.organization,
        model_name=f"Invented LW-{width_px} {fov_deg:g}°",
        detector_width_px=width_px,
        detector_height_px=240,
        lens_hfov_deg=fov_deg,
    )
    survey.camera = instrument
    survey.ifov_mrad = None
    survey.save()
    return instrument


def test_it_counts_pixels_without_data_once(roof):
    """A 10 × 5 pixel mark (50 pixels, hand-counted) whose two right columns hold no data:
    40 pixels with a temperature, so 40·(d·IFOV)², never 30 or 0."""
    field = np.full((20, 30), 6.0, dtype=np.float32)
    field[2:7, 10:12] = np.nan  # columns 10 and 11 of the mark, 5 rows: 10 missing pixels
    thermogram = make_thermogram(roof, field, distance_m=DISTANCE_M)
    mark = mark_add(thermogram=thermogram, kind="rectangle", points=[[2, 2], [11, 6]], user=None)
    values = finding_suggest(survey=roof, basis="roof", marks=[mark])["values"]
    footprint = DISTANCE_M * 1.309e-3  # the survey's recorded IFOV, 1.309 mrad
    assert values["pixel_count"] == 40 and values["missing_pixel_count"] == 10
    assert values["wet_area_m2"] == pytest.approx(40 * footprint**2, rel=1e-3)
    # Our edge model (docs/references.md § Geometry and wet areas): the 8 × 5 counted block
    # has 2·(8 + 5) = 26 pixel sides on its edge; ± half a pixel each → ± 13 pixels.
    assert values["wet_area_u_m2"] == pytest.approx(13 * footprint**2, rel=1e-3)


@pytest.mark.parametrize("fov_deg", [24.0, 45.0, 90.0])
def test_it_takes_the_pinhole_footprint_of_the_surveys_camera(roof, fov_deg):
    """Footprint 2·d·tan(FOV/2)/N (pinhole lens; docs/references.md § Geometry and wet
    areas), for 24°, 45° and 90° lenses over 320 pixels, and area = pixels × footprint²."""
    camera(roof, fov_deg)
    footprint = 2 * DISTANCE_M * math.tan(math.radians(fov_deg) / 2) / 320  # by hand
    ifov, source = survey_ifov(roof)
    assert ifov * DISTANCE_M / 1000 == pytest.approx(footprint, rel=1e-9)
    assert "pinhole" in source
    thermogram = make_thermogram(roof, np.full((20, 30), 6.0), distance_m=DISTANCE_M)
    mark = mark_add(thermogram=thermogram, kind="rectangle", points=[[2, 2], [11, 6]], user=None)
    values = finding_suggest(survey=roof, basis="roof", marks=[mark])["values"]
    assert values["wet_area_m2"] == pytest.approx(50 * footprint**2, rel=1e-3)
    # The data-sheet FOV/N would understate it (−5 % at 45°, −21 % at 90° in footprint).
    assert values["ifov_mrad"] >= math.radians(fov_deg) / 320 * 1000


def test_it_keeps_the_oblique_view_factor_and_prints_the_area_with_its_spread(roof, thermographer):
    """At 30° the area is the square-on one / cos 30° (common practice); the finding keeps
    the area and its ± and prints them in its reasons."""
    camera(roof, 24.0)
    thermogram = make_thermogram(roof, np.full((40, 60), 6.0), distance_m=DISTANCE_M)
    mark = mark_add(thermogram=thermogram, kind="rectangle", points=[[2, 2], [51, 31]], user=None)
    square_on = finding_suggest(survey=roof, basis="roof", marks=[mark])["values"]
    tilted = finding_suggest(survey=roof, basis="roof", marks=[mark], view_angle_deg=30.0)
    assert tilted["values"]["wet_area_m2"] == pytest.approx(
        square_on["wet_area_m2"] / math.cos(math.radians(30.0)), rel=1e-3
    )
    area, u = tilted["values"]["wet_area_m2"], tilted["values"]["wet_area_u_m2"]
    assert f"{area:.2f} ± {u:.2f} m²" in " ".join(tilted["reasons"])
    finding = finding_create(
        survey=roof,
        user=thermographer.user,
        category="wet_insulation",
        suggestion=tilted,
        marks=[mark],
        level=tilted["level"] or 4,
        override_reason="" if tilted["level"] else "Small wet patch at the drain.",
    )
    assert finding.suggestion["values"]["wet_area_u_m2"] == u
