"""The judgements in the mark JSON: rises with their method and level, humidity figures
over ice below 0 °C, the ± intervals and decisions, fRsi; as the page and the PDF show them.

Emissivity 1 on the invented fields: a corrected temperature is the apparent one.
"""

import datetime

import numpy as np
import psychrolib
import pytest
from django.urls import reverse
from scipy.optimize import brentq

from survey.models import Conditions, Survey
from survey.services.marks import mark_add
from tests.factories import make_thermogram
from tests.survey.findings_data import equipment_survey, hot_and_reference

psychrolib.SetUnitSystem(psychrolib.SI)


def building(org, site, thermographer, **conditions) -> Survey:
    survey = Survey.objects.create(
        organization=org,
        site=site,
        kind=Survey.Kind.ENVELOPE,
        date=datetime.date(2026, 1, 14),
        thermographer=thermographer,
    )
    Conditions.objects.create(survey=survey, **conditions)
    return survey


def surface(survey, surface_c: float):
    """A uniform surface at surface_c and a mark on it."""
    field = np.full((30, 40), surface_c, dtype=np.float32)
    thermogram = make_thermogram(survey, field, emissivity=1.0)
    mark = mark_add(thermogram=thermogram, kind="rectangle", points=[[5, 5], [20, 20]], user=None)
    return thermogram, mark


def mark_json(client, mark) -> dict:
    response = client.get(reverse("survey:api-mark", args=[mark.pk]))
    assert response.status_code == 200, response.content
    return response.json()


def test_it_hides_a_marks_judgement_from_another_organization(
    outsider_client, org, site, thermographer
):
    """Another organization's mark answers 404, with none of its numbers."""
    survey = building(org, site, thermographer, indoor_air_c=20.0, indoor_rh_pct=50.0)
    _, mark = surface(survey, 12.0)
    response = outsider_client.get(reverse("survey:api-mark", args=[mark.pk]))
    assert response.status_code == 404
    assert b"surface_rh_pct" not in response.content


def test_it_gives_the_rise_its_method_full_load_and_level(
    thermographer_client, org, site, thermographer
):
    """5 K over a like component at 65 % load: 5·(100/65)² = 11.8 K at full load (by hand,
    n = 2), level 3 from the row (3, 15] K of the like-component table [memory, NETA MTS]."""
    survey = equipment_survey(org, site, thermographer, ambient_air_c=24.0, load_pct=65.0)
    thermogram, hot, reference = hot_and_reference(survey, 25.0, 30.0)
    data = mark_json(thermographer_client, hot)
    assert data["delta_t_c"] == 5.0
    assert data["delta_t_method"] == "hottest_to_hottest"
    assert data["full_load_delta_t_c"] == 11.8 and data["load_exponent"] == 2.0
    assert data["suggested_level"] == 3
    assert data["suggestion"]["row"] == "over 3 to 15 °C"
    assert data["suggestion"]["interval"] == "over 3 to 15 K"
    assert data["suggestion"]["row_index"] == 1  # the second band of the table
    listed = thermographer_client.get(reverse("survey:api-thermogram", args=[thermogram.pk]))
    same = next(m for m in listed.json()["marks"] if m["id"] == hot.pk)
    assert same["suggested_level"] == 3 and same["full_load_delta_t_c"] == 11.8


def test_it_names_marks_and_takes_a_rise_method_in_the_json(
    thermographer_client, org, site, thermographer
):
    """PATCH name and rise method; a bad method or a long name answers 400 with a message."""
    survey = equipment_survey(org, site, thermographer, ambient_air_c=24.0, load_pct=100.0)
    _, hot, _ = hot_and_reference(survey, 25.0, 30.0)
    url = reverse("survey:api-mark", args=[hot.pk])
    body = {"name": " L1 ", "rise_method": "hottest_to_mean"}
    response = thermographer_client.patch(url, body, content_type="application/json")
    assert response.status_code == 200
    data = response.json()
    assert (data["name"], data["title"], data["rise_method"]) == ("L1", "B (L1)", "hottest_to_mean")
    assert data["delta_t_method"] == "hottest_to_mean"
    for bad in ({"rise_method": "coldest"}, {"name": "x" * 21}, {"name": 3}):
        response = thermographer_client.patch(url, bad, content_type="application/json")
        assert response.status_code == 400 and response.json()["error"]


def test_it_flags_and_margins_a_surface_below_the_frost_point_alike(
    thermographer_client, org, site, thermographer
):
    """Air 0 °C at 80 % and a surface at −2.86 °C: surface RH ≥ 100 % over ice, and the margin
    −0.18 K below the frost point (not +0.18 K above the dew point); the overlay's 100 %
    threshold is that frost point."""
    survey = building(
        org, site, thermographer, indoor_air_c=0.0, indoor_rh_pct=80.0, outdoor_air_c=-10.0
    )
    thermogram, mark = surface(survey, -2.86)
    # Frost point from psychrolib's Hyland–Wexler saturation over ice, solved with scipy
    # (docs/references.md § Psychrometrics; psychrolib takes ice at 0 °C, 0.01 % off water).
    vapour = 0.8 * psychrolib.GetSatVapPres(0.0)
    frost = brentq(lambda t: psychrolib.GetSatVapPres(t) - vapour, -20.0, -0.02)
    data = mark_json(thermographer_client, mark)
    assert data["dew_point_name"] == "frost point"
    assert data["dew_point_c"] == pytest.approx(frost, abs=0.01)
    assert data["condensation"] is True
    assert data["surface_rh_pct"] >= 100.0
    assert data["condensation_margin_k"] == pytest.approx(-2.86 - frost, abs=0.02)
    assert data["condensation_margin_k"] < 0
    overlay = thermographer_client.get(
        reverse("survey:api-thermogram-overlays", args=[thermogram.pk])
    ).json()["condensation"]
    assert overlay["surface_c"]["rh100"] == pytest.approx(frost, abs=0.01)
    assert overlay["rh100_name"] == "frost point"


def test_it_shows_condensation_uncapped_with_its_decision(
    thermographer_client, org, site, thermographer
):
    """22 °C / 55 % air at a 10 °C surface: 118 % [computed, psychrolib; docs/references.md
    § Psychrometrics], sent uncapped with condensation true and the margin below the dew
    point."""
    survey = building(org, site, thermographer, indoor_air_c=22.0, indoor_rh_pct=55.0)
    _, mark = surface(survey, 10.0)
    data = mark_json(thermographer_client, mark)
    expected = 55.0 * psychrolib.GetSatVapPres(22.0) / psychrolib.GetSatVapPres(10.0)
    assert data["surface_rh_pct"] == pytest.approx(expected, abs=0.1)
    assert data["condensation"] is True
    assert data["condensation_margin_k"] < 0 and data["dew_point_name"] == "dew point"
    u = data["surface_u_c"]
    assert u == pytest.approx(data["margin_u_k"], abs=0.05)  # only the surface is uncertain
    low = 55.0 * psychrolib.GetSatVapPres(22.0) / psychrolib.GetSatVapPres(10.0 + u)
    assert data["surface_rh_low_pct"] == pytest.approx(low, abs=0.3)
    decision = "exceeded" if low > 100 else "cannot tell within the camera's accuracy"
    assert data["decisions"]["condensation_decision"] == decision
    assert "k = 2" in data["uncertainty_note"]


def test_it_says_cannot_tell_when_the_interval_straddles_the_limit(
    thermographer_client, org, site, thermographer
):
    """Air 20 °C at 53.56 % and a surface at 10.6 °C: 98 %, but with its ± the surface RH
    reaches past 100 %, so the condensation limit cannot be told (ILAC-G8 guarded acceptance;
    docs/references.md § Decision rules and uncertainty)."""
    survey = building(org, site, thermographer, indoor_air_c=20.0, indoor_rh_pct=53.56)
    _, mark = surface(survey, 10.6)
    data = mark_json(thermographer_client, mark)
    u = data["surface_u_c"]
    vapour = 0.5356 * psychrolib.GetSatVapPres(20.0)
    low = 100 * vapour / psychrolib.GetSatVapPres(10.6 + u)  # psychrolib at the ends
    high = 100 * vapour / psychrolib.GetSatVapPres(10.6 - u)
    assert data["surface_rh_pct"] == pytest.approx(98.0, abs=0.2)
    assert (data["surface_rh_low_pct"], data["surface_rh_high_pct"]) == (
        pytest.approx(low, abs=0.3),
        pytest.approx(high, abs=0.3),
    )
    assert low < 100 < high
    assert data["condensation"] is False
    assert data["condensation_decision"] == "cannot tell"
    assert data["decisions"]["condensation_decision"] == "cannot tell within the camera's accuracy"
    assert data["mould_decision"] == ("exceeded" if low > 80 else "cannot tell")


def test_it_gives_the_temperature_factor_for_recorded_and_design_conditions(
    thermographer_client, org, site, thermographer
):
    """fRsi of a 12 °C surface with 20 °C inside and −5 °C outside is 0.68 (by hand);
    fRsi,min 0.705 recorded and 0.808 for 21 °C / 55 % with −10 °C (docs/references.md
    § Building envelope, computed)."""
    survey = building(
        org,
        site,
        thermographer,
        indoor_air_c=20.0,
        indoor_rh_pct=50.0,
        outdoor_air_c=-5.0,
        design_indoor_c=21.0,
        design_indoor_rh_pct=55.0,
        design_outdoor_c=-10.0,
    )
    _, mark = surface(survey, 12.0)
    data = mark_json(thermographer_client, mark)
    assert data["temperature_factor"] == pytest.approx(0.68, abs=1e-3)
    assert data["critical_factor"] == pytest.approx(0.705, abs=2e-3)
    assert data["design_critical_factor"] == pytest.approx(0.808, abs=2e-3)
    assert data["factor_margin"] == pytest.approx(0.68 - 0.705, abs=3e-3)
    u = data["surface_u_c"]
    # fRsi ± U/(θi − θe) (by hand): the interval decides against fRsi,min.
    assert data["temperature_factor_low"] == pytest.approx(0.68 - u / 25.0, abs=2e-3)
    expected = "cannot tell" if 0.68 + u / 25.0 >= 0.705 else "exceeded"
    assert data["factor_decision"] == expected
    assert data["design_factor_decision"] in {"exceeded", "cannot tell"}
