"""Read a thermogram's decoded °C array, with a small in-process cache.

The cache key is the file path plus its modification time and size, so a re-processed
thermogram (its array rewritten by rename) is never served stale.
"""

import os
import threading
from collections import OrderedDict

import numpy as np

from survey.models import Thermogram

CACHE_ENTRIES = 8

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


def clear_cache() -> None:
    with _lock:
        _cache.clear()
