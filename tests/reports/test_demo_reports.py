"""Every demo survey's report, rendered once and read back with pdftotext and pypdf: no
internal notes reach the client, the chapters come in order, and each roof, envelope and
electrical item the report promises is printed (issue 14)."""

import io
import re
from dataclasses import dataclass

import pytest
from django.core.management import call_command
from django.db import transaction
from django.test import override_settings
from pypdf import PdfReader

from tests.reports.helpers import flat, pdf_text

# The marker makes pytest-django set up the test database even when only this module runs;
# the tests themselves read what the module's fixture rendered once.
pytestmark = pytest.mark.django_db

# Words that belong to our notes and criteria provenance, never to a client's page.
FORBIDDEN = [
    "from memory",
    "check against your copy",
    "secondary sources",
    "[source",
    "not confirmed against",
    "TODO",
    "placeholder",
    "lorem",
]
# Until the criteria tables carry their provenance outside the report (issue 14, helper
# h14a), the envelope criteria text still prints these two. Strict: when that lands the
# marks must go.
PENDING: set[str] = set()

CHAPTERS = ["Summary", "Survey conditions", "Method", "Thermograms", "Limitations and cautions"]


@dataclass
class Rendered:
    text: str  # the whole PDF, flattened, in reading order
    outline: list[str]  # the chapters' bookmarks (h2), in order
    chapters: dict[str, str]  # each chapter's pages (from its first to the next's first)


def read_back(pdf: bytes) -> Rendered:
    # Reading order (no layout): table cells stay whole when flattened.
    pages = pdf_text(pdf, layout=False).split("\f")
    reader = PdfReader(io.BytesIO(pdf))
    # The outline nests the chapters (h2) under the cover's title (h1).
    tops = [
        item
        for entry in reader.outline
        if isinstance(entry, list)
        for item in entry
        if not isinstance(item, list)
    ]
    starts = [reader.get_destination_page_number(item) for item in tops]
    chapters = {}
    for index, item in enumerate(tops):
        last = starts[index + 1] if index + 1 < len(starts) else len(pages) - 1
        chapters[item.title] = flat(" ".join(pages[starts[index] : last + 1]))
    return Rendered(flat(" ".join(pages)), [item.title for item in tops], chapters)


@pytest.fixture(scope="module")
def demo_reports(django_db_setup, django_db_blocker, tmp_path_factory) -> dict[str, Rendered]:
    """{survey title: the report read back} for every demo survey, each rendered once in
    the units of its thermographer; the demo is rolled back afterwards."""
    from reports.document import render_pdf
    from reports.models import ReportVersion
    from reports.services import report_create
    from survey.models import Survey

    media = tmp_path_factory.mktemp("demo-media")
    reports = {}
    with (
        django_db_blocker.unblock(),
        override_settings(
            MEDIA_ROOT=str(media),
            PASSWORD_HASHERS=["django.contrib.auth.hashers.MD5PasswordHasher"],
        ),
        transaction.atomic(),
    ):
        call_command("demo_data", stdout=io.StringIO())
        for survey in Survey.objects.select_related("thermographer__user"):
            member = survey.thermographer
            report = report_create(survey=survey, user=member.user)
            version = ReportVersion.objects.create(
                report=report,
                version=1,
                requested_by=member.user,
                temperature_unit=member.temperature_unit,
                speed_unit=member.speed_unit,
                length_unit=member.length_unit,
            )
            reports[survey.title] = read_back(render_pdf(version).pdf)
        transaction.set_rollback(True)
    return reports


def test_it_renders_every_demo_survey(demo_reports):
    """Three electrical visits, an envelope survey and a roof survey."""
    assert len(demo_reports) == 5
    assert sum("Main distribution panel" in title for title in demo_reports) == 3


@pytest.mark.parametrize(
    "phrase",
    [
        pytest.param(p, marks=pytest.mark.xfail(strict=True, reason="criteria provenance"))
        if p in PENDING
        else p
        for p in FORBIDDEN
    ],
)
def test_it_keeps_internal_notes_out_of_every_report(demo_reports, phrase):
    """None of our internal phrases is printed (case-insensitive)."""
    printed = {t for t, r in demo_reports.items() if phrase.lower() in r.text.lower()}
    assert printed == set(), f"{phrase!r} printed in {sorted(printed)}"


def test_it_prints_the_chapters_in_order(demo_reports):
    """The chapters' bookmarks come in the reader's order (others may sit between)."""
    for title, rendered in demo_reports.items():
        shown = [name for name in rendered.outline if name in CHAPTERS]
        assert shown == CHAPTERS, title
    roof = demo_reports["Flat roof moisture survey"].outline
    assert roof.index("Method") < roof.index("Roof plan and wet areas") < roof.index("Thermograms")


def test_it_prints_the_roof_plan_wet_areas_and_checks(demo_reports):
    rendered = demo_reports["Flat roof moisture survey"]
    roof = rendered.chapters["Roof plan and wet areas"]
    assert "Survey time 21:30 to 23:10, 22 April 2026" in roof
    assert "Membrane Two-layer bitumen felt" in roof
    assert "Insulation Mineral wool boards, 120 mm" in roof
    assert "Rain in the 24 h before none (0 mm)" in roof
    assert "Roof plan: white discs are the thermograms by number" in roof
    assert "not recorded" not in rendered.chapters["Survey conditions"]  # a complete night
    areas = re.findall(r"W(\d) Roof B, [^.]*? (\d) (\d+\.\d\d) (\d+\.\d\d)", roof)
    assert [a[0] for a in areas] == ["1", "2"]
    total = re.search(r"Total of 2 wet areas \D*?(\d+\.\d\d) (\d+\.\d\d)", roof)
    values = [float(a[2]) for a in areas]
    spreads = [float(a[3]) for a in areas]
    # Sum, and the root-sum-square of independent ± (JCGM 100, 5.1.2), by hand from the rows.
    assert float(total[1]) == pytest.approx(sum(values), abs=0.011)
    assert float(total[2]) == pytest.approx((spreads[0] ** 2 + spreads[1] ** 2) ** 0.5, abs=0.011)
    assert "Core and moisture-meter checks" in roof
    assert "W1 24 April 2026 Core sample Wet insulation saturated" in roof
    # Each finding names its wet area, its m² ± and its check.
    assert "Wet area W1 on the roof plan. Core sample on 24 April 2026: wet" in rendered.text
    assert re.search(r"Wet area \d+\.\d\d ± \d+\.\d\d m²", rendered.text)


def test_it_prints_the_envelope_extras(demo_reports):
    rendered = demo_reports["Winter envelope survey, Block B"]
    conditions = rendered.chapters["Survey conditions"]
    assert "Survey time 17:50 to 19:40" in conditions
    assert "Building and construction Four-storey block of flats" in conditions
    assert re.search(r"Pressure difference [−-]50 Pa inside–outside \(blower door\)", conditions)
    outdoor = re.search(r"Outdoor air, 24 h before lowest ([−-]?\d+\.\d) °C, highest", conditions)
    # The demo's outdoor log is −4 + 2.5·cos(…) (invented): its 24 h minimum is −6.5 °C.
    assert outdoor is not None and outdoor[1].replace("−", "-") == "-6.5"
    text = rendered.text
    assert "Photo" in text
    assert "≥ 100 % RH (condensation)" in text
    assert "mould risk" in text
    assert "cannot tell within the camera's accuracy" in text
    # Surface RH interval against 100 % (condensation) and 80 % (mould), ISO 13788, with the
    # guarded rule (ILAC-G8:2019): wholly above → exceeded, wholly below → not exceeded,
    # straddling → cannot tell. The printed ends are whole percent, so a limit they touch
    # is not judged here.
    rows = re.findall(
        r"(\d+)–(\d+) %; [^;]+; condensation ([a-z ']+?), mould ([a-z ']+?)(?= [−-]?\d| —)", text
    )
    assert len(rows) >= 6
    for low, high, condensation, mould in rows:
        for limit, decision in ((100, condensation), (80, mould)):
            if int(low) > limit:
                assert decision == "exceeded", (low, high, limit)
            elif int(high) < limit:
                assert decision == "not exceeded", (low, high, limit)
            elif int(low) < limit < int(high):
                assert decision == "cannot tell within the camera's accuracy", (low, high)
    # fRsi (fRsi,min) margin m, decision: m = fRsi − fRsi,min (ISO 13788, 3.1.7 and 4.2).
    factors = re.findall(r"(\d\.\d\d) \((\d\.\d\d)\) margin ([−-]?\d\.\d\d), ([a-z ']+)", text)
    assert len(factors) >= 4
    for factor, critical, margin, _ in factors:
        margin = float(margin.replace("−", "-"))
        assert margin == pytest.approx(float(factor) - float(critical), abs=0.011)
    decisions = {decision.strip() for *_, decision in factors}
    assert {"exceeded", "not exceeded"} <= decisions
    assert any(d.startswith("cannot tell within the camera's accuracy") for d in decisions)
    heat = rendered.chapters["Heat loss"]
    assert "kWh / year" in heat and "EUR" in heat


def test_it_prints_the_three_panel_visits(demo_reports):
    first = demo_reports["Main distribution panel survey"].text
    assert "Verified by the later measurement of 2026-03-23" in first
    assert "Mixer drive motor M-14" in first  # equipment inspected with no finding
    assert "246 A of 400 A" in first and "251 A" in first and "240 A" in first
    after = demo_reports["Main distribution panel, after the repair"].text
    assert "MDP-1 incoming supply lugs" in after
    routine = demo_reports["Main distribution panel, routine survey"].text
    assert "°F" in routine and "Corrected °C" not in routine
