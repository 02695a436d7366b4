"""Pages of clients, sites and assets, the survey list, deletes and restores, preferences."""

import datetime
import json

import pytest
from django.core.files.uploadedfile import SimpleUploadedFile
from django.urls import reverse

from survey.models import Asset, Client, Finding, Site, Survey, Thermogram
from survey.services import surveys
from tests.factories import make_thermogram


def body(response) -> str:
    return response.content.decode()


@pytest.fixture
def asset(site):
    return surveys.asset_create(
        site=site, user=None, name="Panel P-1", tag="P-1", rating=160.0, rating_unit="A"
    )


def test_it_answers_404_to_an_outsider_on_every_register_page(outsider_client, site, asset):
    """Another firm's client, site and asset pages do not exist for the outsider."""
    pages = [
        reverse("survey:client", args=[site.client_id]),
        reverse("survey:client_edit", args=[site.client_id]),
        reverse("survey:client_delete", args=[site.client_id]),
        reverse("survey:site", args=[site.pk]),
        reverse("survey:site_visit", args=[site.pk]),
        reverse("survey:assets_export", args=[site.pk]),
        reverse("survey:assets_import", args=[site.pk]),
        reverse("survey:asset_edit", args=[asset.pk]),
        reverse("survey:asset_delete", args=[asset.pk]),
    ]
    for url in pages:
        assert outsider_client.get(url).status_code == 404, url
    assert outsider_client.post(reverse("survey:asset_retire", args=[asset.pk])).status_code == 404
    restore = reverse("survey:item_restore", args=["asset", asset.pk])
    assert outsider_client.post(restore).status_code == 404
    assert "Panel P-1" not in body(outsider_client.get(reverse("survey:assets_due")))


def test_clients_sites_and_assets_link_to_their_pages_with_follow_ons(
    owner_client, site, asset, envelope_survey
):
    """Client → "add a site for this client"; site → "start a survey here" and a new visit."""
    clients = body(owner_client.get(reverse("survey:clients")))
    client_url = reverse("survey:client", args=[site.client_id])
    assert client_url in clients
    client_page = body(owner_client.get(client_url))
    assert f"{reverse('survey:sites')}?client={site.client_id}" in client_page
    assert "Add a site for this client" in client_page
    sites_form = owner_client.get(reverse("survey:sites"), {"client": site.client_id})
    assert sites_form.context["form"]["client"].value() == site.client_id
    site_page = body(owner_client.get(reverse("survey:site", args=[site.pk])))
    assert f"{reverse('survey:survey_create')}?site={site.pk}" in site_page
    assert reverse("survey:site_visit", args=[site.pk]) in site_page
    assert reverse("survey:asset", args=[asset.pk]) in site_page
    form = owner_client.get(reverse("survey:survey_create"), {"site": site.pk}).context["form"]
    assert form["site"].value() == site.pk
    home = body(owner_client.get(reverse("survey:home")))
    assert client_url in home and reverse("survey:site", args=[site.pk]) in home


def test_it_registers_edits_and_retires_an_asset(owner_client, site):
    response = owner_client.post(
        reverse("survey:asset_create", args=[site.pk]),
        {
            "name": "Switchboard SB-2",
            "kind": "switchgear",
            "tag": "SB-2",
            "rating": "400",
            "rating_unit": "A",
            "criticality": "high",
            "inspection_interval_months": "6",
        },
    )
    assert response.status_code == 302
    asset = Asset.objects.get(tag="SB-2")
    assert (asset.kind, asset.rating, asset.inspection_interval_months) == ("switchgear", 400, 6)
    owner_client.post(
        reverse("survey:asset_edit", args=[asset.pk]),
        {
            "name": "Switchboard SB-2",
            "kind": "switchgear",
            "criticality": "low",
            "inspection_interval_months": "12",
        },
    )
    asset.refresh_from_db()
    assert (asset.criticality, asset.rating) == ("low", None)
    owner_client.post(reverse("survey:asset_retire", args=[asset.pk]))
    asset.refresh_from_db()
    assert asset.is_retired
    assert "Retired" in body(owner_client.get(reverse("survey:site", args=[site.pk])))


def test_it_refuses_an_asset_with_a_rating_but_no_unit(owner_client, site):
    response = owner_client.post(
        reverse("survey:asset_create", args=[site.pk]),
        {"name": "Panel P-9", "kind": "panel", "rating": "160", "criticality": "medium"},
    )
    # The page comes back with the fields as typed and the reason beside the unit.
    assert response.status_code == 200
    assert "A or kW" in body(response) and 'value="Panel P-9"' in body(response)
    assert not Asset.objects.exists()


def test_the_import_page_lists_the_bad_rows_and_saves_nothing(owner_client, site):
    data = b"name,kind,rating,rating_unit\nGood,panel,160,A\nBad,toaster,,\nWorse,panel,hot,A\n"
    response = owner_client.post(
        reverse("survey:assets_import", args=[site.pk]),
        {"file": SimpleUploadedFile("assets.csv", data, content_type="text/csv")},
    )
    assert response.status_code == 200
    errors = [(e.row, e.column) for e in response.context["errors"]]
    assert errors == [(3, "kind"), (4, "rating")]
    assert "nothing was saved" in body(response)
    assert not Asset.objects.exists()
    good = b"name,kind\nGood,panel\n"
    response = owner_client.post(
        reverse("survey:assets_import", args=[site.pk]),
        {"file": SimpleUploadedFile("assets.csv", good)},
    )
    assert response.status_code == 302 and Asset.objects.get().name == "Good"
    export = owner_client.get(reverse("survey:assets_export", args=[site.pk]))
    assert export["Content-Disposition"].startswith("attachment")
    assert "Good" in body(export)


def test_a_new_visit_is_filled_from_the_last_one(owner_client, owner, site, electrical_survey):
    electrical_survey.instrument = "Camera DEMO-9"
    electrical_survey.save()
    surveys.asset_create(site=site, user=None, name="Due panel")
    url = reverse("survey:site_visit", args=[site.pk])
    page = owner_client.get(url)
    form = page.context["form"]
    assert form["kind"].value() == "electrical"
    assert form["instrument"].value() == "Camera DEMO-9"
    assert form["ambient_air_c"].value() == 24.0
    assert form["date"].value() == datetime.date.today()
    assert "Due panel" in body(page)
    data = {
        name: ("" if value is None else value)
        for name, value in form.initial.items()
        if name in form.fields
    }
    data |= {"date": "2026-06-01", "thermographer": owner.pk, "site": site.pk}
    response = owner_client.post(url, data)
    assert response.status_code == 302, response.context["form"].errors
    survey = Survey.objects.exclude(pk=electrical_survey.pk).get()
    assert survey.instrument == "Camera DEMO-9" and survey.conditions.load_pct == 65.0
    assert [s.asset.name for s in survey.round_stops.all()] == ["Due panel"]


def test_the_survey_list_filters_searches_sorts_and_pages(owner_client, org, site):
    other_site = Site.objects.create(organization=org, client=site.client, name="Depot")
    for day in range(1, 61):
        Survey.objects.create(
            organization=org,
            site=site if day % 2 else other_site,
            kind="roof" if day % 3 else "electrical",
            date=datetime.date(2025, 1, 1) + datetime.timedelta(days=day),
            title=f"Visit {day}",
        )
    first = owner_client.get(reverse("survey:home"))
    dates = [s.date for s in first.context["surveys"]]
    assert len(dates) == 50 and dates == sorted(dates, reverse=True)
    second = owner_client.get(reverse("survey:home"), {"page": 2})
    assert len(second.context["surveys"]) == 10
    roof_at_depot = owner_client.get(
        reverse("survey:home"), {"kind": "roof", "site": other_site.pk}
    )
    assert {(s.kind, s.site_id) for s in roof_at_depot.context["surveys"]} == {
        ("roof", other_site.pk)
    }
    found = owner_client.get(reverse("survey:home"), {"q": "visit 17"})
    assert [s.title for s in found.context["surveys"]] == ["Visit 17"]
    oldest = owner_client.get(reverse("survey:home"), {"order": "oldest"})
    assert oldest.context["surveys"][0].title == "Visit 1"
    # The link to the next page keeps the filters.
    assert "?order=oldest&amp;page=2" in body(oldest)


def test_the_survey_list_filters_by_open_severity_and_report_state(
    owner_client, org, site, envelope_survey, electrical_survey
):
    from reports.models import Report, ReportVersion

    Finding.objects.create(
        organization=org, survey=electrical_survey, category="connection", level=1
    )
    Finding.objects.create(
        organization=org, survey=envelope_survey, category="other", level=3, status="repaired"
    )
    act_now = owner_client.get(reverse("survey:home"), {"severity": "1"})
    assert list(act_now.context["surveys"]) == [electrical_survey]
    none_open = owner_client.get(reverse("survey:home"), {"severity": "none"})
    assert list(none_open.context["surveys"]) == [envelope_survey]
    report = Report.objects.create(organization=org, survey=envelope_survey, number="R2026-7")
    ReportVersion.objects.create(report=report, version=1, is_draft=False, status="issued")
    issued = owner_client.get(reverse("survey:home"), {"report": "issued"})
    assert list(issued.context["surveys"]) == [envelope_survey]
    assert "R2026-7 v1 issued" in body(issued)
    without = owner_client.get(reverse("survey:home"), {"report": "none"})
    assert list(without.context["surveys"]) == [electrical_survey]


def test_a_one_letter_search_explains_itself(owner_client, envelope_survey):
    response = owner_client.get(reverse("survey:home"), {"q": "x"})
    assert response.status_code == 200
    assert "at least two characters" in body(response)


def test_it_deletes_a_thermogram_after_confirmation_and_restores_it(
    thermographer_client, envelope_survey
):
    thermogram = make_thermogram(envelope_survey)
    url = reverse("survey:thermogram_delete", args=[thermogram.pk])
    assert "Tick the box" in body(thermographer_client.post(url))
    assert envelope_survey.thermograms.count() == 1
    thermographer_client.post(url, {"confirm": "on"})
    assert envelope_survey.thermograms.count() == 0
    workspace = reverse("survey:thermogram", args=[thermogram.pk])
    assert thermographer_client.get(workspace).status_code == 404
    deleted = body(thermographer_client.get(reverse("survey:deleted_surveys")))
    assert str(thermogram) in deleted
    restore = reverse("survey:item_restore", args=["thermogram", thermogram.pk])
    response = thermographer_client.post(restore)
    assert response.status_code == 302
    assert thermographer_client.get(workspace).status_code == 200
    assert Thermogram.objects.filter(pk=thermogram.pk).exists()


def test_it_deletes_a_finding_and_a_client_and_audits_both(
    owner_client, org, site, envelope_survey
):
    from survey.models import AuditEvent

    finding = Finding.objects.create(organization=org, survey=envelope_survey, category="other")
    owner_client.post(reverse("survey:finding_delete", args=[finding.pk]), {"confirm": "on"})
    assert owner_client.get(reverse("survey:finding", args=[finding.pk])).status_code == 404
    # The client has a live survey: refused with the reason, nothing deleted.
    response = owner_client.post(
        reverse("survey:client_delete", args=[site.client_id]), {"confirm": "on"}, follow=True
    )
    assert "delete or move them first" in body(response)
    assert Client.objects.filter(pk=site.client_id).exists()
    lonely = Client.objects.create(organization=org, name="Typo Client Ltd")
    owner_client.post(reverse("survey:client_delete", args=[lonely.pk]), {"confirm": "on"})
    assert not Client.objects.filter(pk=lonely.pk).exists()
    actions = set(AuditEvent.objects.values_list("action", "object_type"))
    assert {("delete", "Finding"), ("delete", "Client")} <= actions


def test_status_json_carries_what_the_batch_page_shows(thermographer_client, envelope_survey):
    ready = make_thermogram(envelope_survey)
    queued = make_thermogram(envelope_survey)
    Thermogram.objects.filter(pk=queued.pk).update(status=Thermogram.Status.QUEUED)
    data = json.loads(
        thermographer_client.get(reverse("survey:survey_status", args=[envelope_survey.pk])).content
    )
    assert (data["done"], data["total"], data["failed"]) == (1, 2, 0)
    row = next(r for r in data["thermograms"] if r["id"] == ready.pk)
    assert row["workspace"] == reverse("survey:thermogram", args=[ready.pk])
    assert "°C" in row["summary"] and "0 marks" in row["summary"]


def test_the_organization_lets_admins_allow_self_review(client, owner, thermographer):
    client.force_login(thermographer.user)
    assert client.get(reverse("survey:organization")).status_code == 403
    client.force_login(owner.user)
    client.post(reverse("survey:organization"), {"allow_self_review": "on"})
    owner.organization.refresh_from_db()
    assert owner.organization.allow_self_review is True


def test_wind_and_distance_in_the_members_units(owner_client, owner, site, envelope_survey):
    """mph and ft entered and shown; m/s and m stored (1 mph = 0.44704 m/s, 1 ft = 0.3048 m)."""
    owner_client.post(
        reverse("survey:preferences"),
        {"temperature_unit": "F", "speed_unit": "mph", "length_unit": "ft"},
    )
    owner.refresh_from_db()
    assert (owner.speed_unit, owner.length_unit) == ("mph", "ft")
    page = body(owner_client.get(reverse("survey:survey", args=[envelope_survey.pk])))
    # 2.0 m/s = 4.47 mph (docs/references.md § Units and inspection intervals).
    assert "4.5 mph" in page
    # The conditions check in °F: −5 °C outside, 20 °C inside: 25 K = 45.0 Δ°F; 10 K = 18 Δ°F.
    assert "45.0 Δ°F" in page and "at least 18.0 Δ°F" in page
    thermogram = make_thermogram(envelope_survey)
    url = reverse("survey:thermogram_settings", args=[thermogram.pk])
    form = owner_client.get(url).context["form"]
    assert form.fields["distance_m"].label == "Distance (ft)"
    owner_client.post(
        url, {"emissivity": "0.9", "reflected_c": "68", "palette": "perceptual", "distance_m": "10"}
    )
    thermogram.refresh_from_db()
    assert thermogram.distance_m == pytest.approx(3.048)
    assert thermogram.reflected_c == pytest.approx(20.0)
