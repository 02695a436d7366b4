"""The fields reports print that are entered on the thermogram settings and survey pages:
how ε and the reflected temperature were determined, the load per phase and how it was
measured, the survey's deviations from the procedure."""

import pytest
from django.urls import reverse

from tests.factories import make_thermogram

SETTINGS = {"emissivity": "0.95", "reflected_c": "24", "palette": "perceptual"}


def test_it_saves_the_methods_and_the_loads_of_a_thermogram(owner_client, electrical_survey):
    thermogram = make_thermogram(electrical_survey)
    url = reverse("survey:thermogram_settings", args=[thermogram.pk])
    page = owner_client.get(url).content.decode()
    assert "How the emissivity was determined" in page and "Load, phase L2 (A)" in page
    data = SETTINGS | {
        "emissivity_method": "tape",
        "reflected_method": "reflector",
        "load_l1_a": "246",
        "load_l2_a": "251.5",
        "load_l3_a": "",
        "load_method": "clamp",
    }
    assert owner_client.post(url, data).status_code == 302
    thermogram.refresh_from_db()
    assert (thermogram.emissivity_method, thermogram.reflected_method) == ("tape", "reflector")
    assert (thermogram.load_l1_a, thermogram.load_l2_a, thermogram.load_l3_a) == (
        246.0,
        251.5,
        None,
    )
    assert thermogram.load_method == "clamp"


@pytest.mark.parametrize(
    "bad",
    [{"load_l1_a": "-3"}, {"load_l2_a": "lots"}, {"emissivity_method": "guess"}],
)
def test_it_refuses_a_bad_method_or_load_and_keeps_the_thermogram(
    owner_client, electrical_survey, bad
):
    thermogram = make_thermogram(electrical_survey)
    url = reverse("survey:thermogram_settings", args=[thermogram.pk])
    response = owner_client.post(url, SETTINGS | bad)
    assert response.status_code == 200
    assert "errorlist" in response.content.decode()
    thermogram.refresh_from_db()
    assert thermogram.load_l1_a is None and thermogram.emissivity_method == ""


def test_it_answers_404_to_an_outsider_setting_a_load(outsider_client, electrical_survey):
    thermogram = make_thermogram(electrical_survey)
    url = reverse("survey:thermogram_settings", args=[thermogram.pk])
    assert outsider_client.post(url, SETTINGS | {"load_l1_a": "10"}).status_code == 404
    thermogram.refresh_from_db()
    assert thermogram.load_l1_a is None


def test_the_survey_page_shows_the_deviations_entered_on_the_survey_form(
    owner_client, envelope_survey
):
    edit = owner_client.get(reverse("survey:survey_edit", args=[envelope_survey.pk]))
    assert "Deviations from the procedure" in edit.content.decode()
    envelope_survey.deviations = "Gable imaged from 12 m."
    envelope_survey.save()
    page = owner_client.get(reverse("survey:survey", args=[envelope_survey.pk])).content.decode()
    assert "Gable imaged from 12 m." in page


def test_the_preferences_page_shows_a_members_own_qualification(
    thermographer_client, thermographer
):
    import datetime

    thermographer.qualification_scheme = "Invented Thermography Board"
    thermographer.qualification_level = "2"
    thermographer.qualification_expires = datetime.date(2027, 3, 31)
    thermographer.save()
    page = thermographer_client.get(reverse("survey:preferences")).content.decode()
    assert "Invented Thermography Board, level 2, valid until 31 March 2027" in page
    assert "An admin of your firm keeps it" in page
