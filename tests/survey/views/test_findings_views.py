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
    assert response.status_code == 200 and b"unknown keys: up_to_c" in response.content
    response = client.post(
        edit, {"rows": '[{"lower": 1, "upper": 3.1, "level": 4, "action": "Watch."}]'}
    )
    assert response.status_code == 302
    table.refresh_from_db()
    assert table.rows == [{"label": "", "lower": 1.0, "upper": 3.1, "level": 4, "action": "Watch."}]


def test_it_suggests_at_once_when_marks_come_ticked(setup, thermographer_client):
    """A link from the workspace with ?marks= shows the suggestion on arrival."""
    url = reverse("survey:finding_create", args=[setup["thermogram"].pk])
    response = thermographer_client.get(f"{url}?marks={setup['hot'].pk}&marks=junk")
    assert response.status_code == 200
    assert response.context["suggestion"]["level"] == 3  # 10 K, like component [memory]


# --- a finding from marks chosen in the workspace: the picture of those marks ------------------


def _marks_png(client, thermogram, *ids):
    url = reverse("survey:thermogram_marks_picture", args=[thermogram.pk])
    return client.get(url, {"marks": [str(i) for i in ids]})


def test_it_draws_only_the_chosen_marks_of_this_thermogram(setup, thermographer_client, org):
    """Marks of another thermogram and ids that are not numbers are left out, not refused."""
    import io

    from PIL import Image

    other = make_thermogram(setup["survey"], block_field(20.0, 25.0))
    foreign = mark_add(thermogram=other, kind="point", points=[[5, 5]], user=None)
    only_hot = _marks_png(thermographer_client, setup["thermogram"], setup["hot"].pk)
    assert only_hot.status_code == 200 and only_hot["Content-Type"] == "image/png"
    assert Image.open(io.BytesIO(only_hot.content)).size[0] == 480
    mixed = _marks_png(
        thermographer_client, setup["thermogram"], setup["hot"].pk, foreign.pk, "B; drop"
    )
    assert mixed.content == only_hot.content
    assert _marks_png(thermographer_client, setup["thermogram"]).content != only_hot.content


def test_it_hides_the_marks_picture_from_an_outsider(setup, outsider_client):
    response = _marks_png(outsider_client, setup["thermogram"], setup["hot"].pk)
    assert response.status_code == 404


def test_it_shows_the_chosen_marks_beside_the_new_finding(setup, thermographer_client):
    """From the workspace (?marks=…) and after Suggest, the picture shows the marks ticked."""
    hot, reference = setup["hot"], setup["reference"]
    url = reverse("survey:finding_create", args=[setup["thermogram"].pk])
    page = thermographer_client.get(url, {"marks": [hot.pk]}).content.decode()
    assert f"marks.png?marks={hot.pk}" in page and "with mark B" in page
    assert "Suggested:" in page  # judged at once, by the survey kind's first basis
    posted = thermographer_client.post(
        url,
        {"marks": [hot.pk, reference.pk], "basis": "similar", "category": "component"}
        | {"suggest": "1"},
    ).content.decode()
    assert f"marks.png?marks={reference.pk}&amp;marks={hot.pk}" in posted
    assert "with marks A, B" in posted


def test_it_offers_a_new_finding_to_editors_only(setup, thermographer_client, org):
    from django.test import Client

    from survey.models import Member
    from tests.conftest import login, make_person

    url = reverse("survey:api-thermogram", args=[setup["thermogram"].pk])
    urls = thermographer_client.get(url).json()["urls"]
    assert urls["new_finding"] == reverse("survey:finding_create", args=[setup["thermogram"].pk])
    viewer_client = Client()
    login(viewer_client, make_person(org, "vic", Member.Role.VIEWER, "Vic Viewer"))
    assert viewer_client.get(url).json()["urls"]["new_finding"] is None


def test_it_takes_a_heat_loss_estimate_in_the_members_units(
    envelope_survey, thermographer, thermographer_client
):
    """A member on °F, mph and ft sees and enters those; the estimate is stored in °C, m/s,
    m and m² and shown back in °F, mph, ft and ft²."""
    thermographer.temperature_unit = "F"
    thermographer.speed_unit = "mph"
    thermographer.length_unit = "ft"
    thermographer.save()
    url = reverse("survey:heat_loss_create", args=[envelope_survey.pk])
    page = thermographer_client.get(url).content.decode()
    for label in ("Wind (mph)", "Air temperature (°F)", "Size (ft)", "Area (ft²)"):
        assert label in page, label
    response = thermographer_client.post(
        url,
        {
            "label": "Cold lintel",
            "side": "outside",
            "t_surface_c": "50",
            "emissivity": "0.9",
            "t_air_c": "32",
            "geometry": "vertical",
            "size_m": "10",
            "area_m2": "100",
            "wind_m_s": "10",
            "hours_per_year": "5000",
            "price_per_kwh": "0.2",
            "efficiency_pct": "100",
        },
    )
    assert response.status_code == 302
    inputs = HeatLossEstimate.objects.get().inputs
    # 1 mph = 0.44704 m/s and 1 ft = 0.3048 m exactly (international yard and pound, 1959);
    # °C = (°F − 32) / 1.8.
    assert inputs["wind_m_s"] == pytest.approx(4.4704, abs=1e-9)
    assert inputs["size_m"] == pytest.approx(3.048, abs=1e-9)
    assert inputs["area_m2"] == pytest.approx(9.290304, abs=1e-9)
    assert inputs["t_air_c"] == pytest.approx(0.0, abs=1e-9)
    assert inputs["t_surface_c"] == pytest.approx(10.0, abs=1e-9)
    listed = thermographer_client.get(
        reverse("survey:survey_findings", args=[envelope_survey.pk])
    ).content.decode()
    for shown in ("wind 10.0 mph", "air 32.0 °F", "vertical 10 ft", "100 ft²", "at 50.0 °F"):
        assert shown in listed, shown


def test_it_refuses_a_wind_above_the_limit_in_mph(
    envelope_survey, thermographer, thermographer_client
):
    """40 m/s is 89.5 mph: 100 mph is refused with the limit in mph, nothing saved."""
    thermographer.speed_unit = "mph"
    thermographer.save()
    url = reverse("survey:heat_loss_create", args=[envelope_survey.pk])
    response = thermographer_client.post(url, {"wind_m_s": "100", "side": "outside"})
    assert "Enter at most 89.5 mph." in response.content.decode()
    assert not HeatLossEstimate.objects.exists()


def test_it_shows_the_findings_marks_on_its_page(setup, thermographer_client):
    """The finding's page draws its thermogram with the finding's marks."""
    finding, hot = setup["finding"], setup["hot"]
    finding.thermogram = setup["thermogram"]
    finding.save()
    page = thermographer_client.get(reverse("survey:finding", args=[finding.pk])).content.decode()
    assert f"marks.png?marks={hot.pk}" in page and "with mark B" in page


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


def test_it_takes_the_design_temperatures_of_a_finding_in_the_members_unit(
    envelope_survey, thermographer, thermographer_client
):
    """A member on °F types the design temperatures in °F; the judgement gets °C. Before,
    the fields were labelled °C whatever the member chose, and 69.8 was refused as too warm."""
    thermographer.temperature_unit = "F"
    thermographer.save()
    thermogram = make_thermogram(envelope_survey, block_field(19.0, 12.0), emissivity=1.0)
    mark = mark_add(thermogram=thermogram, kind="point", points=[[30, 30]], user=None)
    url = reverse("survey:finding_create", args=[thermogram.pk])
    page = thermographer_client.get(url).content.decode()
    assert "Design indoor temperature (°F)" in page
    response = thermographer_client.post(
        url,
        {
            "marks": [mark.pk],
            "basis": "envelope",
            # °C = (°F − 32) / 1.8: 69.8 °F is 21 °C and 14 °F is −10 °C.
            "design_inside_c": "69.8",
            "design_inside_rh_pct": "50",
            "design_outside_c": "14",
            "category": "thermal_bridge",
            "level": "4",
            "override_reason": "Kept under watch for the design winter.",
            "save": "1",
        },
    )
    assert response.status_code == 302, response.context["form"].errors
    inputs = Finding.objects.get(thermogram=thermogram).suggestion["inputs"]
    assert inputs["design_inside_c"] == pytest.approx(21.0, abs=1e-9)
    assert inputs["design_outside_c"] == pytest.approx(-10.0, abs=1e-9)
