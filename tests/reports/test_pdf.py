"""The PDF read back: sections, numbers, cautions, page numbers, pictures and digests."""

import re
from types import SimpleNamespace

import numpy as np
import pytest

from reports.document import render_pdf
from reports.models import Report, ReportVersion
from survey.models import Conditions, Finding, Survey
from survey.services.findings import finding_create, finding_suggest
from survey.services.marks import mark_add, mark_update
from tests.factories import make_thermogram
from tests.reports.conftest import (
    COLD_C,
    EMISSIVITY,
    REFLECTED_C,
    SOUND_C,
    kind_survey,
    render_hand_built,
)
from tests.reports.helpers import dew_point_c, flat, object_c, pdf_text, surface_rh_pct

NUMBER = r"(−?\d+\.\d)"  # negative numbers print with a true minus sign (U+2212)


def render(survey: Survey, *, draft: bool = True):
    report = Report.objects.create(organization=survey.organization, survey=survey, number="R-T1")
    version = ReportVersion.objects.create(report=report, version=1, is_draft=draft)
    return render_pdf(version)


@pytest.fixture(scope="module")
def hand_built(django_db_setup, django_db_blocker, tmp_path_factory):
    """The hand-built survey rendered once for the whole module, as a draft and as an issued
    version, with the digest of its results; its rows are rolled back afterwards."""
    media = str(tmp_path_factory.mktemp("media"))
    renders = render_hand_built(django_db_blocker, media, drafts=(True, False))
    return SimpleNamespace(draft=renders[True], final=renders[False], digest=renders["digest"])


@pytest.fixture
def rendered(hand_built):
    return hand_built.draft


def test_it_lays_out_cover_contents_header_and_page_numbers(rendered):
    """Cover facts; contents with the page each section starts on; header; "page n of N"."""
    text = rendered.text
    pages = text.split("\f")[: rendered.page_count]
    cover = flat(pages[0])
    for fact in [
        "Harbour Lane Housing Co-op",
        "Block C, 14 Harbour Lane",
        "Building envelope",
        "14 January 2026",
        "Northwind Thermal",
        "Theo Thermographer",
        "Thermography certificate, level 2",
        "Rita Reviewer",
        "R-T1",
    ]:
        assert fact in cover
    for title in [
        "Verification",
        "Summary",
        "Survey conditions",
        "Method",
        "Thermograms",
        "Heat loss",
        "Limitations and cautions",
        "References",
    ]:
        match = re.search(rf"^{title} ?[. ]+(\d+)$", pages[1], re.MULTILINE)
        assert match, f"{title} missing from the contents"
        page = int(match.group(1))
        assert title in pages[page - 1], f"{title} is not on page {page}"
    reader = rendered.reader
    total = len(reader.pages)
    assert total == rendered.page_count
    for number, page in enumerate(reader.pages[1:], start=2):
        assert f"page {number} of {total}" in page.extract_text()
        assert "Harbour Lane Housing Co-op · Report R-T1 draft" in pages[number - 1]
    assert "page 1 of" not in pages[0]


def test_it_prints_the_corrected_numbers_of_a_hand_built_survey(rendered):
    """Mark B's corrected value, ΔT against A, dew point, surface RH and fRsi match
    scipy/psychrolib; the straddling RH interval reads "cannot tell"."""
    corrected_cold = object_c(COLD_C, EMISSIVITY, REFLECTED_C)  # scipy Planck 8–14 µm
    corrected_sound = object_c(SOUND_C, EMISSIVITY, REFLECTED_C)
    dew = dew_point_c(20.0, 50.0)  # psychrolib, indoor air of the envelope_survey fixture
    rh = surface_rh_pct(20.0, 50.0, corrected_cold)
    text = rendered.text
    row = re.search(
        rf"^\s*B point\s+0\.93 /\s+12\.0 ·\s+{NUMBER}\s+{NUMBER}\s+{NUMBER}"
        rf"\s+{NUMBER}\s+(\d+)\s%\s+(\d\.\d\d) \((\d\.\d\d)\)\s*$",
        text,
        re.MULTILINE,
    )
    assert row, "row of mark B not found"
    row_values = [value.replace("−", "-") for value in row.groups()]
    corrected, _uncertainty, delta_t, dew_printed, rh_printed, factor, needed = row_values
    assert float(corrected) == pytest.approx(corrected_cold, abs=0.06)
    # Hottest to hottest: B's max minus A's max (A is uniform, so its max is its mean).
    assert float(delta_t) == pytest.approx(corrected_cold - corrected_sound, abs=0.06)
    assert float(dew_printed) == pytest.approx(dew, abs=0.06)
    assert int(rh_printed) == pytest.approx(rh, abs=0.6)
    # fRsi = (θsi − θe)/(θi − θe) by hand with −5 °C outside; fRsi,min 0.705
    # (docs/references.md § Building envelope, computed).
    assert float(factor) == pytest.approx((corrected_cold + 5.0) / 25.0, abs=0.006)
    assert float(needed) == pytest.approx(0.705, abs=0.006)
    flat_text = flat(text)
    cells = rendered.cells
    assert "rise over mark A, hottest to hottest" in cells
    # 87 % with ±2.5 K: the interval reaches both 80 % and 100 % (ILAC-G8 guarded acceptance).
    assert "condensation cannot tell within the camera's accuracy" in cells
    assert "± is the expanded uncertainty at k = 2 (about 95 %)" in flat_text
    assert "Inside–outside difference 25.0 K" in flat_text  # 20 − (−5), the fixture's air
    assert "Conditions check" in flat_text and "not recorded" in flat_text
    assert "start time not recorded" in flat_text


@pytest.mark.parametrize(
    ("kind", "phrases"),
    [
        # The wording each caution must carry comes from the list of cautions.
        ("envelope", ["moisture meter", "not their causes", "local codes", "indicative"]),
        ("roof", ["fall protection", "moisture meter", "local codes"]),
        ("electrical", ["qualified persons", "protective equipment", "local codes"]),
        ("mechanical", ["not their causes", "local codes"]),
    ],
)
def test_it_prints_the_cautions_of_each_survey_kind(org, site, thermographer, kind, phrases):
    """Limitations and cautions are always present and chosen by the survey's kind."""
    survey = kind_survey(org, site, thermographer, kind)
    text = flat(pdf_text(render(survey).pdf))
    cautions = text[text.rindex("Limitations and cautions") :]
    for phrase in phrases:
        assert phrase in cautions


def test_it_prints_the_load_correction_of_an_electrical_survey(electrical_report_survey):
    """65 % load and a finding judged with n = 1.5: the report prints that n, the measured
    rise first and the full-load rise beside it, and never says the square law is always
    used. 20 K·(100/65)^1.5 = 38.2 K (computed by hand)."""
    Finding.objects.filter(survey=electrical_report_survey).update(
        load_exponent=1.5, corrected_rise_c=38.2, rise_method="hottest_to_hottest"
    )
    text = flat(pdf_text(render(electrical_report_survey).pdf))
    assert "load was 65 % of rating" in text
    assert "(used here: n = 1.5)" in text
    assert "20.0 K measured, 38.2 K at full load (n = 1.5)" in text
    assert "factor 2.37" not in text and "(100 / 65)2" not in text
    assert "1 act now" in text and "re-terminate the L2 lug" in text


def test_it_marks_drafts_and_issued_versions_differently(hand_built):
    """A draft says it is not issued; an issued version says its file is never changed."""
    draft = flat(hand_built.draft.text)
    final = flat(hand_built.final.text)
    assert "Draft, not issued" in draft and "Issued version" not in draft
    assert "Issued version" in final and "Draft, not issued" not in final


def test_it_embeds_print_size_jpegs_and_the_digest_of_the_survey_data(hand_built):
    """Pictures go in as JPEG of about 170 dpi of their printed width; the data digest too."""
    rendered = hand_built.draft
    reader = rendered.reader
    widths = []
    for page in reader.pages:
        for image in page.images:
            if image.indirect_reference.get_object().get("/Filter") == "/DCTDecode":
                widths.append(image.image.width)
    # 100 mm at 170 dpi = 669 px (thermogram); 34 mm = 228 px (summary thumbnail).
    assert 669 in widths and 228 in widths
    assert max(widths) <= 700
    expected = hand_built.digest
    assert rendered.content_sha256 == expected
    assert expected in rendered.text.replace("\n", "")


def test_it_reports_a_survey_without_conditions_or_thermograms(org, site, thermographer):
    """An empty survey still renders, saying what was not recorded."""
    survey = kind_survey(org, site, thermographer, "roof")
    assert not Conditions.objects.filter(survey=survey).exists()
    text = flat(pdf_text(render(survey).pdf))
    assert "No conditions were recorded." in text
    assert "0 thermograms examined; 0 findings." in text


def test_it_draws_the_trend_of_an_asset_seen_before(electrical_report_survey, thermographer):
    """An asset with an earlier visit gets its history chart beside its thermogram."""

    finding = Finding.objects.get(survey=electrical_report_survey)
    earlier = kind_survey(
        electrical_report_survey.organization,
        electrical_report_survey.site,
        thermographer,
        "electrical",
    )
    Finding.objects.create(
        organization=earlier.organization,
        survey=earlier,
        asset=finding.asset,
        category="connection",
        basis="similar",
        level=3,
        corrected_rise_c=6.0,
    )
    Finding.objects.filter(pk=finding.pk).update(basis="similar", corrected_rise_c=20.0)
    text = flat(pdf_text(render(electrical_report_survey).pdf))
    assert "Rise at Main switchboard MSB-1" in text
    assert "History of Main switchboard MSB-1 across visits" in text


def test_it_computes_the_workspace_readings_from_one_query_of_marks(
    report_survey, django_assert_max_num_queries
):
    """The report's readings equal thermogram_readings (B's ΔT against A); marks fetched once."""
    from reports.results import json_safe, readings_by_thermogram
    from survey.services.readings import thermogram_readings

    thermograms = list(report_survey.thermograms.prefetch_related("marks"))
    # One query at most: the survey's conditions (for dew point and surface RH).
    with django_assert_max_num_queries(1):
        readings = readings_by_thermogram(report_survey, thermograms)
    (thermogram,) = thermograms
    expected = json_safe(thermogram_readings(thermogram))
    assert readings == {thermogram.pk: expected}
    assert [r["label"] for r in expected] == ["A", "B"] and expected[1]["reference"] == "A"


def test_it_puts_the_garbage_collector_thresholds_back_after_a_render(org, site, thermographer):
    """render_pdf collects less often while it runs, then restores gc's thresholds."""
    import gc

    before = gc.get_threshold()
    render(kind_survey(org, site, thermographer, "roof"))
    assert gc.get_threshold() == before


def test_it_prints_condensation_as_such_with_its_margin(org, site, thermographer):
    """22 °C / 55 % air at a 10 °C surface is 118 % [computed, psychrolib;
    docs/references.md § Psychrometrics]: printed "≥ 100 % (condensation)" with the margin
    below the dew point and its ±, never as 118 %."""

    survey = kind_survey(org, site, thermographer, "envelope")
    Conditions.objects.create(survey=survey, indoor_air_c=22.0, indoor_rh_pct=55.0)
    field = np.full((20, 30), 10.0, dtype=np.float32)
    thermogram = make_thermogram(survey, field, emissivity=1.0)
    mark = mark_add(thermogram=thermogram, kind="rectangle", points=[[2, 2], [12, 12]], user=None)
    mark_update(mark=mark, user=None, name="sill")
    cells = flat(pdf_text(render(survey).pdf, layout=False))
    assert "≥ 100 % (condensation)" in cells
    assert "118 %" not in cells
    assert re.search(r"K below the dew point", cells)
    assert "A (sill)" in cells


def test_it_prints_a_wet_area_with_its_spread_and_a_missing_survey_time(org, site, thermographer):
    """A roof finding's wet area is printed with its ±; a roof survey without a start time
    says so in the summary, with the night-survey check not recorded."""

    survey = kind_survey(org, site, thermographer, "roof")
    survey.ifov_mrad = 1.309
    survey.save()
    Conditions.objects.create(survey=survey)
    thermogram = make_thermogram(survey, np.full((40, 60), 6.0), distance_m=20.0)
    mark = mark_add(thermogram=thermogram, kind="rectangle", points=[[2, 2], [51, 31]], user=None)
    suggestion = finding_suggest(survey=survey, basis="roof", marks=[mark])
    finding_create(
        survey=survey,
        user=thermographer.user,
        category="wet_insulation",
        suggestion=suggestion,
        marks=[mark],
    )
    values = suggestion["values"]
    text = pdf_text(render(survey).pdf, layout=False)
    cells = flat(text)
    area = f"Wet area {values['wet_area_m2']:.2f} ± {values['wet_area_u_m2']:.2f} m²"
    assert area in cells
    summary = flat(text[text.index("Summary\n") : text.index("What to do first")])
    assert "start time not recorded" in summary
    assert "surveyed at night not recorded" in summary
