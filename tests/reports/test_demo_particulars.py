"""The demo firm shows the report particulars: letterhead and logo, qualification records,
instrument records, deviations, methods per thermogram and loads per phase."""

import io
import shutil

import pytest
from django.core.management import call_command

from reports.document import render_pdf
from reports.models import Report, ReportVersion
from survey.models import Member, Organization, Survey
from tests.reports.helpers import flat, pdf_text

pytestmark = pytest.mark.skipif(shutil.which("pdftotext") is None, reason="needs pdftotext")


def draft_text(survey: Survey) -> str:
    report = Report.objects.create(
        organization=survey.organization, survey=survey, number=f"DEMO-{survey.pk}"
    )
    version = ReportVersion.objects.create(report=report, version=1, is_draft=True)
    return flat(pdf_text(render_pdf(version).pdf, layout=False))


def test_the_demo_report_carries_the_letterhead_people_and_instrument(db):
    call_command("demo_data", stdout=io.StringIO())
    call_command("demo_data", stdout=io.StringIO())  # idempotent: nothing doubled
    org = Organization.objects.get(slug="lumen-brook")
    assert org.logo and "invented" in org.address
    rowan = Member.objects.get(user__username="rowan")
    assert rowan.qualification_text.startswith("Invented Thermography Certification Board")
    assert rowan.signature

    electrical = Survey.objects.get(organization=org, title="Main distribution panel survey")
    text = draft_text(electrical)
    assert "7 Fictional Yard" in text and "lumen-brook.invalid" in text
    assert "Invented Thermography Certification Board, level 1, certificate DEMO-T1-0458" in text
    assert "Invented compact LWIR camera, serial DEMO-0002" in text
    assert "not the 240 × 180 pixels" not in text  # the panel images match this camera
    assert "The covers of outgoing section 3 stayed closed" in text
    assert "L1 246 A, L2 251 A, L3 240 A (clamp meter at the time of the thermogram)" in text
    assert "tape or paint of known emissivity beside the spot" in text
    assert "Equipment inspected" in text

    envelope = Survey.objects.get(organization=org, kind="envelope")
    text = draft_text(envelope)
    assert "not the 320 × 240 pixels of the camera record" in text
    assert "published table for the material" in text
    assert "1 px ≈" in text
