"""Statistics of marks (points, rectangles, ellipses, polygons, lines) on a thermogram.

Coordinates are pixels: x to the right, y down, pixel centres at integers. A pixel belongs
to an area mark when its centre lies inside the shape. Each mark's mask is built only over
its bounding box, so the cost follows the mark's size, not the image's.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence

import numpy as np

KINDS = ("point", "rectangle", "ellipse", "polygon", "line")

POINT_SIZE_PX = 3
"""A point reads the mean of a 3×3 neighbourhood: the minimum measurable spot of common
practice (no single source)."""

MAX_PROFILE_SAMPLES = 1024
"""Most points a line's profile keeps. A line is sampled every pixel for its statistics,
but a chart a few hundred pixels wide cannot show more, and a profile is stored with the
mark and sent with every reading: a 20 000-pixel line would otherwise weigh half a
megabyte each time."""


def mark_statistics(
    temperatures_c: np.ndarray,
    kind: str,
    points: Sequence[Sequence[float]],
    *,
    single_pixel: bool = False,
) -> dict:
    """Statistics of the temperatures inside one mark.

    Parameters
    ----------
    temperatures_c : H×W array, °C (NaN = no data)
    kind : {"point", "rectangle", "ellipse", "polygon", "line"}
    points : sequence of (x, y)
        point: one; rectangle and ellipse: two opposite corners of the bounding box
        (pixel centres, both inclusive); polygon: three or more vertices; line: two or
        more vertices of a polyline.
    single_pixel : bool
        A point reads its single pixel instead of the 3×3 neighbourhood mean.

    Returns
    -------
    dict with ``min``, ``max``, ``mean``, ``std`` (population, ddof 0), ``count`` (finite
    pixels or samples), ``nan_count`` (left out), ``hottest`` and ``coldest`` ([x, y]).
    A line also has ``profile``: [[distance_px, apparent_c], …] sampled every pixel along
    it by bilinear interpolation (None where a neighbour is NaN); its statistics are those
    of all the samples. A profile longer than `MAX_PROFILE_SAMPLES` keeps the coldest and
    the hottest sample of each of about MAX_PROFILE_SAMPLES / 2 equal stretches (see
    `profile_extremes`). Values are None when every pixel is NaN. A point's ``min``/``max`` are
    those of its neighbourhood and ``mean`` is its reading.

    Raises
    ------
    ValueError
        Unknown kind, malformed points, a mark outside the image or covering no pixel.

    Examples
    --------
    >>> t = np.arange(20, dtype=np.float32).reshape(4, 5)
    >>> s = mark_statistics(t, "rectangle", [(1, 1), (2, 2)])
    >>> s["min"], s["max"], s["mean"], s["count"], s["hottest"]
    (6.0, 12.0, 9.0, 4, [2, 2])
    """
    t = _check_array(temperatures_c)
    return _statistics(t, kind, points, single_pixel)


def mark_statistics_many(temperatures_c: np.ndarray, marks: Iterable) -> list[dict]:
    """Statistics of many marks in one call: one dict per mark, in the given order.

    Each mark is a dict or an object with ``kind``, ``points`` and optional
    ``single_pixel``. The array is checked once and each mark's mask covers only its
    bounding box, so 100 marks on a 1280×1024 thermogram take a few milliseconds.

    Examples
    --------
    >>> t = np.arange(20, dtype=np.float32).reshape(4, 5)
    >>> [s["mean"] for s in mark_statistics_many(t, [
    ...     {"kind": "point", "points": [[2, 1]], "single_pixel": True},
    ...     {"kind": "line", "points": [[0, 0], [4, 0]]}])]
    [7.0, 2.0]
    """
    t = _check_array(temperatures_c)
    results = []
    for mark in marks:
        if isinstance(mark, dict):
            kind, points = mark.get("kind"), mark.get("points")
            single = bool(mark.get("single_pixel", False))
        else:
            kind, points = mark.kind, mark.points
            single = bool(getattr(mark, "single_pixel", False))
        results.append(_statistics(t, kind, points, single))
    return results


def mark_mask(
    shape: tuple[int, int],
    kind: str,
    points: Sequence[Sequence[float]],
    *,
    single_pixel: bool = False,
) -> np.ndarray:
    """Boolean H×W mask of the pixels an area or point mark covers.

    Examples
    --------
    >>> mark_mask((3, 4), "rectangle", [(1, 0), (2, 1)]).astype(int).tolist()
    [[0, 1, 1, 0], [0, 1, 1, 0], [0, 0, 0, 0]]
    """
    if kind == "line":
        raise ValueError("a line mark covers no area; use mark_statistics for its profile")
    top, left, crop = _area_mask(tuple(shape), kind, _check_points(kind, points), single_pixel)
    mask = np.zeros(shape, dtype=bool)
    mask[top : top + crop.shape[0], left : left + crop.shape[1]] = crop
    return mask


def _check_array(temperatures_c) -> np.ndarray:
    t = np.asarray(temperatures_c)
    if t.ndim != 2 or t.size == 0:
        raise ValueError(f"temperatures_c must be a non-empty 2-D array, not shape {t.shape}")
    if t.dtype.kind not in "fiu":
        raise ValueError("temperatures_c must hold numbers")
    return t


def _check_points(kind, points) -> np.ndarray:
    if kind not in KINDS:
        raise ValueError(f"Unknown mark kind {kind!r}; choose one of: {', '.join(KINDS)}.")
    try:
        array = np.asarray(points, dtype=np.float64)
    except (TypeError, ValueError):
        raise ValueError("points must be a list of [x, y] pairs of numbers")
    if array.ndim != 2 or array.shape[1] != 2:
        raise ValueError("points must be a list of [x, y] pairs of numbers")
    if not np.isfinite(array).all():
        raise ValueError("points must be finite numbers")
    needed = {"point": (1, 1), "rectangle": (2, 2), "ellipse": (2, 2), "polygon": (3, 10_000)}
    low, high = needed.get(kind, (2, 10_000))
    if not low <= len(array) <= high:
        wanted = f"{low}" if low == high else f"at least {low}"
        raise ValueError(f"A {kind} mark needs {wanted} points, not {len(array)}.")
    return array


def _outside(shape, kind) -> ValueError:
    height, width = shape
    return ValueError(
        f"The {kind} mark lies outside the {width}×{height} thermogram; draw it on the image."
    )


def _area_mask(shape, kind, points, single_pixel):
    """Return (top, left, mask) with the mask over the clipped bounding box."""
    height, width = shape
    if kind == "point":
        x, y = points[0]
        if not (-0.5 <= x < width - 0.5 and -0.5 <= y < height - 0.5):
            raise _outside(shape, kind)
        col, row = int(math.floor(x + 0.5)), int(math.floor(y + 0.5))
        half = 0 if single_pixel else POINT_SIZE_PX // 2
        top, bottom = max(row - half, 0), min(row + half, height - 1)
        left, right = max(col - half, 0), min(col + half, width - 1)
        return top, left, np.ones((bottom - top + 1, right - left + 1), dtype=bool)
    x_min, y_min = points.min(axis=0)
    x_max, y_max = points.max(axis=0)
    left, right = max(math.ceil(x_min), 0), min(math.floor(x_max), width - 1)
    top, bottom = max(math.ceil(y_min), 0), min(math.floor(y_max), height - 1)
    if left > right or top > bottom:
        if x_max < -0.5 or y_max < -0.5 or x_min > width - 0.5 or y_min > height - 0.5:
            raise _outside(shape, kind)
        raise ValueError(f"The {kind} mark covers no pixel centre; draw it larger.")
    ys = np.arange(top, bottom + 1, dtype=np.float64)[:, None]
    xs = np.arange(left, right + 1, dtype=np.float64)[None, :]
    if kind == "rectangle":
        mask = np.ones((len(ys), xs.shape[1]), dtype=bool)
    elif kind == "ellipse":
        cx, cy = (x_min + x_max) / 2, (y_min + y_max) / 2
        rx, ry = (x_max - x_min) / 2, (y_max - y_min) / 2
        if rx <= 0 or ry <= 0:
            raise ValueError("The ellipse mark has no width or no height; draw it larger.")
        mask = ((xs - cx) / rx) ** 2 + ((ys - cy) / ry) ** 2 <= 1.0
    else:
        mask = _inside_polygon(xs, ys, points)
    if not mask.any():
        raise ValueError(f"The {kind} mark covers no pixel centre; draw it larger.")
    return top, left, mask


def _inside_polygon(xs: np.ndarray, ys: np.ndarray, vertices: np.ndarray) -> np.ndarray:
    """Even-odd rule by casting a ray to +x, row by row (a scanline fill).

    Edges count as crossed for y in [y_low, y_high), so a centre on a left or top edge is
    inside and one on a right or bottom edge is outside, like pixel rasterisers do. Each
    edge crossing a row at x_cross flips the pixels of that row left of x_cross; the flips
    are written as two marks in a difference row and summed once, so the work grows with
    rows × edges plus pixels, not pixels × edges (a 500-corner polygon on 20 megapixels
    takes well under a second, not a dozen).
    """
    rows, width = ys.shape[0], xs.shape[1]
    top, left = ys[0, 0], xs[0, 0]
    start, end = vertices, np.roll(vertices, 1, axis=0)
    sloped = start[:, 1] != end[:, 1]
    start, end = start[sloped], end[sloped]
    y_low, y_high = np.minimum(start[:, 1], end[:, 1]), np.maximum(start[:, 1], end[:, 1])
    # Rows r (y = top + r) with y_low <= y < y_high, clipped to the box.
    first = np.clip(np.ceil(y_low - top), 0, rows).astype(np.intp)
    stop = np.clip(np.ceil(y_high - top), 0, rows).astype(np.intp)
    counts = np.maximum(stop - first, 0)
    edge = np.repeat(np.arange(len(start)), counts)
    row = np.repeat(first, counts) + (
        np.arange(counts.sum()) - np.repeat(np.cumsum(counts) - counts, counts)
    )
    y = top + row
    x0, y0, x1, y1 = end[edge, 0], end[edge, 1], start[edge, 0], start[edge, 1]
    x_cross = x0 + (y - y0) * (x1 - x0) / (y1 - y0)
    # Pixels with x < x_cross flip: the first ceil(x_cross) - left of the row.
    flipped = np.clip(np.ceil(x_cross - left), 0, width).astype(np.intp)
    flips = np.zeros((rows, width + 1), dtype=np.uint8)
    np.add.at(flips, (row, 0), 1)
    np.add.at(flips, (row, flipped), 1)
    return (np.cumsum(flips[:, :width], axis=1, dtype=np.uint32) & 1).astype(bool)


def _summary(values: np.ndarray, xs: np.ndarray, ys: np.ndarray) -> dict:
    """Statistics of `values` at positions (xs, ys), leaving NaN out."""
    finite = np.isfinite(values)
    count = int(finite.sum())
    result = {"count": count, "nan_count": int(values.size - count)}
    if count == 0:
        result.update(min=None, max=None, mean=None, std=None, hottest=None, coldest=None)
        return result
    if count < values.size:
        values, xs, ys = values[finite], xs[finite], ys[finite]
    values = values.astype(np.float64, copy=False)
    hot, cold = int(values.argmax()), int(values.argmin())
    mean = float(values.mean())
    result.update(
        min=float(values[cold]),
        max=float(values[hot]),
        mean=mean,
        std=float(np.sqrt(np.mean((values - mean) ** 2))),
        hottest=[_coordinate(xs[hot]), _coordinate(ys[hot])],
        coldest=[_coordinate(xs[cold]), _coordinate(ys[cold])],
    )
    return result


def _coordinate(value) -> int | float:
    value = float(value)
    return int(value) if value.is_integer() else round(value, 2)


def _statistics(t: np.ndarray, kind: str, points, single_pixel: bool) -> dict:
    points = _check_points(kind, points)
    if kind == "line":
        return _line_statistics(t, points)
    top, left, mask = _area_mask(t.shape, kind, points, single_pixel)
    crop = t[top : top + mask.shape[0], left : left + mask.shape[1]]
    return _area_summary(crop, mask, top, left)


def _area_summary(crop: np.ndarray, mask: np.ndarray, top: int, left: int) -> dict:
    """Statistics of the pixels of `crop` under `mask`, without listing their positions."""
    values = crop.astype(np.float64)
    valid = mask & np.isfinite(values)
    count = int(np.count_nonzero(valid))
    result = {"count": count, "nan_count": int(np.count_nonzero(mask)) - count}
    if count == 0:
        result.update(min=None, max=None, mean=None, std=None, hottest=None, coldest=None)
        return result
    hot = int(np.where(valid, values, -np.inf).argmax())
    cold = int(np.where(valid, values, np.inf).argmin())
    inside = values[valid]
    mean = float(inside.mean())
    width = mask.shape[1]
    result.update(
        min=float(values.flat[cold]),
        max=float(values.flat[hot]),
        mean=mean,
        std=float(np.sqrt(np.mean((inside - mean) ** 2))),
        hottest=[left + hot % width, top + hot // width],
        coldest=[left + cold % width, top + cold // width],
    )
    return result


def _line_statistics(t: np.ndarray, points: np.ndarray) -> dict:
    height, width = t.shape
    inside = (
        (points[:, 0] >= -0.5)
        & (points[:, 0] <= width - 0.5)
        & (points[:, 1] >= -0.5)
        & (points[:, 1] <= height - 0.5)
    )
    if not inside.all():
        raise _outside(t.shape, "line")
    # Ends within half a pixel of the border read the border pixel.
    points = np.clip(points, 0, [width - 1, height - 1])
    segments = np.diff(points, axis=0)
    lengths = np.hypot(segments[:, 0], segments[:, 1])
    total = float(lengths.sum())
    if total == 0:
        raise ValueError("The line mark has no length; draw it between two places.")
    distances = np.linspace(0.0, total, max(2, int(math.ceil(total)) + 1))
    along = np.concatenate([[0.0], np.cumsum(lengths)])
    xs = np.interp(distances, along, points[:, 0])
    ys = np.interp(distances, along, points[:, 1])
    samples = _bilinear(t, xs, ys)
    result = _summary(samples, xs, ys)
    distances, samples = profile_extremes(distances, samples)
    result["profile"] = [
        [float(d), float(v) if math.isfinite(v) else None]
        for d, v in zip(distances, samples, strict=True)
    ]
    return result


def profile_extremes(
    distances: np.ndarray, values: np.ndarray, max_samples: int = MAX_PROFILE_SAMPLES
) -> tuple[np.ndarray, np.ndarray]:
    """A profile of at most `max_samples` points keeping its extremes.

    Longer profiles keep their first and last sample and are cut into
    (max_samples - 2) // 2 stretches of (nearly) equal length; each stretch keeps its
    coldest and its hottest sample, in order of distance, so every peak and dip of the line
    stays in the profile and its min and max are the line's (a plain min/max decimation, as
    chart libraries draw long series). A stretch of NaN keeps one NaN, so gaps stay visible.

    Examples
    --------
    >>> d = np.arange(10.0)
    >>> v = np.array([5, 1, 5, 5, 9, 5, 5, 5, 0, 5.0])
    >>> profile_extremes(d, v, 6)[1].tolist()
    [5.0, 1.0, 9.0, 5.0, 0.0, 5.0]
    """
    count = len(values)
    if count <= max_samples:
        return distances, values
    stretches = max(1, (max_samples - 2) // 2)
    bounds = np.linspace(0, count, stretches + 1).astype(np.intp)
    keep = {0, count - 1}
    low = np.where(np.isnan(values), np.inf, values)
    high = np.where(np.isnan(values), -np.inf, values)
    for start, stop in zip(bounds[:-1], bounds[1:], strict=True):
        if stop <= start:
            continue
        coldest = start + int(np.argmin(low[start:stop]))
        hottest = start + int(np.argmax(high[start:stop]))
        keep.update((coldest, hottest))
    order = np.array(sorted(keep), dtype=np.intp)
    return distances[order], values[order]


def _bilinear(t: np.ndarray, xs: np.ndarray, ys: np.ndarray) -> np.ndarray:
    """Bilinear samples at (xs, ys) inside [0, W-1]×[0, H-1]; NaN if a neighbour is NaN."""
    height, width = t.shape
    x0 = np.clip(np.floor(xs).astype(np.intp), 0, max(width - 2, 0))
    y0 = np.clip(np.floor(ys).astype(np.intp), 0, max(height - 2, 0))
    x1, y1 = np.minimum(x0 + 1, width - 1), np.minimum(y0 + 1, height - 1)
    fx, fy = xs - x0, ys - y0
    # Gather the four neighbours first and widen only them (not the whole image) to float64.
    v00, v01 = t[y0, x0].astype(np.float64), t[y0, x1].astype(np.float64)
    v10, v11 = t[y1, x0].astype(np.float64), t[y1, x1].astype(np.float64)
    top = v00 * (1 - fx) + v01 * fx
    bottom = v10 * (1 - fx) + v11 * fx
    # An exact zero weight must not let a NaN neighbour poison the sample.
    top = np.where(fx == 0, v00, np.where(fx == 1, v01, top))
    bottom = np.where(fx == 0, v10, np.where(fx == 1, v11, bottom))
    sample = top * (1 - fy) + bottom * fy
    return np.where(fy == 0, top, np.where(fy == 1, bottom, sample))
