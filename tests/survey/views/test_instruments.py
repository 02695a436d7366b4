"""Instrument pages: editors keep the cameras; a survey takes its geometry from one."""

import datetime
import math

import pytest
from django.urls import reverse

from survey.models import Instrument, Survey


@pytest.fixture
def instrument(org):
    return Instrument.objects.create(
        organization=org,
        model_name="Invented LW-320",
        serial_number="0001",
        detector_width_px=320,
        detector_height_px=240,
        lens_hfov_deg=24.0,
        accuracy_c=1.5,
        accuracy_pct=1.5,
    )


def test_it_hides_an_instrument_from_another_organization(outsider_client, instrument):
    """An outsider gets 404 for another organization's camera, its edit and delete pages."""
    for name in ("instrument_edit", "instrument_delete"):
        url = reverse(f"survey:{name}", args=[instrument.pk])
        assert outsider_client.get(url).status_code == 404
        assert outsider_client.post(url).status_code == 404
    assert Instrument.objects.filter(pk=instrument.pk).exists()
    listing = outsider_client.get(reverse("survey:instruments"))
    assert b"Invented LW-320" not in listing.content


def test_it_lets_only_editors_keep_instruments(client, viewer, instrument):
    """A viewer gets 403 on every instrument page and changes nothing."""
    client.force_login(viewer.user)
    assert client.get(reverse("survey:instruments")).status_code == 403
    assert client.post(reverse("survey:instruments"), {"model_name": "x"}).status_code == 403
    url = reverse("survey:instrument_delete", args=[instrument.pk])
    assert client.post(url).status_code == 403
    assert Instrument.objects.count() == 1


def test_it_adds_an_instrument_and_shows_its_pixel(thermographer_client):
    """24° over 320 pixels: one pixel sees 2·tan(12°)/320 = 1.3285 mrad (pinhole lens,
    docs/references.md § Geometry and wet areas)."""
    data = {
        "model_name": "Invented LW-320",
        "serial_number": "0002",
        "detector_width_px": "320",
        "detector_height_px": "240",
        "lens_hfov_deg": "24",
        "netd_mk": "50",
        "accuracy_c": "2",
        "accuracy_pct": "2",
        "calibration_date": "2026-01-10",
        "calibration_due": "2027-01-10",
        "certificate_reference": "CAL-2026-014",
    }
    response = thermographer_client.post(reverse("survey:instruments"), data, follow=True)
    assert response.status_code == 200
    camera = Instrument.objects.get()
    assert camera.calibration_due == datetime.date(2027, 1, 10)
    expected = 2 * math.tan(math.radians(12.0)) / 320 * 1000
    assert f"{expected:.3f} mrad".encode() in response.content


def test_it_answers_bad_instrument_input_with_messages(thermographer_client, instrument):
    """A field of view of 200°, a due date before the calibration: messages, nothing saved."""
    url = reverse("survey:instrument_edit", args=[instrument.pk])
    data = {
        "model_name": "Invented LW-320",
        "detector_width_px": "320",
        "detector_height_px": "240",
        "lens_hfov_deg": "200",
        "accuracy_c": "2",
        "accuracy_pct": "2",
    }
    response = thermographer_client.post(url, data)
    assert response.status_code == 200 and b"errorlist" in response.content
    data |= {
        "lens_hfov_deg": "24",
        "calibration_date": "2026-05-01",
        "calibration_due": "2026-01-01",
    }
    response = thermographer_client.post(url, data)
    assert b"cannot be before the calibration" in response.content
    instrument.refresh_from_db()
    assert instrument.calibration_date is None


def test_it_keeps_an_instrument_a_survey_uses(thermographer_client, instrument, envelope_survey):
    """Deleting a camera a survey names is refused with the survey named; an unused one goes."""
    envelope_survey.camera = instrument
    envelope_survey.save()
    url = reverse("survey:instrument_delete", args=[instrument.pk])
    response = thermographer_client.post(url, follow=True)
    assert b"cannot be deleted while surveys use it" in response.content
    assert Instrument.objects.filter(pk=instrument.pk).exists()
    envelope_survey.camera = None
    envelope_survey.save()
    thermographer_client.post(url)
    assert not Instrument.objects.exists()


def test_it_gives_a_survey_its_cameras_geometry_and_accuracy(
    thermographer_client, instrument, envelope_survey
):
    """Choosing the camera on the survey form: accuracy from the camera, the pixel from its
    lens and detector, and a start time; the survey page shows them."""
    url = reverse("survey:survey_edit", args=[envelope_survey.pk])
    form = thermographer_client.get(url).context["form"]
    data = {
        name: value
        for name, value in form.initial.items()
        if value is not None and not isinstance(value, (list, dict))
    }
    data |= {
        "site": envelope_survey.site_id,
        "camera": instrument.pk,
        "start_time": "21:30",
        "camera_accuracy_c": "5",
        "camera_accuracy_pct": "5",
    }
    response = thermographer_client.post(url, data)
    assert response.status_code == 302, response.content
    survey = Survey.objects.get(pk=envelope_survey.pk)
    assert survey.camera == instrument
    assert (survey.camera_accuracy_c, survey.camera_accuracy_pct) == (1.5, 1.5)
    assert survey.start_time == datetime.time(21, 30)
    page = thermographer_client.get(reverse("survey:survey", args=[survey.pk]))
    # 2·tan(12°)/320 = 1.3285 mrad (pinhole lens, docs/references.md § Geometry and wet areas).
    expected = f"{2 * math.tan(math.radians(12.0)) / 320 * 1000:.3f} mrad"
    assert expected.encode() in page.content and b"pinhole lens" in page.content
    assert b"from 21:30" in page.content
