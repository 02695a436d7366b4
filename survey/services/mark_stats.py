"""Statistics cached on marks: computed from a thermogram's array and recomputed when the
array is decoded again.

Kept apart from survey/services/marks.py (which edits marks and queues preview redraws) so
the worker's processing can recompute marks without importing the editing services.
"""

import math
from typing import Any

import numpy as np
from django.core.exceptions import ValidationError

from survey.models import Mark, Thermogram


def mark_stats(
    temperatures: np.ndarray, kind: str, points: list[list[float]], single_pixel: bool = False
) -> dict:
    """The apparent statistics cached on a mark, in the JSON shape of the API."""
    from survey.thermal import mark_statistics

    try:
        raw = mark_statistics(temperatures, kind, points, single_pixel=single_pixel)
    except ValueError as error:
        raise ValidationError({"points": str(error)}) from None
    stats = _stats_dict(raw)
    if stats["pixels"] == 0 or stats["max_c"] is None:
        raise ValidationError(
            {"points": "The mark covers no pixel with a temperature; draw it larger or elsewhere."}
        )
    if kind == Mark.Kind.LINE:
        stats["profile"] = [
            [round(float(d), 2), _number(v) if v is None else round(float(v), 3)]
            for d, v in raw.get("profile") or []
        ]
    return stats


def _number(value: Any) -> float | None:
    if value is None:
        return None
    value = float(value)
    return value if math.isfinite(value) else None


def _position(value: Any) -> list[int] | None:
    if value is None:
        return None
    return [int(value[0]), int(value[1])]


def _stats_dict(raw: dict) -> dict:
    """survey.thermal.mark_statistics' dict, renamed to the API's field names."""
    return {
        "min_c": _number(raw.get("min")),
        "max_c": _number(raw.get("max")),
        "mean_c": _number(raw.get("mean")),
        "std_c": _number(raw.get("std")),
        "pixels": int(raw.get("count") or 0),
        "nan_count": int(raw.get("nan_count") or 0),
        "max_at": _position(raw.get("hottest")),
        "min_at": _position(raw.get("coldest")),
    }


def marks_recompute(*, thermogram: Thermogram, temperatures: np.ndarray) -> int:
    """Recompute the cached statistics of every mark on a (re-)processed array.

    A mark that no longer fits (a smaller image) or covers no pixel with a temperature keeps
    empty statistics, so its readings say it has no valid pixel instead of old numbers.
    Returns the number of marks recomputed.
    """
    marks = list(thermogram.marks.all())
    height, width = temperatures.shape
    for mark in marks:
        inside = all(0 <= x <= width - 1 and 0 <= y <= height - 1 for x, y in mark.points)
        stats = {}
        if inside:
            try:
                stats = mark_stats(temperatures, mark.kind, mark.points, mark.single_pixel)
            except ValidationError:
                stats = {}
        mark.stats = stats or _stats_dict({})
    if marks:
        Mark.objects.bulk_update(marks, ["stats"])
    return len(marks)
