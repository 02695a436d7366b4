"""When a thermogram was taken, from the date-time tag its file carries.

Cameras write the moment of capture into TIFF files (tag 306 ``DateTime``) and, through
the Exif sub-directory, into TIFF, JPEG and PNG files (tag 36867 ``DateTimeOriginal``)
[TIFF6], [Exif2.32]. Both hold the camera clock's local time as ``YYYY:MM:DD HH:MM:SS``
with no zone, so :func:`read_capture_time` returns a *naive* local time: the caller adds the
survey's time zone. ``DateTimeOriginal`` (when the picture was taken) wins over
``DateTime`` (when the file was last written, which editing software may change).

NumPy arrays and CSV tables carry no such tag; a damaged or missing tag is not an error,
just no time (None), since the upload's entered time can stand in.
"""

from __future__ import annotations

import datetime as dt
import io
import re
import warnings

from PIL import Image

DATETIME_TAG = 306
EXIF_IFD_TAG = 34665
DATETIME_ORIGINAL_TAG = 36867

_STAMP = re.compile(r"^\s*(\d{4})[:\-](\d{2})[:\-](\d{2})[ T](\d{2}):(\d{2}):(\d{2})")
# Earliest and latest plausible capture (a camera clock never set reads 1970 or 2000).
_EARLIEST = dt.datetime(1990, 1, 1)
_LATEST = dt.datetime(2100, 1, 1)


def parse_exif_datetime(text) -> dt.datetime | None:
    """A TIFF/Exif date-time string as a naive datetime; None when blank or invalid.

    Examples
    --------
    >>> parse_exif_datetime("2026:01:17 22:05:31")
    datetime.datetime(2026, 1, 17, 22, 5, 31)
    >>> parse_exif_datetime("0000:00:00 00:00:00") is None, parse_exif_datetime("    ") is None
    (True, True)
    """
    if isinstance(text, bytes):
        text = text.decode("ascii", errors="replace")
    if not isinstance(text, str):
        return None
    match = _STAMP.match(text.replace("\x00", ""))
    if match is None:
        return None
    try:
        value = dt.datetime(*(int(part) for part in match.groups()))
    except ValueError:
        return None
    return value if _EARLIEST <= value < _LATEST else None


def _best(original, modified) -> dt.datetime | None:
    return parse_exif_datetime(original) or parse_exif_datetime(modified)


def _from_tiff(data: bytes) -> dt.datetime | None:
    import tifffile

    with tifffile.TiffFile(io.BytesIO(data)) as tif:
        if not tif.pages:
            return None
        tags = tif.pages[0].tags
        modified = tags.get(DATETIME_TAG)
        exif = tags.get(EXIF_IFD_TAG)
        original = None
        if exif is not None and isinstance(exif.value, dict):
            original = exif.value.get("DateTimeOriginal")
        return _best(original, modified.value if modified is not None else None)


def _from_picture(data: bytes) -> dt.datetime | None:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        with Image.open(io.BytesIO(data)) as image:
            exif = image.getexif()
            original = exif.get_ifd(EXIF_IFD_TAG).get(DATETIME_ORIGINAL_TAG)
            return _best(original, exif.get(DATETIME_TAG))


def read_capture_time(data: bytes) -> dt.datetime | None:
    """The local time a thermogram was taken, from its file's tags, or None.

    Parameters
    ----------
    data : bytes
        The original file: TIFF, JPEG or PNG (others hold no tag and give None).

    Returns
    -------
    datetime or None
        Naive local time of the camera's clock (``DateTimeOriginal``, else ``DateTime``);
        None when the file has no readable, plausible tag (1990–2099).

    Notes
    -----
    Only the file's first directory is read; no pixel data is decoded [TIFF6], [Exif2.32].

    Examples
    --------
    >>> read_capture_time(b"0.0,1.0\\n2.0,3.0\\n") is None
    True
    """
    head = bytes(data[:8])
    try:
        if head[:4] in (b"II*\x00", b"MM\x00*", b"II+\x00", b"MM\x00+"):
            return _from_tiff(data)
        if head.startswith(b"\xff\xd8\xff") or head.startswith(b"\x89PNG\r\n\x1a\n"):
            return _from_picture(data)
    except Exception:  # a damaged tag is no time, never a failed upload
        return None
    return None
