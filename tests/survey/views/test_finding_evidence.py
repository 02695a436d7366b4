"""What a practitioner reads on the finding and asset pages: readable earlier findings that
can be corrected, category labels, mark names, measured and full-load rises with their n."""

import pytest
from django.urls import reverse

from survey.models import Finding
from survey.services.findings import finding_create, finding_suggest
from survey.services.marks import mark_update
from tests.factories import make_thermogram
from tests.survey.findings_data import (
    block_field,
    equipment_survey,
    hot_and_reference,
    make_asset,
)


@pytest.fixture
def asset(org, site):
    return make_asset(org, site)


def record(survey, asset, rise_c=10.0, **suggest):
    _, hot, _ = hot_and_reference(survey, 20.0, 20.0 + rise_c, asset=asset)
    suggestion = finding_suggest(survey=survey, basis="similar", marks=[hot], **suggest)
    return finding_create(
        survey=survey,
        user=survey.thermographer.user,
        category="connection",
        suggestion=suggestion,
        marks=[hot],
    )


@pytest.fixture
def two_visits(org, site, thermographer, asset):
    first = equipment_survey(
        org, site, thermographer, date=(2025, 3, 1), ambient_air_c=24.0, load_pct=65.0
    )
    earlier = record(first, asset, load_exponent=1.5)
    second = equipment_survey(
        org, site, thermographer, date=(2026, 3, 2), ambient_air_c=24.0, load_pct=65.0
    )
    later = record(second, asset, rise_c=0.8)
    return earlier, later


def test_it_hides_the_evidence_pages_from_another_organization(two_visits, outsider_client):
    """Finding, edit and asset pages answer 404 to an outsider."""
    earlier, later = two_visits
    for url in (
        reverse("survey:finding", args=[later.pk]),
        reverse("survey:finding_edit", args=[later.pk]),
        reverse("survey:asset", args=[later.asset_id]),
    ):
        assert outsider_client.get(url).status_code == 404


def test_it_labels_the_earlier_finding_readably_and_lets_it_be_corrected(
    two_visits, thermographer_client
):
    """The choice reads "2025-03-01 · Panel DB-3 · mark B · Connection · 1 act now",
    not a raw code; it can be set after saving and shows on the finding."""
    earlier, later = two_visits
    new_page = thermographer_client.get(
        reverse("survey:finding_create", args=[later.thermogram_id])
    )
    # 19.1 K at full load is above 15 K: level 1 [memory, NETA MTS].
    label = f"2025-03-01 · Panel DB-3 · mark B · Connection · 1 act now (#{earlier.pk})"
    assert label in new_page.content.decode()
    assert "connection (" not in new_page.content.decode()
    edit = reverse("survey:finding_edit", args=[later.pk])
    page = thermographer_client.get(edit)
    assert label in page.content.decode()
    form = page.context["form"]
    data = {k: v for k, v in form.initial.items() if v is not None}
    data["previous"] = earlier.pk
    response = thermographer_client.post(edit, data, follow=True)
    later.refresh_from_db()
    assert later.previous == earlier
    assert label in response.content.decode()


def test_it_refuses_a_later_finding_as_the_earlier_one(two_visits, thermographer_client):
    """The earlier visit cannot re-measure the later one: the choice is not offered."""
    earlier, later = two_visits
    edit = reverse("survey:finding_edit", args=[earlier.pk])
    form = thermographer_client.get(edit).context["form"]
    assert later not in form.fields["previous"].queryset
    data = {k: v for k, v in form.initial.items() if v is not None} | {"previous": later.pk}
    response = thermographer_client.post(edit, data)
    assert response.status_code == 200 and b"errorlist" in response.content
    earlier.refresh_from_db()
    assert earlier.previous is None


def test_it_shows_category_labels_in_the_heat_loss_form(envelope_survey, thermographer_client):
    """The finding choice of the heat-loss form reads the category's label."""
    thermogram = make_thermogram(envelope_survey, block_field(19.0, 12.0), emissivity=1.0)
    finding = Finding.objects.create(
        organization=envelope_survey.organization,
        survey=envelope_survey,
        thermogram=thermogram,
        category="missing_insulation",
        level=3,
    )
    page = thermographer_client.get(reverse("survey:heat_loss_create", args=[envelope_survey.pk]))
    html = page.content.decode()
    assert f"Missing or displaced insulation · 3 plan repair (#{finding.pk})" in html
    assert ">missing_insulation (" not in html


def test_it_labels_each_rise_measured_or_full_load_with_its_n(two_visits, thermographer_client):
    """The asset's visits print the measured rise and the full-load rise with the finding's
    n = 1.5: 10 K·(100/65)^1.5 = 19.1 K (by hand, docs/references.md § Electrical and
    mechanical ranking)."""
    earlier, _ = two_visits
    page = thermographer_client.get(reverse("survey:asset", args=[earlier.asset_id]))
    html = page.content.decode()
    assert "10.0 K measured" in html
    assert "19.1 K full-load" in html and "(n = 1.5)" in html
    finding_page = thermographer_client.get(reverse("survey:finding", args=[earlier.pk])).content
    assert "Rise over mark A, hottest to hottest: 10.0 K measured, 19.1 K at full load" in (
        finding_page.decode()
    )
    assert "(n = 1.5)" in finding_page.decode()


def test_it_shows_a_marks_name_on_the_finding(two_visits, thermographer_client):
    """A mark named L2 reads "B (L2)" on its finding."""
    earlier, _ = two_visits
    hot = earlier.marks.get()
    mark_update(mark=hot, user=None, name="L2")
    page = thermographer_client.get(reverse("survey:finding", args=[earlier.pk]))
    assert "B (L2)" in page.content.decode()
