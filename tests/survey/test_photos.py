"""Paired photos at upload: checked like thermograms (size, pixels, shape, a whole picture)
and stored at print size, so no photo can take a report worker's memory."""

import hashlib
import io
from pathlib import Path

import numpy as np
import pytest
from django.core.exceptions import ValidationError
from django.core.files.uploadedfile import SimpleUploadedFile
from PIL import Image

from survey.services.ingest import PHOTO_MAX_SIDE_PX, thermogram_ingest
from tests.reports.test_hostile_inputs import png_declaring


def _npy() -> bytes:
    buffer = io.BytesIO()
    np.save(buffer, np.array([[20.0, 21.5], [19.0, 24.25]], dtype=np.float32))
    return buffer.getvalue()


def _jpeg(width: int, height: int) -> bytes:
    rng = np.random.default_rng(2)
    pixels = rng.integers(0, 255, (height, width, 3), dtype=np.uint8)
    buffer = io.BytesIO()
    Image.fromarray(pixels).save(buffer, "JPEG", quality=80)
    return buffer.getvalue()


def _ingest(survey, photo: bytes, name: str = "IR_0001.jpg"):
    return thermogram_ingest(
        survey=survey,
        uploaded_file=SimpleUploadedFile("IR_0001.npy", _npy()),
        photo=SimpleUploadedFile(name, photo),
        user=None,
    )


@pytest.mark.parametrize("side", [12000, 30000])
def test_it_refuses_a_photo_declaring_too_many_pixels(envelope_survey, settings, side):
    """12000 × 12000 would cost 750 MB to draw and 30000 × 30000 stops Pillow outright: both
    are refused from their header, and nothing of the upload is stored."""
    with pytest.raises(ValidationError) as caught:
        _ingest(envelope_survey, png_declaring(side, side), "IR_0001.png")
    assert "megapixels" in " ".join(caught.value.messages)
    assert not envelope_survey.thermograms.exists()
    assert not [p for p in Path(settings.MEDIA_ROOT).rglob("*") if p.is_file()]


def test_it_refuses_a_photo_that_is_not_a_whole_picture(envelope_survey):
    """A JPEG cut in the middle is refused with its name, not stored to fail later."""
    with pytest.raises(ValidationError, match="IR_0001.jpg could not be read"):
        _ingest(envelope_survey, _jpeg(640, 480)[:3000])


def test_it_stores_a_large_photo_at_print_size(envelope_survey):
    """A 4000 × 3000 camera photo is stored 2048 px on its long side, upright, as JPEG."""
    thermogram = _ingest(envelope_survey, _jpeg(4000, 3000))
    stored = Path(thermogram.photo.path).read_bytes()
    with Image.open(io.BytesIO(stored)) as image:
        assert image.format == "JPEG" and image.size == (PHOTO_MAX_SIDE_PX, 1536)
    assert thermogram.photo_sha256 == hashlib.sha256(stored).hexdigest()


def test_it_keeps_a_small_photo_unchanged(envelope_survey):
    """A photo already at print size is stored byte for byte."""
    photo = _jpeg(800, 600)
    thermogram = _ingest(envelope_survey, photo)
    assert Path(thermogram.photo.path).read_bytes() == photo
