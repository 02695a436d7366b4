"""Reports survive what one file can do to them: extreme shapes, a missing array, a photo
that declares a billion pixels. The render finishes, says which thermogram it left out and
why, and one picture's size never depends on its file's shape."""

import struct
import zlib
from pathlib import Path

import numpy as np
from django.core.files.base import ContentFile

from reports.models import Report, ReportVersion
from reports.pictures import (
    THERMOGRAM_MAX_HEIGHT_MM,
    THERMOGRAM_WIDTH_MM,
    mm_to_px,
    thermogram_picture,
)
from reports.rendering import report_render
from survey.services.marks import mark_add
from tests.factories import make_thermogram
from tests.reports.helpers import flat, pdf_text


def _version(survey) -> ReportVersion:
    report = Report.objects.create(organization=survey.organization, survey=survey, number="R-H1")
    return ReportVersion.objects.create(report=report, version=1, is_draft=True)


def strip(width: int, height: int) -> np.ndarray:
    """A strip warming from 10 °C at one end to 30 °C at the other (invented)."""
    ramp = np.linspace(10.0, 30.0, max(width, height), dtype=np.float32)
    return (ramp[None, :] if width > height else ramp[:, None]) * np.ones(
        (height, width), np.float32
    )


def test_it_draws_a_very_wide_and_a_very_tall_thermogram_within_the_page(envelope_survey):
    """2 × 4000 and 4000 × 2: each picture is exactly as wide as any other and no taller
    than the limit; the report renders."""
    wide = make_thermogram(envelope_survey, strip(4000, 2), title="Pipe run")
    tall = make_thermogram(envelope_survey, strip(2, 4000), title="Downpipe")
    mark_add(thermogram=wide, kind="line", points=[[0, 0], [3999, 1]], user=None)
    mark_add(thermogram=tall, kind="point", points=[[1, 2000]], user=None)
    width, height = mm_to_px(THERMOGRAM_WIDTH_MM), mm_to_px(THERMOGRAM_MAX_HEIGHT_MM)
    for thermogram in (wide, tall):
        picture, _span = thermogram_picture(thermogram, width)
        assert picture.width == width and picture.height <= height
    version = _version(envelope_survey)
    assert report_render(version.pk)
    version.refresh_from_db()
    assert version.status == "ready" and version.notes == ""
    text = flat(pdf_text(Path(version.pdf.path).read_bytes()))
    assert "Pipe run" in text and "Downpipe" in text


def png_declaring(width: int, height: int) -> bytes:
    """A PNG whose header declares width × height pixels, with one tiny compressed row."""

    def chunk(kind: bytes, data: bytes) -> bytes:
        body = kind + data
        return struct.pack(">I", len(data)) + body + struct.pack(">I", zlib.crc32(body))

    header = struct.pack(">IIBBBBB", width, height, 8, 2, 0, 0, 0)
    return (
        b"\x89PNG\r\n\x1a\n"
        + chunk(b"IHDR", header)
        + chunk(b"IDAT", zlib.compress(b"\x00" * 64))
        + chunk(b"IEND", b"")
    )


def test_it_finishes_a_report_and_names_what_it_could_not_draw(envelope_survey):
    """A thermogram whose array is gone and a photo declaring 30000 × 30000 pixels are left
    out with the reason; every other thermogram is drawn and the render finishes."""
    sound = make_thermogram(envelope_survey, title="East wall")
    lost = make_thermogram(envelope_survey, strip(40, 30), title="Gable end")
    bomb = make_thermogram(envelope_survey, strip(30, 40), title="Chimney breast")
    bomb.photo.save("bomb.png", ContentFile(png_declaring(30000, 30000)))
    for thermogram in (sound, lost, bomb):
        mark_add(thermogram=thermogram, kind="point", points=[[5, 5]], user=None)
    Path(lost.array.path).unlink()
    version = _version(envelope_survey)
    assert report_render(version.pk)
    version.refresh_from_db()
    assert version.status == "ready", version.error
    assert "2. Gable end" in version.notes and "temperature array" in version.notes
    assert "3. Chimney breast" in version.notes and "photo" in version.notes
    text = flat(pdf_text(Path(version.pdf.path).read_bytes()))
    assert "East wall" in text and "Chimney breast" in text
    assert "The picture of this thermogram could not be included" in text
    # The internal reason stays on the app's page, not in the client's PDF.
    assert "re-process" not in text
