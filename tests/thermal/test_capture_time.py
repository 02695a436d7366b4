"""Capture times from the date-time tags of TIFF, JPEG and PNG files.

The files are written here byte by byte from the TIFF 6.0 layout (header, 12-byte directory
entries, ASCII values of 20 bytes) or by tifffile and Pillow, with tag values we chose; the
expected times are those values read by eye (docs/references.md § Capture times).
"""

import datetime as dt
import io
import struct

import numpy as np
import pytest
import tifffile
from PIL import Image

from survey.thermal.capture_time import parse_exif_datetime, read_capture_time

ASCII, SHORT, LONG = 2, 3, 4


def _entry(tag: int, kind: int, count: int, value: bytes) -> bytes:
    return struct.pack("<HHI", tag, kind, count) + value.ljust(4, b"\x00")


def tiff_with_exif(modified: bytes, original: bytes | None) -> bytes:
    """A 1×1 8-bit grey TIFF: DateTime (306) in its first directory and, when given,
    DateTimeOriginal (36867) in an Exif directory pointed to by tag 34665."""
    entries_0 = 10 if original is not None else 9
    ifd0 = 8
    exif = ifd0 + 2 + 12 * entries_0 + 4
    strings = exif + (18 if original is not None else 0)
    pixel = strings + 40
    tags = [
        _entry(256, SHORT, 1, struct.pack("<H", 1)),
        _entry(257, SHORT, 1, struct.pack("<H", 1)),
        _entry(258, SHORT, 1, struct.pack("<H", 8)),
        _entry(259, SHORT, 1, struct.pack("<H", 1)),
        _entry(262, SHORT, 1, struct.pack("<H", 1)),
        _entry(273, LONG, 1, struct.pack("<I", pixel)),
        _entry(278, SHORT, 1, struct.pack("<H", 1)),
        _entry(279, LONG, 1, struct.pack("<I", 1)),
        _entry(306, ASCII, 20, struct.pack("<I", strings)),
    ]
    if original is not None:
        tags.append(_entry(34665, LONG, 1, struct.pack("<I", exif)))
    data = b"II" + struct.pack("<HI", 42, ifd0)
    data += struct.pack("<H", len(tags)) + b"".join(tags) + struct.pack("<I", 0)
    if original is not None:
        data += struct.pack("<H", 1) + _entry(36867, ASCII, 20, struct.pack("<I", strings + 20))
        data += struct.pack("<I", 0)
    data += modified.ljust(20, b"\x00")[:20] + (original or b"").ljust(20, b"\x00")[:20]
    return data + b"\x80"


def test_read_capture_time_prefers_the_exif_original_time_in_a_tiff():
    """DateTimeOriginal (when taken) wins over DateTime (when last written)."""
    data = tiff_with_exif(b"2026:01:18 09:12:00", b"2026:01:17 22:05:31")
    assert read_capture_time(data) == dt.datetime(2026, 1, 17, 22, 5, 31)


def test_read_capture_time_falls_back_to_the_tiff_datetime():
    data = tiff_with_exif(b"2026:01:17 22:10:07", None)
    assert read_capture_time(data) == dt.datetime(2026, 1, 17, 22, 10, 7)


def test_read_capture_time_reads_a_float_tiff_written_by_tifffile():
    """A 32-bit float thermogram as the decoder takes it, DateTime written by tifffile."""
    buffer = io.BytesIO()
    tifffile.imwrite(
        buffer, np.zeros((4, 4), np.float32), datetime=dt.datetime(2026, 3, 29, 1, 59, 58)
    )
    assert read_capture_time(buffer.getvalue()) == dt.datetime(2026, 3, 29, 1, 59, 58)


@pytest.mark.parametrize("format_name", ["JPEG", "PNG"])
def test_read_capture_time_reads_the_exif_of_pictures(format_name):
    exif = Image.Exif()
    exif[306] = "2026:01:17 23:00:00"
    exif.get_ifd(34665)[36867] = "2026:01:17 22:59:58"
    buffer = io.BytesIO()
    Image.new("RGB", (8, 8), (200, 40, 40)).save(buffer, format=format_name, exif=exif)
    assert read_capture_time(buffer.getvalue()) == dt.datetime(2026, 1, 17, 22, 59, 58)


@pytest.mark.parametrize(
    "data",
    [
        b"20.0,21.5\n19.0,24.25\n",  # a CSV table has no tag
        tiff_with_exif(b"0000:00:00 00:00:00", None),  # a camera clock never set
        tiff_with_exif(b"1970:01:01 00:00:00", None),  # nor reset to the epoch
        tiff_with_exif(b"2026:02:30 10:00:00", None),  # no such day
        tiff_with_exif(b"2026:01:17 22:05:31", None)[:60],  # cut short
        b"II*\x00" + b"\xff" * 12,  # a directory offset past the end
    ],
)
def test_read_capture_time_gives_none_without_a_plausible_tag(data):
    assert read_capture_time(data) is None


def test_parse_exif_datetime_accepts_dashes_and_trailing_nuls():
    assert parse_exif_datetime(b"2026-01-17 22:05:31\x00") == dt.datetime(2026, 1, 17, 22, 5, 31)
