"""The workspace page and its JSON endpoints, through the Django test client."""

import json

import numpy as np
import pytest
from django.core.files.base import ContentFile
from django.test import Client
from django.urls import reverse

from survey.models import AuditEvent, Mark
from survey.services import marks as mark_services
from tests.factories import make_thermogram, synthetic_field


def post_json(client, url, data, method="post"):
    if method == "get":
        return client.get(url)
    return getattr(client, method)(url, json.dumps(data), content_type="application/json")


@pytest.fixture
def thermogram(envelope_survey):
    return make_thermogram(envelope_survey)


@pytest.fixture
def marks_url(thermogram):
    return reverse("survey:api-marks", args=[thermogram.pk])


def add_mark(client, thermogram, **data):
    data = {"kind": "rectangle", "points": [[10, 10], [20, 15]]} | data
    response = post_json(client, reverse("survey:api-marks", args=[thermogram.pk]), data)
    assert response.status_code == 201, response.content
    return response.json()


# --- page -------------------------------------------------------------------------------------


def test_it_shows_the_workspace_page(thermographer_client, thermogram):
    """The page loads the workspace's module script and styles, without inline script or style."""
    response = thermographer_client.get(reverse("survey:thermogram", args=[thermogram.pk]))
    assert response.status_code == 200
    html = response.content.decode()
    assert 'type="module"' in html and "js/workspace/main.js" in html
    assert "css/workspace.css" in html
    assert "<script>" not in html and "style=" not in html
    assert reverse("survey:api-thermogram", args=[thermogram.pk]) in html
    assert "csrftoken" in response.cookies


def test_it_hides_the_workspace_page_from_another_organization(outsider_client, thermogram):
    """An outsider gets 404 for the page, as if the thermogram did not exist."""
    response = outsider_client.get(reverse("survey:thermogram", args=[thermogram.pk]))
    assert response.status_code == 404


def test_it_sends_anonymous_visitors_of_the_page_to_sign_in(client, thermogram):
    """The page itself redirects to the login form."""
    response = client.get(reverse("survey:thermogram", args=[thermogram.pk]))
    assert response.status_code == 302 and "/accounts/login/" in response["Location"]


# --- access --------------------------------------------------------------------------------------


def _endpoints(thermogram, mark):
    return [
        ("get", reverse("survey:api-thermogram", args=[thermogram.pk]), None),
        ("get", reverse("survey:api-thermogram-temperatures", args=[thermogram.pk]), None),
        ("get", reverse("survey:api-marks", args=[thermogram.pk]), None),
        (
            "post",
            reverse("survey:api-marks", args=[thermogram.pk]),
            {"kind": "point", "points": [[1, 1]]},
        ),
        ("get", reverse("survey:api-mark", args=[mark.pk]), None),
        ("patch", reverse("survey:api-mark", args=[mark.pk]), {"note": "x"}),
        ("delete", reverse("survey:api-mark", args=[mark.pk]), None),
        ("get", reverse("survey:api-thermogram-overlays", args=[thermogram.pk]), None),
        ("get", reverse("survey:api-thermogram-alignment", args=[thermogram.pk]), None),
        ("get", reverse("survey:api-thermogram-neighbours", args=[thermogram.pk]), None),
    ]


def test_it_answers_404_to_another_organization_on_every_endpoint(
    outsider_client, thermogram, thermographer
):
    """Otto of another firm gets JSON 404 everywhere and changes nothing."""
    mark = mark_services.mark_add(
        thermogram=thermogram, kind="point", points=[[5, 5]], user=thermographer.user
    )
    for method, url, data in _endpoints(thermogram, mark):
        response = post_json(outsider_client, url, data or {}, method)
        assert response.status_code == 404, (method, url)
        assert response.json()["error"]
    mark.refresh_from_db()
    assert mark.note == "" and thermogram.marks.count() == 1


def test_it_answers_401_to_anonymous_api_calls(client, thermogram, thermographer):
    """Without a session every JSON endpoint answers 401 with a JSON message."""
    mark = mark_services.mark_add(
        thermogram=thermogram, kind="point", points=[[5, 5]], user=thermographer.user
    )
    for method, url, data in _endpoints(thermogram, mark):
        response = post_json(client, url, data or {}, method)
        assert response.status_code == 401, (method, url)
        assert "Sign in" in response.json()["error"]


@pytest.mark.parametrize("persona", ["owner", "reviewer", "thermographer"])
def test_it_lets_every_role_edit_marks(client, request, thermogram, persona):
    """Admins, reviewers and thermographers may add, change and delete marks."""
    client.force_login(request.getfixturevalue(persona).user)
    mark = add_mark(client, thermogram)
    response = post_json(client, mark["url"], {"note": "checked"}, "patch")
    assert response.status_code == 200 and response.json()["note"] == "checked"
    assert client.delete(mark["url"]).status_code == 204


def test_it_refuses_a_post_without_the_csrf_token(thermographer, thermogram, marks_url):
    """Session writes need the CSRF token the page's script sends."""
    client = Client(enforce_csrf_checks=True)
    client.force_login(thermographer.user)
    response = post_json(client, marks_url, {"kind": "point", "points": [[1, 1]]})
    assert response.status_code == 403
    assert thermogram.marks.count() == 0


def test_it_answers_405_with_json_to_a_wrong_method(thermographer_client, thermogram):
    """PUT on the marks collection is not a thing."""
    response = thermographer_client.put(reverse("survey:api-marks", args=[thermogram.pk]))
    assert response.status_code == 405 and "POST" in response["Allow"]
    assert response.json()["error"]


# --- metadata and temperatures -------------------------------------------------------------------


def test_it_returns_the_thermogram_metadata(thermographer_client, thermogram):
    """Size, capture settings, span, palettes (256 colours each), marks and urls."""
    add_mark(thermographer_client, thermogram)
    data = thermographer_client.get(reverse("survey:api-thermogram", args=[thermogram.pk])).json()
    assert (data["width"], data["height"]) == (160, 120)
    assert data["status"] == "ready"
    assert data["capture"]["emissivity"] == 0.95
    assert data["min_c"] == pytest.approx(thermogram.min_c)
    assert all(len(ramp) == 256 for ramp in data["palettes"].values())
    assert "black-red-yellow" in data["palettes"]
    low, high = data["display"]["auto_span"]
    assert thermogram.min_c <= low < high <= thermogram.max_c
    assert [m["label"] for m in data["marks"]] == ["A"]
    assert data["unit"] == "C"
    assert data["urls"]["temperatures"].endswith("/temperatures")


def test_it_describes_a_thermogram_that_is_not_ready(thermographer_client, envelope_survey):
    """While processing: 200 with the status, no marks and no correction table."""
    thermogram = make_thermogram(envelope_survey)
    thermogram.status = thermogram.Status.FAILED
    thermogram.error = "Unreadable file."
    thermogram.save()
    data = thermographer_client.get(reverse("survey:api-thermogram", args=[thermogram.pk])).json()
    assert data["status"] == "failed" and data["error"] == "Unreadable file."
    assert data["marks"] == [] and data["correction"] is None


def test_it_gives_a_correction_table_for_the_cursor(thermographer_client, thermogram):
    """Corrected values in the table match the radiometric correction of the thermogram."""
    from survey.thermal import object_temperature

    data = thermographer_client.get(reverse("survey:api-thermogram", args=[thermogram.pk])).json()
    table = data["correction"]
    apparent, corrected = table["apparent_c"][40], table["corrected_c"][40]
    assert corrected == pytest.approx(float(object_temperature(apparent, 0.95, 20.0)), abs=1e-3)


def test_it_serves_the_temperatures_as_float32(thermographer_client, thermogram):
    """The body is the °C array, little-endian float32, with size headers and an ETag."""
    url = reverse("survey:api-thermogram-temperatures", args=[thermogram.pk])
    response = thermographer_client.get(url)
    assert response.status_code == 200
    assert response["Content-Type"] == "application/octet-stream"
    values = np.frombuffer(response.content, dtype="<f4").reshape(120, 160)
    np.testing.assert_array_equal(values, synthetic_field())
    assert response["X-Width"] == "160" and response["X-Height"] == "120"
    assert "private" in response["Cache-Control"]
    again = thermographer_client.get(url, HTTP_IF_NONE_MATCH=response["ETag"])
    assert again.status_code == 304 and again.content == b""


def test_it_serves_the_temperatures_as_float16_with_an_offset(thermographer_client, thermogram):
    """Half the bytes; value + offset within float16 resolution (about 0.01 K here)."""
    url = reverse("survey:api-thermogram-temperatures", args=[thermogram.pk])
    response = thermographer_client.get(url, {"dtype": "float16"})
    values = np.frombuffer(response.content, dtype="<f2").astype(np.float32).reshape(120, 160)
    restored = values * float(response["X-Scale"]) + float(response["X-Offset"])
    np.testing.assert_allclose(restored, synthetic_field(), atol=0.02)
    assert thermographer_client.get(url, {"dtype": "int8"}).status_code == 400


def test_it_serves_nan_pixels_as_nan(thermographer_client, envelope_survey):
    """Pixels without a reading stay NaN in the binary array."""
    field = synthetic_field()
    field[3, 4] = np.nan
    thermogram = make_thermogram(envelope_survey, field)
    url = reverse("survey:api-thermogram-temperatures", args=[thermogram.pk])
    values = np.frombuffer(thermographer_client.get(url).content, dtype="<f4")
    assert np.isnan(values[3 * 160 + 4]) and np.isfinite(values[0])


# --- marks ------------------------------------------------------------------------------


def test_it_adds_a_rectangle_mark_with_its_statistics(thermographer_client, thermogram):
    """201, label A, apparent stats as numpy computes them, corrected figures beside."""
    data = add_mark(thermographer_client, thermogram, points=[[100, 40], [120, 55]])
    region = synthetic_field()[40:56, 100:121]  # rectangle corners are inclusive pixel centres
    assert data["label"] == "A" and data["kind"] == "rectangle"
    stats = data["stats"]
    assert stats["max_c"] == pytest.approx(float(region.max()), abs=1e-4)
    assert stats["min_c"] == pytest.approx(float(region.min()), abs=1e-4)
    assert stats["mean_c"] == pytest.approx(float(region.mean()), abs=1e-3)
    assert stats["std_c"] == pytest.approx(float(region.std()), abs=1e-3)
    assert stats["pixels"] == region.size
    row, col = np.unravel_index(np.argmax(region), region.shape)
    assert stats["max_at"] == [int(col) + 100, int(row) + 40]
    corrected = data["corrected"]
    # At ε 0.95 and reflected 20 °C a surface above 20 °C reads warmer once corrected.
    assert corrected["max_c"] > stats["max_c"]
    assert corrected["uncertainty_c"] >= 2.0
    assert data["dew_point_c"] == pytest.approx(9.27, abs=0.05)  # psychrolib, 20 °C 50 %
    assert Mark.objects.get(pk=data["id"]).stats["pixels"] == region.size
    assert AuditEvent.objects.filter(action="mark_add").count() == 1


def test_it_labels_marks_with_the_next_free_letter(thermographer_client, thermogram):
    """A, B, C; after deleting A the next mark takes A again."""
    labels = [
        add_mark(thermographer_client, thermogram, kind="point", points=[[i, i]])["label"]
        for i in range(3)
    ]
    assert labels == ["A", "B", "C"]
    first = thermogram.marks.get(label="A")
    thermographer_client.delete(reverse("survey:api-mark", args=[first.pk]))
    assert add_mark(thermographer_client, thermogram, kind="point", points=[[9, 9]])["label"] == "A"


@pytest.mark.parametrize(
    ("data", "field"),
    [
        ({"kind": "blob", "points": [[1, 1]]}, "kind"),
        ({"kind": "polygon", "points": [[1, 1], [5, 5]]}, "points"),
        ({"kind": "rectangle", "points": [[1, 1]]}, "points"),
        ({"kind": "rectangle", "points": [[1, 1], [500, 5]]}, "points"),
        ({"kind": "point", "points": [[-1, 5]]}, "points"),
        ({"kind": "point", "points": [[1, "x"]]}, "points"),
        ({"kind": "point", "points": "1,1"}, "points"),
        ({"kind": "point", "points": [[1, 1]], "emissivity": 0}, "emissivity"),
        ({"kind": "point", "points": [[1, 1]], "emissivity": 1.5}, "emissivity"),
        ({"kind": "point", "points": [[1, 1]], "emissivity": "high"}, "emissivity"),
        ({"kind": "point", "points": [[1, 1]], "reflected_c": 900}, "reflected_c"),
        ({"kind": "point", "points": [[1, 1]], "reference": "Q"}, "reference"),
        ({"kind": "point", "points": [[1, 1]], "colour": "red"}, "colour"),
        ({"points": [[1, 1]]}, "kind"),
        ({"kind": "point"}, "points"),
    ],
)
def test_it_rejects_bad_marks_naming_the_field(
    thermographer_client, thermogram, marks_url, data, field
):
    """400 with a message for the field; nothing saved."""
    response = post_json(thermographer_client, marks_url, data)
    assert response.status_code == 400
    body = response.json()
    assert body["error"] and field in body["fields"]
    assert thermogram.marks.count() == 0


@pytest.mark.parametrize(
    ("body", "field"),
    [
        ('{"kind": "point", "points": [[1, 1]], "emissivity": NaN}', "emissivity"),
        ('{"kind": "point", "points": [[NaN, 1]]}', "points"),
        ('{"kind": "point", "points": [[1, 1]], "reflected_c": Infinity}', "reflected_c"),
    ],
)
def test_it_rejects_nan_naming_the_field(thermographer_client, thermogram, marks_url, body, field):
    """NaN and Infinity are numbers to JSON parsers but not to us."""
    response = thermographer_client.post(marks_url, body, content_type="application/json")
    assert response.status_code == 400 and field in response.json()["fields"]
    assert thermogram.marks.count() == 0


@pytest.mark.parametrize("body", ["{not json", "[1, 2]", "\xff"])
def test_it_answers_400_to_a_body_that_is_not_a_json_object(
    thermographer_client, thermogram, marks_url, body
):
    """Broken JSON is a clear 400, never a 500."""
    response = thermographer_client.post(marks_url, body, content_type="application/json")
    assert response.status_code == 400
    assert "JSON" in response.json()["error"]


def test_it_refuses_a_mark_on_a_thermogram_still_processing(thermographer_client, envelope_survey):
    """No array yet: 400 naming the status, nothing saved."""
    thermogram = make_thermogram(envelope_survey)
    thermogram.status = thermogram.Status.PROCESSING
    thermogram.save()
    response = post_json(
        thermographer_client,
        reverse("survey:api-marks", args=[thermogram.pk]),
        {"kind": "point", "points": [[1, 1]]},
    )
    assert response.status_code == 400 and "not ready" in response.json()["error"]


def test_it_limits_the_number_of_marks(thermographer_client, thermogram, marks_url, monkeypatch):
    """Past the limit the answer says so; the limit is lowered here to keep the test fast."""
    monkeypatch.setattr(mark_services, "MAX_MARKS_PER_THERMOGRAM", 2)
    for i in range(2):
        add_mark(thermographer_client, thermogram, kind="point", points=[[i, 0]])
    response = post_json(thermographer_client, marks_url, {"kind": "point", "points": [[5, 5]]})
    assert response.status_code == 400 and "at most 2 marks" in response.json()["error"]


def test_it_changes_a_marks_emissivity_and_its_corrected_value(thermographer_client, thermogram):
    """A lower ε on the mark only (the tape trick reversed) raises the corrected max."""
    mark = add_mark(thermographer_client, thermogram, points=[[100, 40], [120, 55]])
    response = post_json(thermographer_client, mark["url"], {"emissivity": 0.7}, "patch")
    assert response.status_code == 200
    changed = response.json()
    assert changed["emissivity"] == 0.7 and changed["effective_emissivity"] == 0.7
    assert changed["corrected"]["max_c"] > mark["corrected"]["max_c"] + 1
    assert changed["emissivity_warning"] is None
    response = post_json(thermographer_client, mark["url"], {"emissivity": 0.2}, "patch")
    assert response.json()["emissivity_warning"] == "not_quantitative"
    reset = post_json(thermographer_client, mark["url"], {"emissivity": None}, "patch").json()
    assert reset["emissivity"] is None and reset["effective_emissivity"] == 0.95


def test_it_moves_a_mark_and_recomputes_its_stats(thermographer_client, thermogram):
    """New points give new statistics."""
    mark = add_mark(thermographer_client, thermogram, kind="point", points=[[0, 0]])
    moved = post_json(thermographer_client, mark["url"], {"points": [[112, 48]]}, "patch").json()
    assert moved["stats"]["max_c"] > mark["stats"]["max_c"] + 5


@pytest.mark.parametrize(
    ("data", "field"),
    [
        ({"emissivity": 0}, "emissivity"),
        ({"points": [[1, 1], [2, 2]]}, "points"),
        ({"points": [[999, 1]]}, "points"),
        ({"kind": "line"}, "kind"),
        ({"reference": "A"}, "reference"),
    ],
)
def test_it_rejects_bad_changes_and_keeps_the_mark(thermographer_client, thermogram, data, field):
    """400 naming the field; the stored mark is unchanged."""
    mark = add_mark(thermographer_client, thermogram, kind="point", points=[[3, 3]])
    response = post_json(thermographer_client, mark["url"], data, "patch")
    assert response.status_code == 400 and field in response.json()["fields"]
    stored = Mark.objects.get(pk=mark["id"])
    assert stored.points == [[3, 3]] and stored.emissivity is None


def test_it_takes_a_delta_t_against_another_mark_and_the_air(
    thermographer_client, electrical_survey
):
    """ΔT = corrected max − reference's corrected mean, or − the survey's ambient air (24 °C)."""
    thermogram = make_thermogram(electrical_survey)
    ref = add_mark(thermographer_client, thermogram, points=[[5, 5], [15, 15]])
    hot = add_mark(thermographer_client, thermogram, points=[[100, 40], [120, 55]], reference="A")
    assert hot["reference"] == "A"
    assert hot["delta_t_c"] == pytest.approx(
        hot["corrected"]["max_c"] - ref["corrected"]["mean_c"], abs=0.02
    )
    assert hot["delta_t_quantitative"] is True
    air = post_json(thermographer_client, hot["url"], {"reference": "ambient"}, "patch").json()
    assert air["delta_t_c"] == pytest.approx(air["corrected"]["max_c"] - 24.0, abs=0.01)
    assert air["dew_point_c"] is None  # electrical survey: no humidity figures


def test_it_clears_references_to_a_deleted_mark(thermographer_client, thermogram):
    """B compared with A; deleting A leaves B with no reference."""
    a = add_mark(thermographer_client, thermogram, kind="point", points=[[5, 5]])
    b = add_mark(thermographer_client, thermogram, kind="point", points=[[50, 50]], reference="A")
    assert thermographer_client.delete(a["url"]).status_code == 204
    after = thermographer_client.get(b["url"]).json()
    assert after["reference"] is None and after["delta_t_c"] is None
    assert Mark.objects.get(pk=b["id"]).reference_kind == Mark.ReferenceKind.NONE


def test_it_reports_a_surface_that_reflects_more_than_it_emits(
    thermographer_client, envelope_survey
):
    """ε 0.1 on a 20 °C field with 60 °C reflected: no corrected value, a message, no 500."""
    thermogram = make_thermogram(
        envelope_survey, np.full((20, 20), 20.0, np.float32), reflected_c=60.0
    )
    mark = add_mark(thermographer_client, thermogram, kind="point", points=[[5, 5]], emissivity=0.1)
    assert mark["corrected"]["max_c"] is None
    assert "reflects more than it emits" in mark["error"]
    listed = thermographer_client.get(reverse("survey:api-marks", args=[thermogram.pk])).json()
    assert listed["marks"][0]["error"]


def test_it_lists_marks_with_a_line_profile(thermographer_client, thermogram):
    """A line mark carries its apparent temperatures along its length."""
    add_mark(thermographer_client, thermogram, kind="line", points=[[80, 48], [140, 48]])
    data = thermographer_client.get(reverse("survey:api-marks", args=[thermogram.pk])).json()
    profile = data["marks"][0]["profile"]
    assert len(profile) >= 60 and profile[0][0] == 0
    assert max(v for _, v in profile) > 30  # the warm spot (35 °C peak) lies on the line


# --- overlays, alignment, neighbours -------------------------------------------------------


def test_it_gives_the_condensation_overlay_thresholds(thermographer_client, thermogram):
    """20 °C 50 % room air: mould risk below 12.6 °C, condensation below the dew point 9.3 °C."""
    data = thermographer_client.get(
        reverse("survey:api-thermogram-overlays", args=[thermogram.pk])
    ).json()
    overlay = data["condensation"]
    assert overlay["available"] is True
    # θsi,min 12.63 °C (docs/references.md § Building envelope, computed); dew point 9.27 °C
    # (psychrolib).
    assert overlay["surface_c"]["rh80"] == pytest.approx(12.63, abs=0.03)
    assert overlay["surface_c"]["rh100"] == pytest.approx(9.27, abs=0.03)
    # Below the reflected 20 °C a surface at ε 0.95 reads slightly warmer than it is.
    assert overlay["surface_c"]["rh80"] < overlay["apparent_c"]["rh80"] < 20


def test_it_says_why_there_is_no_condensation_overlay(thermographer_client, electrical_survey):
    """Electrical surveys have no indoor humidity: the overlay is unavailable with a reason."""
    thermogram = make_thermogram(electrical_survey)
    data = thermographer_client.get(
        reverse("survey:api-thermogram-overlays", args=[thermogram.pk])
    ).json()
    assert data["condensation"]["available"] is False and data["condensation"]["reason"]


def _with_photo(thermogram):
    import io

    from PIL import Image

    buffer = io.BytesIO()
    Image.new("RGB", (320, 240), (90, 90, 90)).save(buffer, "JPEG")
    thermogram.photo.save("photo.jpg", ContentFile(buffer.getvalue()))
    return thermogram


def test_it_stores_a_two_pair_alignment_as_a_similarity(thermographer_client, thermogram):
    """Photo at twice the thermogram's scale: two pairs give scale 0.5, no rotation, no shift."""
    _with_photo(thermogram)
    url = reverse("survey:api-thermogram-alignment", args=[thermogram.pk])
    pairs = [[[20, 20], [10, 10]], [[200, 120], [100, 60]]]
    response = post_json(thermographer_client, url, {"pairs": pairs}, "put")
    assert response.status_code == 200
    matrix = np.array(response.json()["alignment"]["matrix"])
    np.testing.assert_allclose(matrix, [[0.5, 0, 0], [0, 0.5, 0]], atol=1e-9)
    thermogram.refresh_from_db()
    assert thermogram.photo_alignment["pairs"] == pairs


def test_it_fits_an_affine_alignment_to_three_pairs(thermographer_client, thermogram):
    """Three pairs of a known shear-and-shift map give back that map (hand-computed)."""
    _with_photo(thermogram)
    truth = np.array([[0.5, 0.1, 3.0], [0.0, 0.4, 7.0]])
    photo = [[10, 20], [250, 30], [60, 200]]
    pairs = [[p, (truth @ [p[0], p[1], 1]).tolist()] for p in photo]
    url = reverse("survey:api-thermogram-alignment", args=[thermogram.pk])
    response = post_json(thermographer_client, url, {"pairs": pairs}, "put")
    np.testing.assert_allclose(response.json()["alignment"]["matrix"], truth, atol=1e-6)
    assert thermographer_client.delete(url).json()["alignment"] is None


@pytest.mark.parametrize(
    "pairs",
    [
        [[[10, 10], [5, 5]]],
        [[[10, 10], [5, 5]], [[10, 10], [50, 50]]],
        [[[0, 0], [0, 0]], [[10, 10], [10, 10]], [[20, 20], [20, 20]]],
        [[[10, 10], [5, 5]], [[20, 20], [500, 5]]],
        "nonsense",
    ],
)
def test_it_rejects_an_alignment_it_cannot_fit(thermographer_client, thermogram, pairs):
    """One pair, the same photo point twice, three points on a line, outside: 400 on pairs."""
    _with_photo(thermogram)
    url = reverse("survey:api-thermogram-alignment", args=[thermogram.pk])
    response = post_json(thermographer_client, url, {"pairs": pairs}, "put")
    assert response.status_code == 400 and "pairs" in response.json()["fields"]


def test_it_refuses_to_align_without_a_photo(thermographer_client, thermogram):
    """No paired photo, nothing to align."""
    url = reverse("survey:api-thermogram-alignment", args=[thermogram.pk])
    response = post_json(
        thermographer_client, url, {"pairs": [[[1, 1], [1, 1]], [[9, 9], [9, 9]]]}, "put"
    )
    assert response.status_code == 400 and "no paired photo" in response.json()["error"]


def test_it_links_the_previous_and_next_thermogram(thermographer_client, envelope_survey):
    """The middle of three thermograms links both neighbours; the first has no previous."""
    first, middle, last = (make_thermogram(envelope_survey) for _ in range(3))
    data = thermographer_client.get(
        reverse("survey:api-thermogram-neighbours", args=[middle.pk])
    ).json()
    assert data["previous"]["id"] == first.pk and data["next"]["id"] == last.pk
    assert (data["position"], data["count"]) == (2, 3)
    assert data["next"]["page"] == reverse("survey:thermogram", args=[last.pk])
    first_data = thermographer_client.get(reverse("survey:api-thermogram", args=[first.pk])).json()
    assert first_data["neighbours"]["previous"] is None
