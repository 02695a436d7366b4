"""Pages of findings, assets, criteria tables and heat-loss estimates."""

import pytest
from django.urls import reverse

from survey.models import CriteriaTable, Finding, HeatLossEstimate
from survey.services.findings import finding_create, finding_suggest
from survey.services.marks import mark_add
from tests.factories import make_thermogram
from tests.survey.findings_data import (
    block_field,
    equipment_survey,
    hot_and_reference,
    make_asset,
)


@pytest.fixture
def setup(org, site, thermographer):
    asset = make_asset(org, site)
    survey = equipment_survey(org, site, thermographer, ambient_air_c=24.0, load_pct=100.0)
    thermogram, hot, reference = hot_and_reference(survey, 20.0, 30.0, asset=asset)
    suggestion = finding_suggest(survey=survey, basis="similar", marks=[hot])
    finding = finding_create(
        survey=survey,
        user=thermographer.user,
        category="connection",
        suggestion=suggestion,
        marks=[hot],
    )
    return {
        "survey": survey,
        "thermogram": thermogram,
        "hot": hot,
        "reference": reference,
        "finding": finding,
        "asset": asset,
        "site": site,
    }


def _get_urls(s):
    return [
        reverse("survey:finding_create", args=[s["thermogram"].pk]),
        reverse("survey:finding", args=[s["finding"].pk]),
        reverse("survey:finding_edit", args=[s["finding"].pk]),
        reverse("survey:survey_findings", args=[s["survey"].pk]),
        reverse("survey:heat_loss_create", args=[s["survey"].pk]),
        reverse("survey:site_findings", args=[s["site"].pk]),
        reverse("survey:asset", args=[s["asset"].pk]),
        reverse("survey:asset_trend", args=[s["asset"].pk]),
    ]


def test_it_answers_404_to_an_outsider_on_every_page(setup, outsider_client):
    """Another organization's findings, assets, sites and surveys do not exist for Otto."""
    for url in _get_urls(setup):
        assert outsider_client.get(url).status_code == 404, url
    for name in (
        "finding_status",
        "finding_verify",
        "finding_edit",
        "finding_verify_override",
        "finding_rejudge",
    ):
        url = reverse(f"survey:{name}", args=[setup["finding"].pk])
        assert outsider_client.post(url, {"status": "open"}).status_code == 404, url
    table = CriteriaTable.objects.filter(organization__isnull=True).first()
    url = reverse("survey:criteria_edit", args=[table.pk])
    assert outsider_client.get(url).status_code == 404


def test_it_shows_every_page_to_a_member(setup, thermographer_client):
    """Every page renders for a member of the organization."""
    for url in _get_urls(setup) + [reverse("survey:criteria_tables")]:
        response = thermographer_client.get(url)
        assert response.status_code == 200, url
    page = thermographer_client.get(reverse("survey:finding", args=[setup["finding"].pk]))
    assert b"qualified persons" in page.content  # cautions on a ranked finding
    assert b"Judged by" in page.content


def test_it_creates_a_finding_with_the_suggestion(setup, thermographer_client):
    """Posting marks and save records a level-3 finding judged by the like-component table."""
    url = reverse("survey:finding_create", args=[setup["thermogram"].pk])
    response = thermographer_client.post(
        url,
        {
            "marks": [setup["hot"].pk],
            "basis": "similar",
            "load_exponent": "2",
            "category": "component",
            "level": "",
            "save": "1",
        },
    )
    created = Finding.objects.exclude(pk=setup["finding"].pk).get()
    assert response.status_code == 302
    assert created.level == 3  # 10 K over a like component [memory, NETA MTS]
    assert created.criteria_table.key == "electrical-similar"


def test_it_shows_the_suggestion_and_why(setup, thermographer_client):
    """The suggest button shows the level and the reasons without saving."""
    url = reverse("survey:finding_create", args=[setup["thermogram"].pk])
    response = thermographer_client.post(
        url,
        {"marks": [setup["hot"].pk], "basis": "similar", "category": "component", "suggest": "1"},
    )
    assert response.status_code == 200
    assert "Rise over mark A, hottest to hottest: 10.0 K measured" in response.content.decode()
    assert Finding.objects.count() == 1


def test_it_asks_for_a_reason_for_another_level_and_saves_nothing(setup, thermographer_client):
    """An override without reason shows a message on the form; no finding is added."""
    url = reverse("survey:finding_create", args=[setup["thermogram"].pk])
    response = thermographer_client.post(
        url,
        {
            "marks": [setup["hot"].pk],
            "basis": "similar",
            "category": "component",
            "level": "1",
            "save": "1",
        },
    )
    assert response.status_code == 200
    assert b"Say why you chose another level" in response.content
    assert Finding.objects.count() == 1


def test_it_answers_bad_input_with_a_message(setup, thermographer_client):
    """Nonsense numbers and missing choices give form messages, never a 500."""
    url = reverse("survey:finding_create", args=[setup["thermogram"].pk])
    response = thermographer_client.post(
        url, {"basis": "nonsense", "load_exponent": "abc", "category": "", "save": "1"}
    )
    assert response.status_code == 200
    assert b"errorlist" in response.content


def test_it_answers_bad_heat_loss_input_with_a_message(envelope_survey, thermographer_client):
    """Nonsense numbers and no side chosen give form messages, nothing saved."""
    heat = reverse("survey:heat_loss_create", args=[envelope_survey.pk])
    response = thermographer_client.post(heat, {"label": "x", "t_air_c": "warm", "size_m": "-1"})
    assert response.status_code == 200
    assert b"errorlist" in response.content
    assert b"inside or an outside surface" in response.content
    assert not HeatLossEstimate.objects.exists()


def test_it_refuses_a_heat_loss_estimate_on_an_electrical_lug(setup, thermographer_client):
    """An electrical survey takes no heat-loss estimate: the page says why, nothing is saved."""
    url = reverse("survey:heat_loss_create", args=[setup["survey"].pk])
    response = thermographer_client.post(
        url,
        {
            "label": "Hot lug",
            "side": "outside",
            "mark": setup["hot"].pk,
            "t_air_c": "24",
            "geometry": "vertical",
            "size_m": "0.2",
            "area_m2": "0.01",
            "wind_m_s": "0",
            "hours_per_year": "8760",
            "price_per_kwh": "0.2",
            "efficiency_pct": "100",
        },
    )
    assert response.status_code == 200
    assert b"not a building heat loss" in response.content
    assert not HeatLossEstimate.objects.exists()
    findings_page = thermographer_client.get(
        reverse("survey:survey_findings", args=[setup["survey"].pk])
    )
    assert b"New heat-loss estimate" not in findings_page.content


def test_it_adds_a_heat_loss_estimate_from_a_mark(envelope_survey, thermographer_client):
    """A mark's corrected mean and emissivity are used when left empty; an inside cold
    patch loses heat to the outside, counted positive."""
    thermogram = make_thermogram(envelope_survey, block_field(19.0, 12.0), emissivity=1.0)
    mark = mark_add(thermogram=thermogram, kind="rectangle", points=[[10, 10], [20, 20]], user=None)
    url = reverse("survey:heat_loss_create", args=[envelope_survey.pk])
    response = thermographer_client.post(
        url,
        {
            "label": "Cold corner",
            "side": "inside",
            "mark": mark.pk,
            "t_air_c": "20",
            "geometry": "vertical",
            "size_m": "2.5",
            "area_m2": "0.5",
            "wind_m_s": "0",
            "hours_per_year": "5000",
            "price_per_kwh": "0.2",
            "efficiency_pct": "100",
        },
    )
    assert response.status_code == 302
    estimate = HeatLossEstimate.objects.get()
    assert estimate.inputs["t_surface_c"] == pytest.approx(12.0, abs=0.01)
    assert estimate.inputs["emissivity"] == 1.0
    assert estimate.results["watts"] > 0 and estimate.results["cost_per_year"] > 0


def test_it_no_longer_offers_verified_in_the_status_list(setup, thermographer_client):
    """Repaired is set; verified from the drop-down is refused and changes nothing; verifying
    without a later measurement needs a reason, which is kept and shown."""
    url = reverse("survey:finding_status", args=[setup["finding"].pk])
    thermographer_client.post(url, {"status": "repaired"})
    setup["finding"].refresh_from_db()
    assert setup["finding"].status == "repaired"
    page = thermographer_client.get(reverse("survey:finding", args=[setup["finding"].pk]))
    assert b'<option value="verified"' not in page.content
    response = thermographer_client.post(url, {"status": "verified"}, follow=True)
    assert b"verified needs a later measurement" in response.content
    setup["finding"].refresh_from_db()
    assert setup["finding"].status == "repaired"
    override = reverse("survey:finding_verify_override", args=[setup["finding"].pk])
    response = thermographer_client.post(override, {"reason": "  "}, follow=True)
    setup["finding"].refresh_from_db()
    assert setup["finding"].status == "repaired"
    response = thermographer_client.post(
        override, {"reason": "Lug replaced, work order 4411."}, follow=True
    )
    setup["finding"].refresh_from_db()
    assert setup["finding"].status == "verified"
    assert setup["finding"].verification_reason == "Lug replaced, work order 4411."
    assert b"Verified without a later measurement: Lug replaced, work order 4411." in (
        response.content
    )


def test_it_lists_open_findings_of_a_site_by_severity(setup, thermographer_client, thermographer):
    """Level 1 comes before level 3 on the site page."""
    survey = setup["survey"]
    _, hot, _ = hot_and_reference(survey, 20.0, 40.0)
    urgent = finding_create(
        survey=survey,
        user=thermographer.user,
        category="connection",
        suggestion=finding_suggest(survey=survey, basis="similar", marks=[hot]),
    )
    assert urgent.level == 1  # 20 K over a like component [memory, NETA MTS]
    page = thermographer_client.get(reverse("survey:site_findings", args=[setup["site"].pk]))
    findings = list(page.context["findings"])
    assert findings == [urgent, setup["finding"]]


def test_it_serves_the_trend_chart_as_svg(setup, thermographer_client):
    """The asset's trend chart is an SVG image."""
    response = thermographer_client.get(reverse("survey:asset_trend", args=[setup["asset"].pk]))
    assert response["Content-Type"] == "image/svg+xml"
    assert response.content.startswith(b"<svg")


def test_it_lets_only_admins_copy_and_edit_tables(setup, thermographer_client, client, owner):
    """A thermographer may not copy; the admin copies, and bad JSON gives a message."""
    url = reverse("survey:criteria_copy")
    assert thermographer_client.post(url).status_code == 403
    client.force_login(owner.user)
    client.post(url)
    table = CriteriaTable.objects.get(organization=owner.organization, key="electrical-similar")
    edit = reverse("survey:criteria_edit", args=[table.pk])
    response = client.post(edit, {"rows": "[{bad json", "source": ""})
    assert response.status_code == 200 and b"Not valid JSON" in response.content
    response = client.post(
        edit, {"rows": '[{"label": "x", "up_to_c": 3, "level": 4, "action": "w"}]'}
    )
    assert response.status_code == 200 and b"last row" in response.content


def test_it_suggests_at_once_when_marks_come_ticked(setup, thermographer_client):
    """A link from the workspace with ?marks= shows the suggestion on arrival."""
    url = reverse("survey:finding_create", args=[setup["thermogram"].pk])
    response = thermographer_client.get(f"{url}?marks={setup['hot'].pk}&marks=junk")
    assert response.status_code == 200
    assert response.context["suggestion"]["level"] == 3  # 10 K, like component [memory]


def test_it_explains_a_review_without_a_basis_and_records_nothing(reviewer_client, org):
    """A blank basis or an unticked box: a message on the severity tables page, no copy, no
    review; a thermographer may not review; another firm's table is not found."""
    from survey.services.criteria_tables import criteria_table_for

    default = criteria_table_for(organization=org, basis="envelope")
    url = reverse("survey:criteria_review", args=[default.pk])
    prefix = f"t{default.pk}"
    response = reviewer_client.post(
        url, {f"{prefix}-basis": " ", f"{prefix}-confirm": "on"}, follow=True
    )
    assert "Name the standard and clause the bands rest on." in response.content.decode()
    response = reviewer_client.post(url, {f"{prefix}-basis": "ISO 13788"}, follow=True)
    assert "Tick the box to record your review." in response.content.decode()
    assert not CriteriaTable.objects.filter(organization=org).exists()


def test_it_refuses_a_review_by_a_thermographer(thermographer_client, org):
    from survey.services.criteria_tables import criteria_table_for

    default = criteria_table_for(organization=org, basis="envelope")
    data = {f"t{default.pk}-basis": "ISO 13788", f"t{default.pk}-confirm": "on"}
    url = reverse("survey:criteria_review", args=[default.pk])
    assert thermographer_client.post(url, data).status_code == 403
    assert not CriteriaTable.objects.filter(organization=org).exists()


def test_it_answers_404_to_a_review_of_another_firms_table(reviewer_client, org, other_org):
    from survey.services.criteria_tables import criteria_table_copy_defaults

    theirs = criteria_table_copy_defaults(organization=other_org)[0]
    data = {f"t{theirs.pk}-basis": "ISO 13788", f"t{theirs.pk}-confirm": "on"}
    response = reviewer_client.post(reverse("survey:criteria_review", args=[theirs.pk]), data)
    assert response.status_code == 404
    theirs.refresh_from_db()
    assert not theirs.is_reviewed
