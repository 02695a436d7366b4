"""What a reader of the printed report catches first (issue 14): the colour span of each
thermogram, internal notes, counts and words, the order of the chapters, the verification
instruction and the archival form. Every PDF is read back with pdftotext or pypdf."""

import re

import numpy as np
import pytest

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


# --- internal notes never reach the client; the firm's provenance does -----------------------

INTERNAL_PHRASES = [
    "from memory",
    "check against your copy",
    "[source for the criteria]",
    "the levels given to each band are ours",
    "secondary sources",
    "not confirmed against the published text",
]


def judged_survey(survey, reviewer):
    """The lug survey with its finding judged on the product's default rise table."""
    from survey.models import Conditions, Finding
    from survey.services.criteria_tables import criteria_table_for

    Conditions.objects.update_or_create(
        survey=survey, defaults={"ambient_air_c": 22.0, "wind_m_s": 1.0, "load_pct": 60.0}
    )
    survey.reviewer = reviewer
    survey.save()
    thermogram = lug_survey(survey)
    finding = Finding.objects.create(
        organization=survey.organization,
        survey=survey,
        thermogram=thermogram,
        category="connection",
        location="Incomer",
        level=1,
        rise_c=40.0,
        criteria_table=criteria_table_for(organization=survey.organization, basis="similar"),
        recommendation="Re-terminate the lug.",
    )
    finding.marks.set(thermogram.marks.filter(label="A"))
    return survey


def issue(client, survey, **extra):
    from reports.services import report_create

    report = report_create(survey=survey, user=survey.reviewer.user)
    data = {"change_note": "", "confirm": "on", **extra}
    return report, client.post(f"/reports/{report.pk}/issue/", data)


@pytest.mark.parametrize("kind", ["envelope", "roof", "electrical"])
def test_it_prints_no_internal_note_in_the_report(org, site, thermographer, reviewer, kind):
    """Conditions check and criteria of every kind: standards by name, no working notes."""
    from tests.reports.conftest import kind_survey

    survey = kind_survey(org, site, thermographer, kind)
    judged_survey(survey, reviewer)
    text = flat(pdf_text(render(survey).pdf)).lower()
    for phrase in INTERNAL_PHRASES:
        assert phrase not in text, phrase
    assert "conditions check" in text


def test_it_refuses_to_issue_on_unreviewed_criteria_without_the_extra_confirmation(
    reviewer_client, electrical_survey, reviewer, django_capture_on_commit_callbacks
):
    """The confirmation page asks; without the box no version is made; with it, the PDF
    names who accepted the default table and when."""
    from reports.models import ReportVersion

    judged_survey(electrical_survey, reviewer)
    report, response = issue(reviewer_client, electrical_survey)
    assert response.status_code == 200
    assert "not reviewed" in response.content.decode()
    assert not ReportVersion.objects.filter(report=report).exists()
    with django_capture_on_commit_callbacks(execute=True):
        response = reviewer_client.post(
            f"/reports/{report.pk}/issue/",
            {"change_note": "", "confirm": "on", "accept_criteria": "on"},
        )
    assert response.status_code == 302
    version = ReportVersion.objects.get(report=report)
    assert version.unreviewed_criteria_accepted_at is not None
    text = flat(pdf_text(version.pdf.read()))
    day = version.unreviewed_criteria_accepted_at.strftime("%-d %B %Y")
    assert f"accepted for this report by {reviewer.display_name} on {day}" in text
    assert "not reviewed by" in text


def test_it_prints_the_firms_review_of_a_table_and_issues_without_the_extra_box(
    reviewer_client, electrical_survey, reviewer, django_capture_on_commit_callbacks
):
    """A reviewer records the review on the criteria page (audited); the report prints the
    basis, the reviewer's name and the date; the share page shows no internal note."""
    from reports.models import ReportVersion
    from reports.services import share_link_create
    from survey.models import AuditEvent, CriteriaTable
    from survey.services.criteria_tables import criteria_table_for

    judged_survey(electrical_survey, reviewer)
    default = criteria_table_for(organization=electrical_survey.organization, basis="similar")
    page = reviewer_client.get("/criteria/").content.decode()
    assert "Defaults, not yet reviewed by your firm" in page
    for phrase in INTERNAL_PHRASES:
        assert phrase not in page.lower()
    basis = "NETA MTS, our clause 7.3 reading of the similar-component bands"
    response = reviewer_client.post(
        f"/criteria/{default.pk}/review/",
        {f"t{default.pk}-basis": basis, f"t{default.pk}-confirm": "on"},
    )
    assert response.status_code == 302
    own = CriteriaTable.objects.get(organization=electrical_survey.organization, key=default.key)
    assert own.reviewed_by == reviewer and own.basis == basis
    assert AuditEvent.objects.filter(action="criteria_reviewed").exists()
    with django_capture_on_commit_callbacks(execute=True):
        report, response = issue(reviewer_client, electrical_survey)
    assert response.status_code == 302
    version = ReportVersion.objects.get(report=report)
    text = flat(pdf_text(version.pdf.read()))
    day = own.reviewed_at.strftime("%-d %B %Y")
    assert f"Basis: {basis}" in text
    assert (
        f"Reviewed for {electrical_survey.organization.name} by {reviewer.display_name} on {day}"
        in text
    )
    link = share_link_create(version=version, user=reviewer.user)
    share = reviewer_client.get(f"/reports/s/{link.token}/").content.decode()
    for phrase in INTERNAL_PHRASES:
        assert phrase not in share.lower()
    assert "Status: <strong>open</strong>" in share


# --- notes, counts and words ---------------------------------------------------------------


def summary_page(text: str) -> str:
    pages = text.split("\f")
    return next(page for page in pages if "What to do first" in page)


def act_now_count(summary: str) -> int:
    """The counter above "1 act now, open" (pdftotext -layout prints the counters' row, then
    their names' row, in the same column order)."""
    lines = [line for line in summary.splitlines() if line.strip()]
    names = next(i for i, line in enumerate(lines) if "1 act now, open" in line)
    counts = lines[names - 1].split()
    assert len(counts) == 4 and all(c.isdigit() for c in counts), lines[names - 1]
    return int(counts[0])


def test_it_prints_mark_names_and_notes_in_the_readings_and_the_finding(
    electrical_survey, reviewer
):
    """The stored short name and note of a mark print in its readings row and its finding."""
    judged_survey(electrical_survey, reviewer)
    text = flat(pdf_text(render(electrical_survey).pdf, layout=False))
    assert text.count("A (phase B lug)") >= 2
    assert text.count("Lug of the phase B incomer") >= 2


@pytest.mark.parametrize(
    ("status", "act_now", "words"),
    [
        ("open", 1, "Open"),
        ("repaired", 0, "Repaired, awaiting verification"),
        ("verified", 0, "Verified repaired"),
    ],
)
def test_it_counts_what_the_summary_says_and_prints_states_as_words(
    electrical_survey, reviewer, status, act_now, words
):
    """The act-now counter counts open findings only; "No open finding needs action" never
    stands beside a non-zero counter; states print in sentence case, never raw."""
    from survey.models import Finding

    judged_survey(electrical_survey, reviewer)
    Finding.objects.filter(survey=electrical_survey).update(status=status)
    text = pdf_text(render(electrical_survey).pdf)
    summary = flat(summary_page(text))
    assert act_now_count(summary_page(text)) == act_now
    says_none = "No open finding needs action" in summary
    assert says_none == (act_now == 0)
    if status != "open":
        assert f"1 finding {words.lower()}" in summary
    assert words in flat(text)
    for raw in ("OPEN", "REPAIRED", "VERIFIED"):
        assert raw not in text


# --- order and verification ----------------------------------------------------------------


def test_it_puts_the_summary_first_and_the_verification_last(electrical_survey, reviewer):
    """Cover, contents, then the summary; the verification closes the report."""
    judged_survey(electrical_survey, reviewer)
    rendered = render(electrical_survey)
    pages = pdf_text(rendered.pdf).split("\f")[: rendered.page_count]
    assert re.search(r"^Summary$", pages[2], re.MULTILINE), "the summary opens page 3"
    headings = ["Summary", "Survey conditions", "Method", "Thermograms", "References"]
    headings += ["Verification"]
    text = "\n".join(pages[2:])
    places = [re.search(rf"^{h}$", text, re.MULTILINE).start() for h in headings]
    assert places == sorted(places)
    assert "Verification" in pages[-1] and "Summary" not in pages[-1]


def test_it_prints_a_fingerprint_that_sha256sum_of_the_export_reproduces(
    reviewer_client, electrical_survey, reviewer
):
    """Follow the printed instruction: download the results file named in the report, run
    sha256sum on it (hashlib's SHA-256, FIPS 180-4, is the same digest) and compare."""
    import hashlib
    import subprocess

    judged_survey(electrical_survey, reviewer)
    text = flat(pdf_text(render(electrical_survey).pdf))
    match = re.search(
        r"Survey data fingerprint ([0-9a-f]{64}) The SHA-256 of the survey results file "
        r"(survey-\d+-results\.json).*?Run sha256sum (survey-\d+-results\.json) on the file",
        text,
    )
    assert match, "the fingerprint and the command that checks it"
    printed, name, command_name = match.groups()
    assert name == command_name == f"survey-{electrical_survey.pk}-results.json"
    response = reviewer_client.get(f"/reports/survey/{electrical_survey.pk}/results.json")
    assert response.status_code == 200
    assert name in response["Content-Disposition"]
    computed = (
        subprocess.run(["sha256sum", "-"], input=response.content, capture_output=True, check=True)
        .stdout.split()[0]
        .decode()
    )
    assert computed == printed == hashlib.sha256(response.content).hexdigest()


# --- archival form -------------------------------------------------------------------------


def test_it_issues_a_tagged_pdf_a_3b_with_the_results_file_attached(electrical_survey, reviewer):
    """Issued: XMP pdfaid part 3 conformance B (ISO 19005-3), /MarkInfo marked with a
    structure tree, pdfinfo "Tagged: yes", the results file embedded as an associated file
    whose SHA-256 is the printed fingerprint. A draft stays a plain PDF."""
    import hashlib
    import io
    import subprocess

    from pypdf import PdfReader

    judged_survey(electrical_survey, reviewer)
    issued = render(electrical_survey, draft=False).pdf
    reader = PdfReader(io.BytesIO(issued))
    root = reader.trailer["/Root"]
    xmp = root["/Metadata"].get_object().get_data().decode()
    assert 'pdfaid:part="3"' in xmp and 'pdfaid:conformance="B"' in xmp
    assert bool(root["/MarkInfo"]["/Marked"]) and "/StructTreeRoot" in root
    info = subprocess.run(["pdfinfo", "-"], input=issued, capture_output=True, check=True)
    assert re.search(r"^Tagged:\s+yes$", info.stdout.decode(), re.MULTILINE)
    name = f"survey-{electrical_survey.pk}-results.json"
    attached = reader.attachments[name][0]
    # WeasyPrint 70 lists the one file specification twice in /AF: the set is what counts.
    associated = {
        (spec.get_object()["/F"], spec.get_object()["/AFRelationship"]) for spec in root["/AF"]
    }
    assert associated == {(name, "/Data")}
    printed = re.search(r"Survey data fingerprint ([0-9a-f]{64})", flat(pdf_text(issued)))
    assert hashlib.sha256(attached).hexdigest() == printed.group(1)

    draft = PdfReader(io.BytesIO(render(electrical_survey, version=2).pdf))
    assert "/Metadata" not in draft.trailer["/Root"] or b"pdfaid" not in (
        draft.trailer["/Root"]["/Metadata"].get_object().get_data()
    )
    assert not draft.attachments


# --- typography and units ------------------------------------------------------------------


def test_it_prints_a_fahrenheit_report_without_kelvin_or_celsius(envelope_survey, reviewer):
    """A °F version prints °F and its differences in Δ°F, never K or °C."""
    from tests.reports.conftest import build_report_survey

    build_report_survey(envelope_survey, envelope_survey.thermographer, reviewer)
    report = Report.objects.create(
        organization=envelope_survey.organization, survey=envelope_survey, number="R-F"
    )
    version = ReportVersion.objects.create(
        report=report, version=1, is_draft=True, temperature_unit="F"
    )
    text = flat(pdf_text(render_pdf(version).pdf))
    assert "°F" in text and "Δ°F" in text
    assert "°C" not in text
    assert not re.search(r"\d K\b", text), re.search(r".{40}\d K\b.{10}", text)


def test_it_prints_true_minus_signs_one_date_format_and_keeps_units_with_numbers(
    electrical_survey, reviewer
):
    """Negative numbers with U+2212; dates as "2 March 2026"; a non-breaking space between a
    number and its unit (read back without pdftotext's layout)."""
    judged_survey(electrical_survey, reviewer)
    text = pdf_text(render(electrical_survey).pdf, layout=False)
    assert "−5.0" in text  # the cold pixel's apparent −5 °C
    assert not re.search(r"(?<![\w-])-\d", text), re.search(r".{30}(?<![\w-])-\d.{10}", text)
    assert "2 March 2026" in text
    assert not re.search(
        r"\b\d{4}-\d{2}-\d{2}\b|\b\d{1,2} (Jan|Feb|Mar|Apr|Jun|Jul|Aug|Sep|Oct|Nov|Dec) ", text
    )
    assert not re.search(r"\d\.0 % of rating", text)


def test_it_keeps_numbers_with_their_units_in_the_laid_out_html(electrical_survey, reviewer):
    """pdftotext prints a non-breaking space as a space: the HTML WeasyPrint lays out is read
    instead. Number and unit are joined by U+00A0, negative numbers carry U+2212."""
    from django.template.loader import render_to_string

    from reports import document
    from reports.pictures import Pictures

    judged_survey(electrical_survey, reviewer)
    report = Report.objects.create(
        organization=electrical_survey.organization, survey=electrical_survey, number="R-N"
    )
    version = ReportVersion.objects.create(report=report, version=1, is_draft=True)
    context = document.build_context(version, Pictures(), lambda *args: None)
    html = document.typeset(render_to_string("reports/pdf/report.html", context))
    assert "22.0\u00a0°C" in html and "60\u00a0%" in html and "\u22125.0" in html
    body = re.sub(r"<(style|script)\b.*?</\1>|<[^>]*>", " ", html, flags=re.S)
    assert not re.search(r"\d \u00b0[CF]|\d (?:%|K\b|mm\b)", body)


def test_it_repeats_the_thermogram_on_the_page_its_readings_run_on_to(electrical_survey):
    """A thermogram whose readings fill more than a page names itself in the next page's
    head; the page after it, where another section starts, does not."""
    thermogram = make_thermogram(
        electrical_survey, np.full((60, 80), 25.0, np.float32), title="Long busbar run"
    )
    for i in range(28):
        mark_add(
            thermogram=thermogram,
            kind="point",
            points=[[2 + 2 * i, 5 + i]],
            user=None,
            note=f"joint {i}",
        )
    rendered = render(electrical_survey)
    pages = pdf_text(rendered.pdf).split("\f")[: rendered.page_count]
    starts = [i for i, page in enumerate(pages) if re.search(r"^1\. Long busbar run", page, re.M)]
    assert len(starts) == 1
    following = pages[starts[0] + 1]
    assert "Thermogram 1. Long busbar run, continued" in following.splitlines()[0]
    assert "joint 27" in "".join(pages[starts[0] + 1 :])
    later = [page for page in pages[starts[0] + 2 :] if page.strip()]
    assert all("continued" not in page.splitlines()[0] for page in later)


def test_it_draws_the_summary_thumbnail_without_the_scale_bar(electrical_survey, reviewer):
    """The 34 mm thumbnail shows the thermogram only: its right edge is picture, not the
    white strip of an illegible scale."""
    import io

    from pypdf import PdfReader

    judged_survey(electrical_survey, reviewer)
    reader = PdfReader(io.BytesIO(render(electrical_survey).pdf))
    thumbs = [
        image.image
        for page in reader.pages
        for image in page.images
        if image.image.width == 228  # 34 mm at 170 dpi
    ]
    assert thumbs
    right = np.asarray(thumbs[0].convert("L"))[:, -12:]
    assert right.mean() < 200, "the right edge is the thermogram, not a white scale strip"
