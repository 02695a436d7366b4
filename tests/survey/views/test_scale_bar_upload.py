"""Upload of a false-colour picture whose scale bar is drawn in it, read by the bar's box."""

import io

import numpy as np
import pytest
from django.core.files.uploadedfile import SimpleUploadedFile
from django.urls import reverse
from PIL import Image

from survey.models import Thermogram
from survey.services.arrays import thermogram_temperatures
from survey.thermal.palettes import render
from tests.factories import synthetic_field

LOW_C, HIGH_C = 15.0, 45.0
# A bar 256 px tall holds every colour of a 256-entry palette, so one bar pixel is one
# palette step: (45 − 15) / 255 K.
BAR_BOX = (200, 12, 210, 268)
PALETTE_STEP_K = (HIGH_C - LOW_C) / 255


def picture_with_scale_bar(palette: str = "perceptual") -> tuple[np.ndarray, bytes]:
    """An invented 220×280 field rendered in `palette`, with a vertical bar drawn at BAR_BOX."""
    truth = synthetic_field(width=220, height=280)
    rgb = render(truth, palette, LOW_C, HIGH_C).copy()
    left, top, right, bottom = BAR_BOX
    warm_to_cold = np.linspace(HIGH_C, LOW_C, bottom - top, dtype=np.float32)
    bar = np.repeat(warm_to_cold[:, None], right - left, axis=1)
    rgb[top:bottom, left:right] = render(bar, palette, LOW_C, HIGH_C)
    buffer = io.BytesIO()
    Image.fromarray(rgb).save(buffer, format="PNG")
    return truth, buffer.getvalue()


def upload(client, survey, png: bytes, box=BAR_BOX, **extra):
    data = {
        "files": [SimpleUploadedFile("site_photo_0007.png", png, content_type="image/png")],
        "source_unit": "C",
        "scale_low": str(LOW_C),
        "scale_high": str(HIGH_C),
    }
    for name, value in zip(("bar_left", "bar_top", "bar_right", "bar_bottom"), box, strict=True):
        data[name] = "" if value is None else str(value)
    return client.post(reverse("survey:survey_upload", args=[survey.pk]), data | extra, follow=True)


def messages_of(response) -> list[str]:
    return [str(m) for m in response.context["messages"]] if response.context else []


def test_it_reads_a_false_colour_picture_by_the_scale_bar_drawn_in_it(
    thermographer_client, envelope_survey, django_capture_on_commit_callbacks
):
    """No palette chosen: the bar's colours alone give temperatures within half a step."""
    truth, png = picture_with_scale_bar()
    with django_capture_on_commit_callbacks(execute=True):
        response = upload(thermographer_client, envelope_survey, png)
    assert any("Stored 1 file" in m for m in messages_of(response)), messages_of(response)
    thermogram = envelope_survey.thermograms.get()
    assert thermogram.status == Thermogram.Status.READY, thermogram.error
    assert thermogram.estimated is True
    assert thermogram.decode_settings["false_colour"] == {
        "palette": None,
        "low_c": LOW_C,
        "high_c": HIGH_C,
        "scale_bar_box": list(BAR_BOX),
    }
    temperatures = thermogram_temperatures(thermogram)
    left, top, right, bottom = BAR_BOX
    assert np.isnan(temperatures[top:bottom, left:right]).all()
    away = np.ones(truth.shape, dtype=bool)
    away[top - 3 : bottom + 3, left - 3 : right + 3] = False
    error = np.abs(temperatures[away] - truth[away])
    assert np.isfinite(error).all()
    # Half a palette step, plus float32 rounding of the stored array.
    assert error.max() <= PALETTE_STEP_K / 2 + 1e-4


def test_it_shows_why_a_scale_bar_box_outside_the_picture_failed(
    thermographer_client, envelope_survey, django_capture_on_commit_callbacks
):
    """The box is only checked against the picture when decoding: the reason reaches the page."""
    _, png = picture_with_scale_bar()
    with django_capture_on_commit_callbacks(execute=True):
        upload(thermographer_client, envelope_survey, png, box=(200, 12, 210, 900))
    thermogram = envelope_survey.thermograms.get()
    assert thermogram.status == Thermogram.Status.FAILED
    assert "does not lie inside the 220×280 picture" in thermogram.error
    page = thermographer_client.get(reverse("survey:survey", args=[envelope_survey.pk]))
    assert "does not lie inside the 220×280 picture" in page.content.decode()


def test_it_reprocesses_with_a_corrected_scale_bar_box(
    owner_client, envelope_survey, django_capture_on_commit_callbacks
):
    """The settings page offers the stored box; re-processing with the right one succeeds."""
    truth, png = picture_with_scale_bar("black-red-yellow")
    with django_capture_on_commit_callbacks(execute=True):
        upload(owner_client, envelope_survey, png, box=(0, 0, 8, 900))
    thermogram = envelope_survey.thermograms.get()
    assert thermogram.status == Thermogram.Status.FAILED
    form = owner_client.get(reverse("survey:thermogram_settings", args=[thermogram.pk])).context[
        "reprocess_form"
    ]
    assert [form.initial[n] for n in ("bar_left", "bar_bottom", "scale_high")] == [0, 900, HIGH_C]
    left, top, right, bottom = BAR_BOX
    data = {
        "source_unit": "C",
        "false_colour_palette": "black-red-yellow",
        "scale_low": str(LOW_C),
        "scale_high": str(HIGH_C),
        "bar_left": left,
        "bar_top": top,
        "bar_right": right,
        "bar_bottom": bottom,
    }
    with django_capture_on_commit_callbacks(execute=True):
        response = owner_client.post(
            reverse("survey:thermogram_reprocess", args=[thermogram.pk]), data
        )
    assert response.status_code == 302
    thermogram.refresh_from_db()
    assert thermogram.status == Thermogram.Status.READY, thermogram.error
    assert thermogram.decode_settings["false_colour"]["scale_bar_box"] == list(BAR_BOX)
    sample = thermogram_temperatures(thermogram)[40:80, 100:140]
    assert np.abs(sample - truth[40:80, 100:140]).max() <= PALETTE_STEP_K / 2 + 1e-4


@pytest.mark.parametrize(
    ("box", "extra", "words"),
    [
        ((200, 12, 210, None), {}, "all four sides"),
        ((210, 12, 200, 268), {}, "right side of the scale bar box"),
        ((200, 268, 210, 12), {}, "below its top"),
        ((-1, 12, 210, 268), {}, "at least 0"),
        (("12.5", 12, 210, 268), {}, "whole number of pixels"),
        ((200, 12, 210, 268), {"scale_high": ""}, "both ends of its scale bar"),
        ((None, None, None, None), {}, "or give the box of the scale bar"),
    ],
)
def test_it_refuses_a_bad_scale_bar_box_without_storing(
    thermographer_client, envelope_survey, box, extra, words
):
    """Incomplete, inverted or fractional boxes are a clear message and nothing is stored."""
    _, png = picture_with_scale_bar()
    response = upload(thermographer_client, envelope_survey, png, box=box, **extra)
    assert response.status_code == 200
    texts = " ".join(messages_of(response))
    assert words in texts, texts
    assert not envelope_survey.thermograms.exists()


def test_it_answers_404_to_an_outsider_uploading_with_a_scale_bar(outsider_client, envelope_survey):
    """Another firm's admin cannot upload into the survey, box or not."""
    _, png = picture_with_scale_bar()
    response = upload(outsider_client, envelope_survey, png)
    assert response.status_code == 404
    assert not envelope_survey.thermograms.exists()


@pytest.mark.parametrize(
    "box", [[1, 2, 3], [0, 0, "8", 20], [0, 0, True, 20], [5, 0, 5, 20], [-1, 0, 8, 20], "0,0,8,20"]
)
def test_it_refuses_a_bad_scale_bar_box_given_to_the_service(envelope_survey, thermographer, box):
    """Callers other than the form (imports, scripts) get the same clear refusal, nothing stored."""
    from django.core.exceptions import ValidationError

    from survey.services.ingest import thermogram_ingest

    _, png = picture_with_scale_bar()
    with pytest.raises(ValidationError, match="scale bar box"):
        thermogram_ingest(
            survey=envelope_survey,
            uploaded_file=SimpleUploadedFile("bar.png", png),
            user=thermographer.user,
            palette_source={"low_c": LOW_C, "high_c": HIGH_C, "scale_bar_box": box},
        )
    assert not envelope_survey.thermograms.exists()
