"""PATCH /api/thermograms/<id>/: the workspace saves its palette and span to the thermogram."""

import io
import json
import math

import numpy as np
import pytest
from django.test import Client
from django.urls import reverse
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from PIL import Image

from survey.models import AuditEvent
from survey.services.processing import thermogram_process
from survey.thermal.palettes import render
from tests.factories import make_thermogram, synthetic_field
from tests.hypothesis_profiles import examples


def patch(client, thermogram, data, raw: str | None = None):
    body = raw if raw is not None else json.dumps(data)
    url = reverse("survey:api-thermogram", args=[thermogram.pk])
    return client.patch(url, body, content_type="application/json")


@pytest.fixture
def thermogram(envelope_survey):
    """A ready thermogram with its preview and thumbnail rendered by the pipeline."""
    made = make_thermogram(envelope_survey)
    made.status = made.Status.QUEUED
    made.save()
    assert thermogram_process(made.pk) == made.Status.READY
    made.refresh_from_db()
    return made


def picture(client, name: str, thermogram) -> np.ndarray:
    response = client.get(reverse(name, args=[thermogram.pk]))
    assert response.status_code == 200
    return np.asarray(Image.open(io.BytesIO(b"".join(response.streaming_content))).convert("RGB"))


@pytest.mark.parametrize("persona", ["owner", "reviewer", "thermographer"])
def test_it_saves_the_workspace_view_and_redraws_the_preview(client, request, persona, thermogram):
    """Palette and span are stored, the answer is the new metadata, the preview follows."""
    client.force_login(request.getfixturevalue(persona).user)
    response = patch(
        client, thermogram, {"palette": "perceptual", "span_low_c": 18.5, "span_high_c": 30}
    )
    assert response.status_code == 200, response.content
    display = response.json()["display"]
    assert (display["palette"], display["span_low_c"], display["span_high_c"]) == (
        "perceptual",
        18.5,
        30.0,
    )
    thermogram.refresh_from_db()
    assert (thermogram.palette, thermogram.span_low_c, thermogram.span_high_c) == (
        "perceptual",
        18.5,
        30.0,
    )
    # The stored preview is exactly the array drawn with the saved palette and span.
    expected = render(synthetic_field(), "perceptual", 18.5, 30.0)
    np.testing.assert_array_equal(
        picture(client, "survey:thermogram_preview", thermogram), expected
    )
    assert picture(client, "survey:thermogram_thumbnail", thermogram).shape[1] <= 320
    event = AuditEvent.objects.get(action="update", object_id=str(thermogram.pk))
    assert event.detail["fields"] == ["palette", "span_high_c", "span_low_c"]


def test_it_goes_back_to_an_automatic_span_with_null(thermographer_client, thermogram):
    """Null for both ends clears the saved span; the preview uses the automatic one again."""
    from survey.thermal import auto_span

    patch(thermographer_client, thermogram, {"span_low_c": 10, "span_high_c": 50})
    response = patch(thermographer_client, thermogram, {"span_low_c": None, "span_high_c": None})
    assert response.status_code == 200
    assert response.json()["display"]["span_low_c"] is None
    thermogram.refresh_from_db()
    assert thermogram.span_low_c is None and thermogram.span_high_c is None
    low, high = auto_span(synthetic_field())
    expected = render(synthetic_field(), thermogram.palette, low, high)
    shown = picture(thermographer_client, "survey:thermogram_preview", thermogram)
    np.testing.assert_array_equal(shown, expected)


def test_it_saves_the_palette_alone(thermographer_client, thermogram):
    """A palette without span keys leaves the span as it was."""
    patch(thermographer_client, thermogram, {"span_low_c": 12, "span_high_c": 40})
    response = patch(thermographer_client, thermogram, {"palette": "blue-white-red"})
    assert response.status_code == 200
    thermogram.refresh_from_db()
    assert (thermogram.palette, thermogram.span_low_c, thermogram.span_high_c) == (
        "blue-white-red",
        12.0,
        40.0,
    )


@pytest.mark.parametrize(
    ("data", "raw", "words"),
    [
        ({"palette": "rainbow-of-doom"}, None, "Choose one of"),
        ({"palette": 3}, None, "Choose one of"),
        ({"span_low_c": 30, "span_high_c": 20}, None, "warmer than the bottom"),
        ({"span_low_c": 25, "span_high_c": 25}, None, "warmer than the bottom"),
        ({"span_low_c": 20}, None, "both ends"),
        ({"span_low_c": 20, "span_high_c": None}, None, "both ends"),
        ({"span_low_c": "20", "span_high_c": 30}, None, "numbers of °C"),
        ({"span_low_c": True, "span_high_c": 30}, None, "numbers of °C"),
        (None, '{"span_low_c": NaN, "span_high_c": 30}', "between −100 and 2000"),
        (None, '{"span_low_c": 10, "span_high_c": Infinity}', "between −100 and 2000"),
        (None, '{"span_low_c": 10, "span_high_c": 1' + "0" * 400 + "}", "between −100"),
        ({"span_low_c": -500, "span_high_c": 30}, None, "between −100 and 2000"),
        ({"emissivity": 0.5}, None, "Only palette and span"),
        ({}, None, "Give the palette, the span, or both"),
        (None, "[1, 2]", "JSON object"),
        (None, "{not json", "not valid JSON"),
    ],
)
def test_it_refuses_bad_view_settings_and_changes_nothing(
    thermographer_client, thermogram, data, raw, words
):
    """Unknown palette, inverted, half, non-numeric or infinite spans: 400 with a message."""
    response = patch(thermographer_client, thermogram, data, raw=raw)
    assert response.status_code == 400
    body = response.json()
    text = body["error"] + " " + " ".join(body["fields"].values())
    assert words in text, body
    thermogram.refresh_from_db()
    assert (thermogram.palette, thermogram.span_low_c, thermogram.span_high_c) == (
        "black-red-yellow",
        None,
        None,
    )


def test_it_answers_404_to_another_organization_saving_a_view(outsider_client, thermogram):
    """Otto of another firm gets JSON 404 and the thermogram keeps its view."""
    response = patch(outsider_client, thermogram, {"palette": "perceptual"})
    assert response.status_code == 404 and response.json()["error"]
    thermogram.refresh_from_db()
    assert thermogram.palette == "black-red-yellow"


def test_it_answers_401_to_anonymous_and_403_without_the_csrf_token(
    client, thermographer, thermogram
):
    """No session: 401 JSON; a session without the page's CSRF token: refused."""
    assert patch(client, thermogram, {"palette": "perceptual"}).status_code == 401
    strict = Client(enforce_csrf_checks=True)
    strict.force_login(thermographer.user)
    assert patch(strict, thermogram, {"palette": "perceptual"}).status_code == 403
    thermogram.refresh_from_db()
    assert thermogram.palette == "black-red-yellow"


def test_it_offers_the_save_view_button_on_the_workspace(thermographer_client, thermogram):
    """The button is on the page (shown by the script for members who can edit)."""
    html = thermographer_client.get(reverse("survey:thermogram", args=[thermogram.pk]))
    assert 'id="ws-save-view"' in html.content.decode()


def test_it_saves_a_view_on_a_thermogram_still_processing(thermographer_client, envelope_survey):
    """Before the array exists the settings are stored; the preview is drawn when it is."""
    waiting = make_thermogram(envelope_survey, np.full((4, 4), 20.0))
    waiting.status = waiting.Status.QUEUED
    waiting.save()
    response = patch(thermographer_client, waiting, {"palette": "perceptual"})
    assert response.status_code == 200
    waiting.refresh_from_db()
    assert waiting.palette == "perceptual" and not waiting.preview


ANY_JSON = st.recursive(
    st.none()
    | st.booleans()
    | st.integers()
    | st.floats(allow_nan=True, allow_infinity=True)
    | st.text(max_size=12),
    lambda inner: st.lists(inner, max_size=3) | st.dictionaries(st.text(max_size=8), inner),
    max_leaves=8,
)
SPAN_END = st.none() | st.floats(allow_nan=True, allow_infinity=True) | st.integers() | ANY_JSON
VIEW_BODY = st.fixed_dictionaries(
    {},
    optional={
        "palette": st.sampled_from(["perceptual", "grey white-warm", "", "Perceptual"]) | ANY_JSON,
        "span_low_c": SPAN_END,
        "span_high_c": SPAN_END,
    },
)


@settings(
    max_examples=examples(80),
    deadline=None,
    suppress_health_check=[HealthCheck.function_scoped_fixture],
    database=None,
)
@given(body=VIEW_BODY | ANY_JSON)
def test_it_answers_every_view_body_with_200_or_a_clear_400(client, owner, envelope_survey, body):
    """Random JSON (NaN, Infinity, huge numbers): saved and sane, or a 400 with a reason."""
    small = envelope_survey.thermograms.first() or make_thermogram(
        envelope_survey, np.linspace(10, 30, 16, dtype=np.float32).reshape(4, 4)
    )
    client.force_login(owner.user)
    before = (small.palette, small.span_low_c, small.span_high_c)
    response = patch(client, small, body)
    assert response.status_code in (200, 400), (response.status_code, response.content[:300])
    small.refresh_from_db()
    after = (small.palette, small.span_low_c, small.span_high_c)
    if response.status_code == 400:
        assert response.json()["error"].strip() and after == before
        return
    low, high = small.span_low_c, small.span_high_c
    assert (low is None and high is None) or (math.isfinite(low) and low < high <= 2000)
