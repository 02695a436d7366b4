"""What a reader of the printed report catches first (issue 14): the colour span of each
thermogram, internal notes, counts and words, the order of the chapters, the verification
instruction and the archival form. Every PDF is read back with pdftotext or pypdf."""

import re

import numpy as np

from reports.document import render_pdf
from reports.models import Report, ReportVersion
from survey.services.marks import mark_add
from tests.factories import make_thermogram
from tests.reports.helpers import flat, object_c, pdf_text

NUMBER = r"(−?\d+\.\d)"


def render(survey, *, draft: bool = True, number: str = "R-H1", version: int = 1):
    report, _ = Report.objects.get_or_create(
        organization=survey.organization, survey=survey, number=number
    )
    row = ReportVersion.objects.create(report=report, version=version, is_draft=draft)
    return render_pdf(row)


def as_float(text: str) -> float:
    return float(text.replace("−", "-"))


def lug_survey(survey):
    """A 27–36 °C panel with a 75 °C lug of 2 × 2 pixels (under 1 % of the picture, so the
    percentile span clips it) and a −5 °C cold pixel, both marked, drawn at the fixed span
    27–36 °C the thermographer saved."""
    field = np.linspace(27.0, 36.0, 60 * 80, dtype=np.float32).reshape(60, 80)
    field[20:22, 30:32] = 75.0
    field[50, 10] = -5.0
    thermogram = make_thermogram(
        survey,
        field,
        title="Panel P-3",
        emissivity=0.9,
        reflected_c=22.0,
        span_low_c=27.0,
        span_high_c=36.0,
    )
    mark_add(
        thermogram=thermogram,
        kind="rectangle",
        points=[[29, 19], [32, 22]],
        user=None,
        name="phase B lug",
        note="Lug of the phase B incomer, re-torqued last year",
    )
    mark_add(thermogram=thermogram, kind="point", points=[[10, 50]], user=None, single_pixel=True)
    return thermogram


def test_it_widens_the_printed_span_to_every_marks_extremes(electrical_survey):
    """The caption's span brackets the lug's 75 °C apparent (and its higher corrected value)
    and the cold pixel's −5 °C, though the saved span is 27–36 °C; it says the colours show
    apparent temperature."""
    lug_survey(electrical_survey)
    text = flat(pdf_text(render(electrical_survey).pdf))
    match = re.search(rf"Colours show apparent temperature .*?from {NUMBER} to {NUMBER} °C", text)
    assert match, "the caption names the span and the quantity its colours show"
    low, high = as_float(match.group(1)), as_float(match.group(2))
    # The corrected maximum by the independent Planck-band solver of tests/thermal/planck.py.
    corrected_max = object_c(75.0, 0.9, 22.0)
    assert corrected_max > 75.5
    assert low <= -5.0 and high >= corrected_max - 0.05
    assert high < corrected_max + 0.2, "widened just enough"
