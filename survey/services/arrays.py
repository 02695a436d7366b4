"""Read a thermogram's decoded °C array, with a small in-process cache.

The cache key is the file name plus its modification time and size (on a folder) or the
time the row says it was processed (in a bucket), so a re-processed thermogram is never
served stale.
"""

import hashlib
import io
import os
import threading
from collections import OrderedDict
from dataclasses import dataclass

import numpy as np
from django.core.files.storage import default_storage

from survey.models import Thermogram
from survey.storage import media_is_local, media_read

CACHE_ENTRIES = 8
ENCODINGS = ("float32", "float16")

_cache: OrderedDict[tuple[str, str, int], np.ndarray] = OrderedDict()
_lock = threading.Lock()


class ThermogramNotReady(RuntimeError):
    """The thermogram has no decoded array (still queued, failed or damaged)."""


def thermogram_temperatures(thermogram: Thermogram) -> np.ndarray:
    """The thermogram's apparent temperatures, float32 °C, shape (height, width); read-only."""
    if not thermogram.array:
        raise ThermogramNotReady(
            f"Thermogram {thermogram.pk} has no temperature array yet "
            f"(status: {thermogram.get_status_display()})."
        )
    name = thermogram.array.name
    try:
        key = _cache_key(thermogram)
    except FileNotFoundError:
        raise _missing(thermogram) from None
    with _lock:
        cached = _cache.get(key)
        if cached is not None:
            _cache.move_to_end(key)
            return cached
    try:
        data = media_read(name)
    except FileNotFoundError:
        raise _missing(thermogram) from None
    array = np.load(io.BytesIO(data), allow_pickle=False).astype(np.float32, copy=False)
    array.setflags(write=False)
    with _lock:
        for old in [k for k in _cache if k[0] == name]:
            del _cache[old]
        _cache[key] = array
        while len(_cache) > CACHE_ENTRIES:
            _cache.popitem(last=False)
    return array


def thermogram_array_digest(thermogram: Thermogram) -> str:
    """sha256 of the °C array file: recorded when the array is written, else read once.

    What the temperatures' ETag is made of, so a re-processed array (new scale, unit or
    false-colour range) is never taken for the one a browser holds.
    """
    if thermogram.array_sha256:
        return thermogram.array_sha256
    if not thermogram.array:
        raise ThermogramNotReady(
            f"Thermogram {thermogram.pk} has no temperature array yet "
            f"(status: {thermogram.get_status_display()})."
        )
    digest = hashlib.sha256()
    try:
        with thermogram.array.storage.open(thermogram.array.name, "rb") as handle:
            for chunk in iter(lambda: handle.read(1024 * 1024), b""):
                digest.update(chunk)
    except FileNotFoundError:
        raise ThermogramNotReady(
            f"The temperature array of thermogram {thermogram.pk} is missing; re-process it."
        ) from None
    value = digest.hexdigest()
    Thermogram.objects.filter(pk=thermogram.pk, array=thermogram.array.name).update(
        array_sha256=value
    )
    thermogram.array_sha256 = value
    return value


def _cache_key(thermogram: Thermogram) -> tuple[str, str, int]:
    """On a folder the file's modification time and size; in a bucket (where asking costs a
    request) the time the row says the array was last written."""
    name = thermogram.array.name
    if media_is_local():
        stat = os.stat(default_storage.path(name))
        return (name, str(stat.st_mtime_ns), stat.st_size)
    return (name, str(thermogram.processed_at), 0)


def _missing(thermogram: Thermogram) -> ThermogramNotReady:
    return ThermogramNotReady(
        f"The temperature array of thermogram {thermogram.pk} is missing; re-process it."
    )


def clear_cache() -> None:
    with _lock:
        _cache.clear()


@dataclass(frozen=True)
class EncodedTemperatures:
    """A thermogram's °C array as little-endian bytes: value = stored × scale + offset."""

    data: bytes
    width: int
    height: int
    dtype: str
    scale: float
    offset: float


def thermogram_temperatures_encoded(thermogram: Thermogram, dtype: str) -> EncodedTemperatures:
    """The °C array row by row as float32, or as float16 around the middle of its range
    (half the bytes; the offset keeps the precision where the values are)."""
    if dtype not in ENCODINGS:
        raise ValueError(f"dtype must be one of {', '.join(ENCODINGS)}.")
    array = thermogram_temperatures(thermogram)
    scale, offset = 1.0, 0.0
    if dtype == "float16":
        finite = array[np.isfinite(array)]
        offset = float((finite.min() + finite.max()) / 2) if finite.size else 0.0
        data = (array - offset).astype("<f2")
    else:
        data = array.astype("<f4")
    return EncodedTemperatures(
        data=data.tobytes(),
        width=int(array.shape[1]),
        height=int(array.shape[0]),
        dtype=dtype,
        scale=scale,
        offset=offset,
    )
