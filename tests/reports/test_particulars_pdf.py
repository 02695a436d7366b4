"""The report's particulars, read back from real WeasyPrint PDFs with pdftotext and pypdf:
people and instrument records, letterhead and sign-off, per-thermogram details, equipment
inspected, the plain-language summary and the glossary."""

import datetime
import io
import shutil

import pytest
from PIL import Image

from reports.document import render_pdf
from reports.models import Report, ReportVersion
from survey.models import Asset, Finding, Instrument, RoundStop
from survey.services.letterhead import member_update_qualification, organization_update_letterhead
from survey.services.marks import mark_add
from tests.factories import make_thermogram
from tests.reports.helpers import flat, pdf_text

pytestmark = pytest.mark.skipif(shutil.which("pdftotext") is None, reason="needs pdftotext")


def png_bytes(size=(120, 40), colour=(11, 79, 117)) -> bytes:
    buffer = io.BytesIO()
    Image.new("RGB", size, colour).save(buffer, "PNG")
    return buffer.getvalue()


def text_of(pdf: bytes) -> str:
    """The PDF's text in reading order (a table's cells one after another), whitespace
    collapsed."""
    return flat(pdf_text(pdf, layout=False))


def draft_of(survey, number="R-1") -> ReportVersion:
    report = Report.objects.create(organization=survey.organization, survey=survey, number=number)
    return ReportVersion.objects.create(report=report, version=1, is_draft=True)


def camera(org, **fields) -> Instrument:
    values = {
        "model_name": "Invented LW-320",
        "serial_number": "0001",
        "detector_width_px": 40,
        "detector_height_px": 30,
        "lens_hfov_deg": 3.0,
        "netd_mk": 40,
        "calibration_date": datetime.date(2025, 6, 1),
        "calibration_due": datetime.date(2026, 6, 1),
        "certificate_reference": "CAL-2025-118",
    }
    return Instrument.objects.create(organization=org, **(values | fields))


def test_it_prints_the_qualification_records_and_the_instrument_record(
    report_survey, thermographer, reviewer
):
    member_update_qualification(
        member=thermographer,
        actor=None,
        qualification_scheme="Invented Thermography Board",
        qualification_level="2",
        certificate_number="ITB-2231",
        qualification_expires=datetime.date(2027, 3, 31),
    )
    member_update_qualification(
        member=reviewer,
        actor=None,
        qualification_scheme="Invented Thermography Board",
        qualification_level="3",
        certificate_number="ITB-0907",
        qualification_expires=datetime.date(2025, 12, 31),
    )
    report_survey.camera = camera(report_survey.organization)
    report_survey.deviations = "The north gable was imaged from 12 m instead of 5 m."
    report_survey.save()
    text = text_of(render_pdf(draft_of(report_survey)).pdf)
    assert "Invented Thermography Board, level 2, certificate ITB-2231" in text
    assert "31 March 2027" in text
    # The reviewer's expired before the survey date (14 January 2026): the report says so.
    assert "31 December 2025 (expired before the survey)" in text
    assert "40 × 30 pixels" in text
    assert "40 mK" in text
    assert "certificate CAL-2025-118" in text
    assert "next due 1 June 2026" in text
    assert "The north gable was imaged from 12 m instead of 5 m." in text
    # The images are the camera's detector size: no size deviation.
    assert "not the 40 × 30 pixels" not in text


def test_it_states_a_detector_size_that_differs_from_the_images_as_a_deviation(report_survey):
    report_survey.camera = camera(
        report_survey.organization, detector_width_px=320, detector_height_px=240
    )
    report_survey.save()
    text = text_of(render_pdf(draft_of(report_survey)).pdf)
    assert "Deviations from the procedure" in text
    assert "The thermograms measure 40 × 30 pixels, not the 320 × 240 pixels" in text


def test_it_prints_the_letterhead_on_the_cover_and_in_every_later_footer(report_survey):
    organization_update_letterhead(
        organization=report_survey.organization,
        user=None,
        name="Coldspot Thermal Surveys",
        address="4 Invented Lane\nSampletown",
        phone="+00 123 4567",
        email="office@coldspot.invalid",
        website="coldspot.invalid",
        logo=png_bytes(),
    )
    pdf = render_pdf(draft_of(report_survey)).pdf
    from pypdf import PdfReader

    reader = PdfReader(io.BytesIO(pdf))
    pages = [page.extract_text() or "" for page in reader.pages]
    assert "4 Invented Lane" in pages[0]
    assert "+00 123 4567" in pages[0]
    for number, page in enumerate(pages[1:], start=2):
        # The footer's one line: name, address, contact.
        assert "Coldspot Thermal Surveys · 4 Invented Lane, Sampletown" in page, number
    # The logo is a picture on the cover (the cover has no other picture).
    assert len(reader.pages[0].images) >= 1


def test_a_draft_is_not_signed(report_survey):
    assert "Not yet signed" in text_of(render_pdf(draft_of(report_survey)).pdf)


def test_an_issued_version_carries_the_sign_off(
    report_survey, reviewer, django_capture_on_commit_callbacks
):
    from reports.services import report_create, report_issue

    member_update_qualification(
        member=reviewer,
        actor=None,
        qualification_scheme="Invented Thermography Board",
        qualification_level="3",
        signature=png_bytes((300, 80), (20, 20, 20)),
    )
    report = report_create(survey=report_survey, user=reviewer.user)
    with django_capture_on_commit_callbacks(execute=True):
        version = report_issue(report=report, user=reviewer.user)
    version.refresh_from_db()
    with version.pdf.open("rb") as handle:
        text = text_of(handle.read())
    assert "Not yet signed" not in text
    assert f"Issued by {reviewer.display_name}" in text
    assert "Qualification Invented Thermography Board, level 3" in text
    assert f"Date {version.issued_at:%-d %B %Y}" in text
    assert "no signature picture on file" not in text


def test_it_prints_each_thermograms_capture_details_scale_and_methods(report_survey):
    thermogram = report_survey.thermograms.get()
    thermogram.captured_at = datetime.datetime(2026, 1, 14, 21, 40, tzinfo=datetime.UTC)
    thermogram.distance_m = 3.0
    thermogram.emissivity_method = "table"
    thermogram.reflected_method = "reflector"
    thermogram.save()
    mark = thermogram.marks.get(label="A")
    mark.name = "Cold corner"
    mark.note = "Behind the wardrobe"
    mark.save()
    text = text_of(render_pdf(draft_of(report_survey)).pdf)
    assert "Taken 14 Jan 2026 21:40" in text  # the survey has no zone: the server's (UTC)
    # IFOV 1.309 mrad (the survey's) at 3.0 m: 3.0 × 1.309 = 3.927 mm, printed as 3.9 mm
    # (footprint = distance × IFOV, small-angle; common practice, no source;
    # docs/references.md § Report particulars).
    assert "1 px ≈ 3.9 mm at 3.0 m" in text
    assert "Emissivity 0.93 (published table for the material)" in text
    assert "Reflected temperature 19.0 °C (reflector method (crumpled foil))" in text
    # The survey conditions (20 °C, 50 % inside; −5 °C outside), labelled as such.
    assert "Indoor air 20.0 °C, 50 % RH (survey conditions)" in text
    assert "Outdoor air −5.0 °C (survey conditions)" in text
    assert "A Cold corner: Behind the wardrobe" in text


def test_it_charts_the_profile_of_a_line_mark(report_survey):
    thermogram = report_survey.thermograms.get()
    mark_add(thermogram=thermogram, kind="line", points=[[2, 13], [30, 13]], user=None)
    text = text_of(render_pdf(draft_of(report_survey)).pdf)
    assert "Temperatures along line C, apparent, from its labelled end." in text
    assert "distance along the line" in text
    # The line crosses the 12.0 °C patch and the 18.0 °C wall (conftest's field): the chart
    # labels its coldest and hottest samples.
    assert "12" in text and "18" in text


def test_it_lists_equipment_with_and_without_findings_loads_and_the_next_inspection(
    electrical_report_survey,
):
    survey = electrical_report_survey
    quiet = Asset.objects.create(
        organization=survey.organization,
        site=survey.site,
        name="Distribution board DB-2",
        kind=Asset.Kind.PANEL,
        inspection_interval_months=6,
    )
    make_thermogram(
        survey,
        asset=quiet,
        title="DB-2 open",
        load_l1_a=41,
        load_l2_a=38,
        load_l3_a=44,
        load_method="clamp",
    )
    skipped = Asset.objects.create(
        organization=survey.organization, site=survey.site, name="Lift motor room panel"
    )
    RoundStop.objects.create(survey=survey, asset=skipped, skip_reason="Room locked")
    text = text_of(render_pdf(draft_of(survey)).pdf)
    assert "Equipment inspected" in text
    assert "Main switchboard MSB-1" in text
    assert "Distribution board DB-2" in text
    assert "no finding" in text
    assert "L1 41 A, L2 38 A, L3 44 A (clamp meter at the time of the thermogram)" in text
    # Survey on 2 March 2026, DB-2 every 6 months: next by 2 September 2026 (calendar
    # months; docs/references.md § Units and inspection intervals).
    assert "by 2 September 2026 (every 6 months)" in text
    assert "Lift motor room panel" in text and "not inspected" in text
    assert "NFPA 70B asks for infrared inspection" in text
    assert "The absence of a hot spot does not prove" in text


def test_it_says_what_to_do_and_by_when_in_the_firms_words(electrical_report_survey, org):
    org.level_1_time = "Isolate and repair within 24 hours."
    org.save()
    electrical_report_survey.scope_not_examined = "Roof plant, no access"
    electrical_report_survey.save()
    text = text_of(render_pdf(draft_of(electrical_report_survey)).pdf)
    assert "In plain words" in text
    assert "1 open finding needs something done" in text
    assert "Isolate and repair within 24 hours." in text
    assert "Not examined: Roof plant, no access." in text
    assert "Glossary" in text
    assert "Reflected temperature" in text and "Apparent temperature" in text
    assert "Full-load rise" in text
    # The building terms stay out of an electrical report.
    assert "fRsi (temperature factor)" not in text


def test_a_building_report_explains_frsi_and_surface_rh(report_survey):
    text = text_of(render_pdf(draft_of(report_survey)).pdf)
    assert "fRsi (temperature factor)" in text
    assert "Surface RH" in text
    assert "Full-load rise" not in text


def test_a_verified_finding_is_not_counted_as_open_in_the_plain_summary(report_survey):
    Finding.objects.filter(survey=report_survey).update(status=Finding.Status.VERIFIED)
    text = text_of(render_pdf(draft_of(report_survey)).pdf)
    assert "1 finding was already repaired or verified as repaired." in text


def test_it_draws_the_marks_on_the_photo_through_the_alignment(report_survey):
    from django.core.files.base import ContentFile

    from reports.pictures import photo_picture
    from survey.services.marks import thermogram_set_alignment

    thermogram = report_survey.thermograms.get()
    buffer = io.BytesIO()
    Image.new("RGB", (400, 300), (255, 255, 255)).save(buffer, "PNG")
    thermogram.photo.save("photo.png", ContentFile(buffer.getvalue()))
    # Photo pixels ten times the thermogram's: photo (0, 0) is thermogram (0, 0), photo
    # (100, 0) is thermogram (10, 0), photo (0, 100) is thermogram (0, 10).
    thermogram_set_alignment(
        thermogram=thermogram,
        pairs=[[[0, 0], [0, 0]], [[100, 0], [10, 0]], [[0, 100], [0, 10]]],
        user=None,
    )
    thermogram.refresh_from_db()
    plain = photo_picture_without_alignment(thermogram)
    drawn = photo_picture(thermogram, 400)
    # Mark B, the rectangle over thermogram pixels 20–35 × 5–25, has its left edge at
    # thermogram x 19.5, photo x 195 (+ half a pixel to the drawn pixel's centre).
    assert plain.getpixel((195, 150)) == (255, 255, 255)
    assert drawn.getpixel((195, 150)) != (255, 255, 255)
    assert drawn.getpixel((275, 150)) == (255, 255, 255)  # inside the rectangle: untouched
    assert drawn.getpixel((100, 150)) == (255, 255, 255)  # far from every mark


def photo_picture_without_alignment(thermogram):
    from reports.pictures import photo_picture

    alignment, thermogram.photo_alignment = thermogram.photo_alignment, None
    try:
        return photo_picture(thermogram, 400)
    finally:
        thermogram.photo_alignment = alignment


def test_it_prints_each_marks_rise_over_the_air_around_the_equipment(electrical_survey):
    import numpy as np

    field = np.full((30, 40), 30.0, dtype=np.float32)
    field[10:14, 10:14] = 40.0
    thermogram = make_thermogram(electrical_survey, field, emissivity=1.0, reflected_c=24.0)
    mark_add(thermogram=thermogram, kind="rectangle", points=[[9, 9], [15, 15]], user=None)
    text = text_of(render_pdf(draft_of(electrical_survey)).pdf)
    # ε = 1: the measurement equation leaves the apparent 40.0 °C as it is (no reflected
    # part); the air around the equipment is 24.0 °C (the fixture), so the rise is 16.0 K
    # (docs/references.md § Report particulars).
    assert "Rise over the air A 16.0 K" in text
