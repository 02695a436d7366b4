"""Read a thermogram's decoded °C array, with a small in-process cache.

The cache key is the file path plus its modification time and size, so a re-processed
thermogram (its array rewritten by rename) is never served stale.
"""

import os
import threading
from collections import OrderedDict
from dataclasses import dataclass

import numpy as np

from survey.models import Thermogram

CACHE_ENTRIES = 8
ENCODINGS = ("float32", "float16")

_cache: OrderedDict[tuple[str, int, int], np.ndarray] = OrderedDict()
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
    path = thermogram.array.path
    try:
        stat = os.stat(path)
    except FileNotFoundError:
        raise ThermogramNotReady(
            f"The temperature array of thermogram {thermogram.pk} is missing; re-process it."
        ) from None
    key = (path, stat.st_mtime_ns, stat.st_size)
    with _lock:
        cached = _cache.get(key)
        if cached is not None:
            _cache.move_to_end(key)
            return cached
    array = np.load(path, allow_pickle=False).astype(np.float32, copy=False)
    array.setflags(write=False)
    with _lock:
        for old in [k for k in _cache if k[0] == path]:
            del _cache[old]
        _cache[key] = array
        while len(_cache) > CACHE_ENTRIES:
            _cache.popitem(last=False)
    return array


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
