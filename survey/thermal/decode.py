"""Decode thermogram files in open formats into temperature arrays in °C.

The format is recognised from the first bytes of the content, never from the file name
alone; the file name only makes messages easier to act on. Every refusal raises
`ThermogramFormatError` (a `ValueError`) whose message says what was wrong and what to do.

Limits are checked before a full decode so that a decompression bomb or a huge text file
is refused cheaply: the byte size first (from the file system or the buffer length), then
the pixel count read from the image header.

Two cases are refused rather than guessed:

- A file named as a binary image (``.tif``, ``.png``, ``.jpg``, ``.npy``) whose first bytes
  are not that format's signature (text, or unknown bytes) is "not a TIFF" (or PNG, …): a
  broken export is more likely than a matrix with the wrong name, and reading it as text
  would give a confusing message. A binary format under another name is still read by its
  content.
- A comma-separated text whose every row is exactly two whole numbers with one or two
  digits after the comma (``20,5``) is ambiguous: a single column written with a decimal
  comma, or two columns of whole numbers. It is refused with the fix: semicolons between
  values, or a decimal point.
"""

from __future__ import annotations

import contextlib
import csv
import io
import math
import os
import re
import threading
import warnings
from pathlib import Path
from typing import IO

import numpy as np

MAX_PIXELS = 20_000_000
"""Default pixel limit: 20 megapixels, far above any thermal camera sensor."""

MAX_ASPECT_RATIO = 20.0
"""Longest side over shortest side of an accepted image. Camera frames are 4:3 to 16:9 and
a panorama stitched from a dozen frames stays well inside 20:1; a 2 × 2000 table is an
export gone wrong, not a picture, and would make every drawing of it degenerate."""

MAX_FILE_BYTES = 200 * 1024 * 1024
"""Default size limit of a binary file (TIFF, PNG, JPEG, .npy), in bytes."""

MAX_TEXT_BYTES = 50 * 1024 * 1024
"""Default size limit of a text matrix (CSV, TSV), in bytes; a 1280×1024 matrix is ~10 MB."""

UNITS = ("C", "F", "K")

ABSOLUTE_ZERO_C = -273.15

MAX_PLAUSIBLE_C = 10_000.0
"""Highest temperature accepted: far above any camera range, below float32 trouble."""

_FORMAT_NAMES = {
    "tiff": "TIFF",
    "png": "PNG",
    "jpeg": "JPEG",
    "npy": "NumPy .npy",
    "text": "text matrix (CSV/TSV)",
}

ACCEPTED_FORMATS = (
    "32-bit float TIFF, 16-bit TIFF or PNG with a scale, CSV/TSV text matrix, NumPy .npy, "
    "or a false-colour JPEG/PNG with its palette and scale range"
)


class ThermogramFormatError(ValueError):
    """A thermogram file that cannot be read; the message tells the user what to do."""


class _UnknownContentError(ThermogramFormatError):
    """The first bytes match no accepted format."""


_CLAIMED_FORMATS = {
    ".tif": "tiff",
    ".tiff": "tiff",
    ".png": "png",
    ".jpg": "jpeg",
    ".jpeg": "jpeg",
    ".npy": "npy",
}


def _claimed_format(filename: str) -> str | None:
    """The binary format a file name claims by its extension, if any."""
    return _CLAIMED_FORMATS.get(Path(filename).suffix.lower()) if filename else None


def _not_the_claimed_format(name: str, claimed: str, holds_text: bool) -> ThermogramFormatError:
    label = _FORMAT_NAMES[claimed]
    if holds_text:
        return ThermogramFormatError(
            f"{name} is not a {label}: it starts with text, not the {label} signature. "
            f"If it is a temperature matrix, save it with a .csv name; otherwise export the "
            f"thermogram again as a {label}."
        )
    return ThermogramFormatError(
        f"{name} is not a {label}: its first bytes are not the {label} signature (damaged "
        f"or another kind of file). Accepted: {ACCEPTED_FORMATS}."
    )


def detect_format(data: bytes) -> str:
    """Name the format of `data` from its first bytes.

    Returns one of ``"tiff"``, ``"png"``, ``"jpeg"``, ``"npy"`` or ``"text"``; raises
    `ThermogramFormatError` for anything else.

    Examples
    --------
    >>> detect_format(b"\\x89PNG\\r\\n\\x1a\\n....")
    'png'
    >>> detect_format(b"20.5;21.0\\n20.7;21.2\\n")
    'text'
    """
    head = bytes(data[:16])
    if head[:4] in (b"II*\x00", b"MM\x00*", b"II+\x00", b"MM\x00+"):
        return "tiff"
    if head[:8] == b"\x89PNG\r\n\x1a\n":
        return "png"
    if head[:3] == b"\xff\xd8\xff":
        return "jpeg"
    if head[:6] == b"\x93NUMPY":
        return "npy"
    sample = bytes(data[:4096])
    if sample and b"\x00" not in sample:
        try:
            sample.decode("utf-8")
            return "text"
        except UnicodeDecodeError as error:
            # A multi-byte character cut at the sample's end is still text.
            if error.start >= len(sample) - 3:
                return "text"
            try:
                sample.decode("cp1252")
                return "text"
            except UnicodeDecodeError:
                pass
    raise _UnknownContentError(
        f"This file is not in a format we can read. Accepted: {ACCEPTED_FORMATS}."
    )


def read_temperatures(
    source: bytes | str | os.PathLike | IO[bytes],
    filename: str = "",
    *,
    unit: str = "C",
    scale: float | None = None,
    offset: float | None = None,
    palette_image: bool = False,
    palette: str | np.ndarray | None = None,
    low_c: float | None = None,
    high_c: float | None = None,
    scale_bar_box: tuple[int, int, int, int] | None = None,
    max_pixels: int = MAX_PIXELS,
    max_bytes: int = MAX_FILE_BYTES,
    max_text_bytes: int = MAX_TEXT_BYTES,
) -> np.ndarray:
    """Read a thermogram file into a 2-D float32 array of temperatures in °C.

    Parameters
    ----------
    source : bytes, path or binary file object
        The file content, or where to read it from.
    filename : str
        The file's name, used only in messages.
    unit : {"C", "F", "K"}
        Unit of the values stored in the file (after `scale` and `offset`).
    scale, offset : float, optional
        Linear conversion of stored values: ``value = stored * scale + offset`` in `unit`.
        Required for integer images (for example centikelvin: ``scale=0.01, unit="K"``);
        optional for float data; `offset` defaults to 0.
    palette_image : bool
        Treat a JPEG/PNG as a false-colour picture and estimate temperatures by palette
        inversion (see `survey.thermal.palettes.invert_palette`). Needs `low_c` and `high_c`
        (the picture's scale range, in °C whatever `unit` says) and either `palette` (a
        name of `PALETTES` or an N×3 ramp) or `scale_bar_box`, the (left, top, right,
        bottom) pixel box of the scale bar in the picture (right and bottom exclusive).
        Pixels inside that box come back as NaN. The result is an estimate.
    max_pixels, max_bytes, max_text_bytes : int
        Limits checked before a full decode.

    Returns
    -------
    numpy.ndarray
        float32 °C, NaN where the file holds no data.

    Examples
    --------
    >>> read_temperatures(b"20.5;21,0\\n22;23.5\\n", "wall.csv").tolist()
    [[20.5, 21.0], [22.0, 23.5]]
    >>> read_temperatures(b"300,301\\n", "t.csv", unit="K").astype(float).round(2).tolist()
    [[26.85, 27.85]]
    """
    if not filename and isinstance(source, (str, os.PathLike)):
        filename = Path(source).name
    name = filename or "the file"
    unit = _check_unit(unit)
    scale = _optional_number(scale, "scale")
    offset = _optional_number(offset, "offset")
    if scale is not None and scale == 0:
        raise ThermogramFormatError("The scale must be a finite number other than 0.")
    claimed = _claimed_format(filename)
    try:
        kind, data = _read_bytes(source, name, max_bytes, max_text_bytes)
    except _UnknownContentError:
        if claimed:
            raise _not_the_claimed_format(name, claimed, holds_text=False) from None
        raise
    if claimed and kind == "text":
        raise _not_the_claimed_format(name, claimed, holds_text=True)
    if palette_image:
        if kind not in ("png", "jpeg"):
            raise ThermogramFormatError(
                f"{name} is a {_FORMAT_NAMES[kind]}, not a false-colour picture; palette "
                "decoding needs a JPEG or PNG."
            )
        values = _read_palette_picture(
            data, name, palette, low_c, high_c, scale_bar_box, max_pixels
        )
        _check_pixels(name, values.shape[1], values.shape[0], max_pixels)
        return values
    if kind == "tiff":
        values = _read_tiff(data, name, max_pixels)
    elif kind == "npy":
        values = _read_npy(data, name, max_pixels)
    elif kind == "text":
        values, header_unit = _read_text(data, name, max_pixels)
        if header_unit and header_unit != unit:
            raise ThermogramFormatError(
                f"{name}: the header names °{header_unit} but the unit chosen is °{unit}; "
                "choose the unit the file uses."
            )
    else:
        values = _read_picture(data, name, kind, max_pixels)
    _check_pixels(name, values.shape[1], values.shape[0], max_pixels)
    return _to_celsius(values, name, unit, scale, offset)


def _optional_number(value, label: str) -> float | None:
    if value is None:
        return None
    try:
        number = float(value)
    except (TypeError, ValueError):
        number = math.nan
    if not math.isfinite(number):
        raise ThermogramFormatError(f"The {label} must be a finite number, not {value!r}.")
    return number


def _check_unit(unit: str) -> str:
    normalised = str(unit).strip().upper().lstrip("°")
    if normalised not in UNITS:
        raise ThermogramFormatError(f"Unknown unit {unit!r}: choose C, F or K.")
    return normalised


MEGABYTE = 1024 * 1024
"""Sizes are shown in MB of 1 048 576 bytes, the unit the limits are set in (200 MB)."""


def size_text(size: int, decimals: int = 1) -> str:
    """A size in bytes as MB.

    Examples
    --------
    >>> size_text(209_715_200)
    '200.0 MB'
    """
    return f"{size / MEGABYTE:.{decimals}f} MB"


def size_comparison(size: int, limit: int) -> tuple[str, str]:
    """`size` and `limit` in the same unit and rounding, with as many digits as it takes for
    a size above the limit not to print as large as it (then in bytes).

    Examples
    --------
    >>> size_comparison(220_000_000, 209_715_200)
    ('209.8 MB', '200.0 MB')
    """
    for decimals in (1, 3):
        shown = size_text(size, decimals), size_text(limit, decimals)
        if shown[0] != shown[1] or size == limit:
            return shown
    return f"{size:,} bytes", f"{limit:,} bytes"


_INTERNALS = re.compile(r"<[^<>]*\bat 0x[0-9a-fA-F]+>|<ast\.[^<>]*>")


def _reason(error: BaseException) -> str:
    """A library's own words about a damaged file, as ": words", without Python object
    names (Pillow names its BytesIO, numpy its parse tree) and at most 150 characters."""
    text = " ".join(_INTERNALS.sub("", str(error)).split()).strip(" :;,.")
    if not text or "0x" in text:
        return ""
    return ": " + (text if len(text) <= 150 else text[:147] + "…")


def _size_error(name: str, size: int, kind: str | None, limit: int) -> ThermogramFormatError:
    what = f"a {_FORMAT_NAMES[kind]}" if kind else "a file"
    shown, most = size_comparison(size, limit)
    return ThermogramFormatError(f"{name} is {shown}; {what} may be at most {most}.")


def _read_bytes(source, name: str, max_bytes: int, max_text_bytes: int) -> tuple[str, bytes]:
    """Return the format and the content, refusing an oversized file before reading it.

    The first 4 KiB name the format, whose own limit then applies; a path's size comes
    from the file system and a file object is never read past the limit.
    """

    def limit_for(kind: str) -> int:
        return max_text_bytes if kind == "text" else max_bytes

    overall = max(max_bytes, max_text_bytes)
    if isinstance(source, (bytes, bytearray, memoryview)):
        data = bytes(source)
        if not data:
            raise ThermogramFormatError(f"{name} is empty.")
        if len(data) > overall:
            raise _size_error(name, len(data), None, overall)
        kind = detect_format(data)
        if len(data) > limit_for(kind):
            raise _size_error(name, len(data), kind, limit_for(kind))
        return kind, data
    if isinstance(source, (str, os.PathLike)):
        try:
            size = Path(source).stat().st_size
            if size > overall:
                raise _size_error(name, size, None, overall)
            with open(source, "rb") as handle:
                return _read_stream(handle, name, size, limit_for)
        except OSError as error:
            raise ThermogramFormatError(f"{name} could not be opened: {error.strerror}.")
    if hasattr(source, "read"):
        size = getattr(source, "size", None)
        if isinstance(size, int) and size > overall:
            raise _size_error(name, size, None, overall)
        if hasattr(source, "seek") and getattr(source, "seekable", lambda: True)():
            source.seek(0)
        return _read_stream(source, name, size, limit_for)
    raise TypeError("source must be bytes, a path or a binary file object")


def _read_stream(handle, name: str, size: int | None, limit_for) -> tuple[str, bytes]:
    head = handle.read(4096)
    if not head:
        raise ThermogramFormatError(f"{name} is empty.")
    kind = detect_format(head)
    limit = limit_for(kind)
    if size is not None and size > limit:
        raise _size_error(name, size, kind, limit)
    data = head + handle.read(limit + 1 - len(head))
    if len(data) > limit:
        raise ThermogramFormatError(
            f"{name} is larger than {size_text(limit)}, the most a {_FORMAT_NAMES[kind]} may be."
        )
    return kind, data


def _check_pixels(name: str, width: int, height: int, max_pixels: int) -> None:
    if width <= 0 or height <= 0:
        raise ThermogramFormatError(f"{name} holds an empty image ({width}×{height} pixels).")
    if width * height > max_pixels:
        raise ThermogramFormatError(
            f"{name} is {width}×{height} pixels; images may have at most "
            f"{max_pixels / 1e6:g} megapixels."
        )
    _check_aspect(name, width, height)


def check_image_size(name: str, width: int, height: int, max_pixels: int = MAX_PIXELS) -> None:
    """Raise `ThermogramFormatError` for a size the decoder refuses: over `max_pixels`, or
    beyond `MAX_ASPECT_RATIO`.

    Examples
    --------
    >>> check_image_size("wall.csv", 640, 480)
    """
    _check_pixels(name, width, height, max_pixels)


def _check_aspect(name: str, width: int, height: int) -> None:
    long, short = max(width, height), min(width, height)
    if long > MAX_ASPECT_RATIO * short:
        wide = width >= height
        raise ThermogramFormatError(
            f"{name} is {width}×{height} pixels, {long / short:.0f} times as "
            f"{'wide as it is tall' if wide else 'tall as it is wide'}; an image may be at most "
            f"{MAX_ASPECT_RATIO:g} times as wide as it is tall, or as tall as it is wide. "
            "Check the export: rows and columns may have been cut or joined."
        )


def declared_size(data: bytes, name: str = "", *, max_pixels: int = MAX_PIXELS):
    """(width, height) of an image from its header, or of a text table from its first row
    and its number of rows, without decoding the values; None when the content is not one
    we can size (the decoder then says why).

    Raises `ThermogramFormatError` when the size is over `max_pixels` or the shape beyond
    `MAX_ASPECT_RATIO`: what the decoder would refuse, known before anything is stored.

    Examples
    --------
    >>> declared_size(b"20;21;22\\n23;24;25\\n", "wall.csv")
    (3, 2)
    """
    name = name or "the file"
    try:
        kind = detect_format(data)
    except ThermogramFormatError:
        return None
    try:
        size = _SIZE_READERS[kind](bytes(data))
    except ThermogramFormatError:
        if kind == "jpeg":  # a bomb: its size is not even read
            raise ThermogramFormatError(
                f"{name} declares too many pixels; images may have at most "
                f"{max_pixels / 1e6:g} megapixels."
            ) from None
        return None
    except Exception:  # noqa: BLE001 - a damaged header is the decoder's to explain
        return None
    if size is not None:
        _check_pixels(name, size[0], size[1], max_pixels)
    return size


def _png_size(data: bytes):
    if data[12:16] != b"IHDR":
        return None
    return int.from_bytes(data[16:20], "big"), int.from_bytes(data[20:24], "big")


def _picture_size(data: bytes):
    from PIL import Image

    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", Image.DecompressionBombWarning)
            with Image.open(io.BytesIO(data)) as image:  # reads the header only
                return image.size
    except Image.DecompressionBombError:
        raise ThermogramFormatError("The picture declares far too many pixels.") from None


def _tiff_size(data: bytes):
    import tifffile

    with tifffile.TiffFile(io.BytesIO(data)) as tiff:
        page = tiff.pages.first
        return int(page.imagewidth), int(page.imagelength)


def _npy_size(data: bytes):
    buffer = io.BytesIO(data)
    version = np.lib.format.read_magic(buffer)
    read = (
        np.lib.format.read_array_header_1_0
        if version == (1, 0)
        else np.lib.format.read_array_header_2_0
    )
    shape = [int(n) for n in read(buffer)[0] if n != 1] or [1, 1]
    return (shape[-1], int(np.prod(shape[:-1]))) if len(shape) > 1 else (shape[0], 1)


def _text_size(data: bytes):
    text = data.decode("utf-8-sig", errors="replace")
    first_lines = _first_lines(text.replace("\r\n", "\n").replace("\r", "\n"), 2)
    if not first_lines:
        return None
    delimiter = _delimiter_of(first_lines[-1][1])
    rows = len(_NOT_BLANK_LINE.findall(text))
    first = first_lines[0][1]
    if not _row_is_numeric(_split_line(first, delimiter), delimiter):
        rows -= 1
        first = first_lines[-1][1] if len(first_lines) > 1 else ""
    return len(_split_line(first, delimiter)), rows


_NOT_BLANK_LINE = re.compile(r"^[^\S\n]*\S", re.MULTILINE)

_SIZE_READERS = {
    "png": _png_size,
    "jpeg": _picture_size,
    "tiff": _tiff_size,
    "npy": _npy_size,
    "text": _text_size,
}


def _plane(values: np.ndarray, name: str) -> np.ndarray:
    """Return a 2-D plane, dropping axes of length one (a single sample or page)."""
    if values.ndim > 2:
        values = values.reshape([n for n in values.shape if n != 1] or [1, 1])
    if values.ndim == 1:
        values = values.reshape(1, -1)
    if values.ndim != 2:
        raise ThermogramFormatError(
            f"{name} holds several planes or colour channels {values.shape}; a thermogram "
            "is one plane of temperatures."
        )
    return values


def _read_tiff(data: bytes, name: str, max_pixels: int) -> np.ndarray:
    import tifffile

    try:
        with tifffile.TiffFile(io.BytesIO(data)) as tiff:
            if not tiff.pages:
                raise ThermogramFormatError(f"{name} is a TIFF without any image.")
            page = tiff.pages.first
            shape = tuple(int(n) for n in page.shape)
            if len(shape) < 2:
                raise ThermogramFormatError(f"{name} is a TIFF without a 2-D image.")
            planes = [n for n in shape if n != 1]
            if len(planes) > 2:
                raise ThermogramFormatError(
                    f"{name} is a TIFF with {page.samplesperpixel} channels (shape {shape}); "
                    "a thermogram is one plane of temperatures, not a colour picture."
                )
            _check_pixels(name, int(page.imagewidth), int(page.imagelength), max_pixels)
            _check_dtype(np.dtype(page.dtype), name)
            values = page.asarray()
    except ThermogramFormatError:
        raise
    except Exception as error:  # tifffile raises many types for damaged files
        raise ThermogramFormatError(
            f"{name} could not be read as a TIFF (damaged or truncated file{_reason(error)})."
        )
    return _plane(np.asarray(values), name)


def _check_dtype(dtype: np.dtype, name: str) -> None:
    if dtype.kind not in "fiu" or dtype.itemsize > 8:
        raise ThermogramFormatError(
            f"{name} holds values of type {dtype}; we read floating point or integer "
            "temperatures only."
        )


def _read_npy(data: bytes, name: str, max_pixels: int) -> np.ndarray:
    buffer = io.BytesIO(data)
    try:
        version = np.lib.format.read_magic(buffer)
        if version == (1, 0):
            shape, _, dtype = np.lib.format.read_array_header_1_0(buffer)
        else:
            shape, _, dtype = np.lib.format.read_array_header_2_0(buffer)
    except Exception:
        raise ThermogramFormatError(f"{name} has a damaged .npy header.") from None
    if dtype.hasobject or dtype.kind not in "fiu":
        raise ThermogramFormatError(
            f"{name} holds values of type {dtype}; a .npy thermogram must hold numbers."
        )
    planes = [int(n) for n in shape if n != 1]
    if len(shape) == 0 or len(planes) > 2:
        raise ThermogramFormatError(
            f"{name} holds an array of shape {tuple(shape)}; a thermogram is one 2-D plane."
        )
    if len(shape) >= 2:
        _check_pixels(name, int(shape[-1]), int(np.prod(shape[:-1])), max_pixels)
    else:
        _check_pixels(name, int(shape[0]), 1, max_pixels)
    try:
        values = np.load(io.BytesIO(data), allow_pickle=False)
    except Exception as error:
        raise ThermogramFormatError(f"{name} could not be read as .npy (damaged{_reason(error)}).")
    return _plane(values, name)


_PILLOW_FLAG_LOCK = threading.Lock()


@contextlib.contextmanager
def _strict_pillow_loading():
    """Refuse truncated pictures even when another library relaxed Pillow for the process.

    WeasyPrint sets ImageFile.LOAD_TRUNCATED_IMAGES = True when imported, which would make
    a cut-off thermogram decode as a picture padded with zeros: a silent wrong number.
    """
    from PIL import ImageFile

    with _PILLOW_FLAG_LOCK:
        previous = ImageFile.LOAD_TRUNCATED_IMAGES
        ImageFile.LOAD_TRUNCATED_IMAGES = False
        try:
            yield
        finally:
            ImageFile.LOAD_TRUNCATED_IMAGES = previous


def _open_picture(data: bytes, name: str, kind: str, max_pixels: int):
    """Open a PNG/JPEG with Pillow, checking the header's size before decoding pixels."""
    from PIL import Image

    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", Image.DecompressionBombWarning)
            image = Image.open(io.BytesIO(data), formats=[kind.upper()])
    except Image.DecompressionBombError:
        raise ThermogramFormatError(
            f"{name} declares too many pixels; images may have at most "
            f"{max_pixels / 1e6:g} megapixels."
        )
    except Exception as error:
        raise ThermogramFormatError(
            f"{name} could not be read as {kind.upper()} (not a picture{_reason(error)})."
        )
    width, height = image.size
    _check_pixels(name, width, height, max_pixels)
    try:
        with warnings.catch_warnings(), _strict_pillow_loading():
            warnings.simplefilter("ignore", Image.DecompressionBombWarning)
            image.load()
    except Exception as error:
        reason = _reason(error)
        raise ThermogramFormatError(
            f"{name} could not be read as {kind.upper()} (damaged or truncated file{reason})."
        )
    return image


def _read_picture(data: bytes, name: str, kind: str, max_pixels: int) -> np.ndarray:
    image = _open_picture(data, name, kind, max_pixels)
    if image.mode in ("RGB", "RGBA", "P", "PA", "CMYK", "YCbCr", "LA"):
        raise ThermogramFormatError(
            f"{name} is a colour picture. To estimate temperatures from its colours, "
            "choose palette decoding and give the palette and the scale range."
        )
    if kind == "jpeg":
        raise ThermogramFormatError(
            f"{name} is a grey JPEG; JPEG compression changes values, so it can only be "
            "read as a false-colour picture with palette decoding."
        )
    values = np.asarray(image)
    if image.mode == "1":
        raise ThermogramFormatError(f"{name} is a black-and-white picture, not a thermogram.")
    return _plane(values, name)


def _read_palette_picture(data, name, palette, low_c, high_c, box, max_pixels) -> np.ndarray:
    from survey.thermal.palettes import PALETTES, invert_palette, ramp_from_scale_bar

    kind = detect_format(data)
    if low_c is None or high_c is None:
        raise ThermogramFormatError(
            "Palette decoding needs the picture's scale range: the lowest and highest "
            "temperature of its scale bar."
        )
    low_c = _optional_number(low_c, "bottom of the scale range")
    high_c = _optional_number(high_c, "top of the scale range")
    if not (np.isfinite(low_c) and np.isfinite(high_c) and high_c > low_c):
        raise ThermogramFormatError(
            f"The scale range {low_c} to {high_c} °C is not valid: the top of the scale "
            "must be above the bottom."
        )
    if palette is None and box is None:
        raise ThermogramFormatError(
            f"Palette decoding needs a palette ({', '.join(PALETTES)}) or the pixel box of "
            "the scale bar in the picture."
        )
    if isinstance(palette, str) and palette not in PALETTES:
        raise ThermogramFormatError(
            f"Unknown palette {palette!r}; choose one of: {', '.join(PALETTES)}."
        )
    image = _open_picture(data, name, kind, max_pixels)
    rgb = np.asarray(image.convert("RGB"))
    if box is not None:
        try:
            ramp = ramp_from_scale_bar(rgb, box)
        except ValueError as error:
            raise ThermogramFormatError(str(error))
    else:
        ramp = palette
    try:
        temperatures = invert_palette(rgb, ramp, low_c, high_c)
    except ValueError as error:
        raise ThermogramFormatError(str(error))
    if box is not None:
        left, top, right, bottom = (int(v) for v in box)
        temperatures[max(top, 0) : bottom, max(left, 0) : right] = np.nan
    if not np.isfinite(temperatures).any():
        raise ThermogramFormatError(
            f"No pixel of {name} matches the colours of the palette; check the palette."
        )
    return temperatures


_UNIT_IN_HEADER = [
    ("F", re.compile(r"°\s*F\b|\bdeg\s*F\b|fahrenheit|\[F\]|\(F\)", re.IGNORECASE)),
    ("K", re.compile(r"kelvin|\[K\]|\(K\)|\bin\s+K\b", re.IGNORECASE)),
    ("C", re.compile(r"°\s*C\b|\bdeg\s*C\b|celsius|\[C\]|\(C\)", re.IGNORECASE)),
]


def _read_text(data: bytes, name: str, max_pixels: int) -> tuple[np.ndarray, str | None]:
    """Parse a CSV/TSV/semicolon matrix, with or without a header row.

    Returns the values and the unit the header row names, if any.
    """
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError:
        text = data.decode("cp1252", errors="replace")
    if "\r" in text:
        text = text.replace("\r\n", "\n").replace("\r", "\n")
    first_lines = _first_lines(text, 2)
    if not first_lines:
        raise ThermogramFormatError(f"{name} holds no numbers.")
    delimiter = _delimiter_of(first_lines[-1][1])
    header_unit = None
    first_number, first = first_lines[0]
    body, body_first_line = text, 1
    if not _row_is_numeric(_split_line(first, delimiter), delimiter):
        header_unit = _unit_of_header(first)
        body = text[_offset_after_line(text, first_number) :]
        body_first_line = first_number + 1
    data_lines = _first_lines(body, 1)
    if not data_lines:
        raise ThermogramFormatError(f"{name} holds a header but no rows of numbers.")
    width = len(_split_line(data_lines[0][1], delimiter))
    if delimiter == "," and width == 2:
        _refuse_ambiguous_decimal_comma(body, name)
    if width * (body.count("\n") + 1) > max_pixels:
        height = sum(1 for line in body.splitlines() if line.strip())
        _check_pixels(name, width, height, max_pixels)
    values = _parse_matrix_fast(body, delimiter)
    if values is not None:
        return values, header_unit
    # The careful path: slower, but it stops at the first problem and names its place.
    decimal_comma = delimiter != "," and "," in body
    rows: list[list[float]] = []
    for number, line in enumerate(body.split("\n"), body_first_line):
        if not line.strip():
            continue
        cells = _split_line(line, delimiter)
        if rows and len(cells) != len(rows[0]):
            raise ThermogramFormatError(
                f"{name}, row {number}: {len(cells)} values where the first row has "
                f"{len(rows[0])}; every row must have the same number of values."
            )
        rows.append(_parse_row(name, number, cells, decimal_comma))
    _check_pixels(name, len(rows[0]), len(rows), max_pixels)
    return np.array(rows, dtype=np.float64), header_unit


def _delimiter_of(sample: str) -> str | None:
    """The separator of a row: tab, semicolon, comma, or None for spaces."""
    for delimiter in ("\t", ";", ","):
        if delimiter in sample:
            return delimiter
    return None


_NOT_BLANK = re.compile(r"\S")

# One whole number, a comma, one or two digits (an optional trailing comma): "20,5".
_DECIMAL_COMMA_OR_TWO_COLUMNS = re.compile(r"[ \t]*[+-]?\d+[ \t]*,[ \t]*\d{1,2}[ \t]*,?[ \t]*")


def _refuse_ambiguous_decimal_comma(body: str, name: str) -> None:
    """Refuse a comma text whose every row reads both as 20.5 and as the pair 20 and 5."""
    example = None
    for line in body.split("\n"):
        if not line.strip():
            continue
        if not _DECIMAL_COMMA_OR_TWO_COLUMNS.fullmatch(line):
            return
        example = example or line.strip()
    raise ThermogramFormatError(
        f"{name}: every row is two whole numbers separated by a comma (like {example!r}), "
        "which reads both as one column with a decimal comma and as two columns. Use "
        "semicolons between values, or a decimal point in the numbers, and upload it again."
    )


def _first_lines(text: str, count: int) -> list[tuple[int, str]]:
    """The first `count` non-blank lines with their 1-based numbers, without splitting all.

    Blank stretches are skipped by a regular-expression search, so the cost does not grow
    with the number of blank lines.
    """
    found = []
    position = 0
    while len(found) < count:
        match = _NOT_BLANK.search(text, position)
        if match is None:
            break
        start = text.rfind("\n", 0, match.start()) + 1
        end = text.find("\n", match.start())
        end = len(text) if end < 0 else end
        found.append((text.count("\n", 0, start) + 1, text[start:end]))
        position = end + 1
    return found


def _offset_after_line(text: str, number: int) -> int:
    """The character offset just after line `number` (1-based)."""
    offset = 0
    for _ in range(number):
        newline = text.find("\n", offset)
        if newline < 0:
            return len(text)
        offset = newline + 1
    return offset


def _parse_matrix_fast(body: str, delimiter) -> np.ndarray | None:
    """Parse a clean matrix with numpy's C parser; None when anything looks unusual."""
    if '"' in body:
        return None
    stripped = body.lstrip()
    first_line = stripped[: stripped.find("\n")] if "\n" in stripped else stripped
    if delimiter is not None and first_line.rstrip().endswith(delimiter):
        # Exports often end each line with a delimiter; the careful path drops it too.
        body = re.sub(f"{re.escape(delimiter)}[ \t]*$", "", body, flags=re.MULTILINE)
    if delimiter != "," and "," in body:
        body = body.replace(",", ".")
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            values = np.loadtxt(
                io.StringIO(body), delimiter=delimiter, dtype=np.float64, ndmin=2, comments=None
            )
    except ValueError:
        return None
    if values.size == 0 or not np.isfinite(values).all():
        return None
    return values


def _split_line(line: str, delimiter) -> list[str]:
    if delimiter is None:
        return line.split()
    # One reader per line: a stray quote must not swallow the following lines.
    cells = [cell.strip() for cell in next(csv.reader([line], delimiter=delimiter), [""])]
    # A trailing delimiter at the end of a line is common in exports; drop that cell.
    if len(cells) > 1 and cells[-1] == "":
        cells = cells[:-1]
    return cells


def _parse_cell(cell: str, decimal_comma: bool) -> float | None:
    try:
        return float(cell.replace(",", ".") if decimal_comma else cell)
    except ValueError:
        return None


def _row_is_numeric(cells: list[str], delimiter) -> bool:
    decimal_comma = delimiter != ","
    return any(_parse_cell(cell, decimal_comma) is not None for cell in cells if cell)


def _unit_of_header(line: str) -> str | None:
    for unit, pattern in _UNIT_IN_HEADER:
        if pattern.search(line):
            return unit
    return None


def _parse_row(name: str, number: int, cells: list[str], decimal_comma: bool) -> list[float]:
    """The numbers of one text row; the first bad cell raises with its row and column."""
    values = []
    for column, cell in enumerate(cells, 1):
        value = _parse_cell(cell, decimal_comma)
        where = f"{name}, row {number}, column {column}"
        if cell == "":
            raise ThermogramFormatError(f"{where}: the cell is empty; every cell needs a number.")
        if value is None:
            shown = cell if len(cell) <= 20 else cell[:20] + "…"
            raise ThermogramFormatError(f"{where}: {shown!r} is not a number.")
        if not math.isfinite(value):
            raise ThermogramFormatError(
                f"{where}: {cell!r} is not a finite temperature; write a number."
            )
        values.append(value)
    return values


def _to_celsius(values: np.ndarray, name: str, unit: str, scale, offset) -> np.ndarray:
    if values.size == 0:
        raise ThermogramFormatError(f"{name} holds no pixels.")
    if values.dtype.kind in "iu" and scale is None:
        raise ThermogramFormatError(
            f"{name} holds integer counts ({values.dtype}); give the scale and offset that "
            "turn them into temperatures (for example scale 0.01 with unit K for "
            "centikelvin)."
        )
    work = values.astype(np.float64) if values.dtype != np.float64 else values.copy()
    if np.isinf(work).any():
        raise ThermogramFormatError(f"{name} holds infinite values; store missing pixels as NaN.")
    if scale is not None or offset is not None:
        work *= 1.0 if scale is None else float(scale)
        work += 0.0 if offset is None else float(offset)
    if unit == "F":
        work -= 32.0
        work *= 5.0 / 9.0
    elif unit == "K":
        work += ABSOLUTE_ZERO_C
    finite = np.isfinite(work)
    if not finite.any():
        raise ThermogramFormatError(f"{name} holds no valid temperature (every pixel is NaN).")
    highest = float(np.max(work, where=finite, initial=-np.inf))
    if highest > MAX_PLAUSIBLE_C:
        raise ThermogramFormatError(
            f"{name} holds {highest:.3g} °C, beyond any surface a thermal camera measures "
            f"(we accept up to {MAX_PLAUSIBLE_C:g} °C); check the unit, scale and offset."
        )
    lowest = float(np.min(work, where=finite, initial=np.inf))
    if lowest < ABSOLUTE_ZERO_C - 1e-6:
        raise ThermogramFormatError(
            f"{name} holds {lowest:.1f} °C, below absolute zero; check the unit, scale and offset."
        )
    return work.astype(np.float32)
