"""The report's logged conditions, read back from a real WeasyPrint PDF with pdftotext.

Interpolated values by hand: readings 20.0 °C / 50 % at 22:00 and 21.2 °C / 54 % at 22:10
UTC give 20.36 °C / 51.2 % at 22:03 (docs/references.md § Data loggers and time series).
"""

import datetime as dt
import shutil

import pytest

from reports.document import render_pdf
from reports.models import Report, ReportVersion
from survey.services.loggers import condition_log_import
from tests.reports.helpers import flat, pdf_text

pytestmark = pytest.mark.skipif(shutil.which("pdftotext") is None, reason="needs pdftotext")


def test_it_prints_the_logger_chart_and_each_thermograms_logged_air(report_survey):
    report_survey.time_zone = "Europe/Berlin"
    report_survey.save()
    thermogram = report_survey.thermograms.get()
    thermogram.captured_at = dt.datetime(2026, 1, 14, 22, 3, tzinfo=dt.UTC)
    thermogram.save()
    condition_log_import(
        survey=report_survey,
        role="inside",
        name="bedroom-logger.csv",
        data=b"time;t;rh\n2026-01-14 23:00;20,0;50\n2026-01-14 23:10;21,2;54\n",
        user=None,
        time_column="time",
        temperature_column="t",
        humidity_column="rh",
    )  # local times in the survey's zone: CET, UTC+1
    report = Report.objects.create(
        organization=report_survey.organization, survey=report_survey, number="R-LOG"
    )
    version = ReportVersion.objects.create(report=report, version=1, is_draft=True)
    text = flat(pdf_text(render_pdf(version).pdf))
    assert "Logged conditions" in text
    assert "14 Jan 2026 23:00 to 14 Jan 2026 23:10 (Europe/Berlin)" in text
    # The thermogram's row: taken 23:03 local, 20.4 °C and 51 % from the logger.
    assert "14 Jan 2026 23:03 20.4 51 — from the logger" in text
    assert "thermograms" in text  # the chart's legend, drawn as SVG text
