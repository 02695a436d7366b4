"""Automatic proposals of marks: where an inspector should look first.

Three detectors, one per kind of survey, each returning :class:`Proposal` objects the
inspector accepts (it becomes an ordinary mark) or rejects:

- :func:`propose_envelope`: connected regions of a building's inside surface whose surface
  RH reaches the mould limit, or whose temperature factor is below a chosen fRsi, for the
  recorded indoor (and outdoor) conditions [ISO13788];
- :func:`propose_hot_spots`: local maxima that stand above their surroundings and above
  the image's like components, with a reference mark on a like component [NETA-MTS];
- :func:`propose_roof`: regions of a night roof survey warmer than the roof field's
  background, with a wet-area estimate [ASTMC1153].

Input is the thermogram's surface temperature array, °C: the *corrected* array when the
thermogram records emissivity and reflected temperature (the caller corrects with
:func:`survey.thermal.object_temperature`, as it does for readings), otherwise the
apparent one. Nothing here corrects again: a proposal is a pointer to a place, and the
accepted mark is measured like any other.

Coordinates follow :mod:`survey.thermal.marks`: pixels, x to the right, y down, pixel
centres at whole numbers. A region's polygon runs along pixel edges (half-integer
coordinates) before simplification, so it covers exactly the region's pixels under the
marks' centre-inside rule.

The defaults were chosen on the synthetic benchmark scenes of the tests with seed
``TUNING_SEED`` and are reported on another seed (docs/references.md § Anomaly proposals).
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import asdict, dataclass, field

import numpy as np

from survey.thermal import _checks
from survey.thermal.marks import mark_mask
from survey.thermal.psychrometrics import (
    critical_temperature_factor,
    surface_rh,
    temperature_factor,
)

TUNING_SEED = 1801
"""Seed of the benchmark scenes the default thresholds were chosen on."""

MOULD_LIMIT_RH_PCT = 80.0
"""Surface RH at which mould growth becomes possible over time [ISO13788]."""

ENVELOPE_MIN_AREA_PX = 40
ROOF_MIN_RISE_C = 0.9
ROOF_MIN_AREA_PX = 100
HOT_SPOT_MIN_RISE_C = 3.0
MAX_CORNERS = 500
SIMPLIFY_TOLERANCE_PX = 0.75

CATEGORIES = ("envelope", "hot_spot", "reference", "roof")
SURVEY_KINDS = ("envelope", "roof", "electrical", "mechanical")

# Hot-spot geometry, in pixels: a maximum must be the largest value within PEAK_RADIUS;
# its surroundings are the ring from RING_INNER to RING_OUTER around it (outside a hot
# terminal of a few pixels, still on the component it sits on).
_PEAK_RADIUS = 4
_RING_INNER = 6
_RING_OUTER = 9
_SPOT_WINDOW = 24
_MIN_COMPONENT_PX = 30
_MAX_COMPONENTS = 200
# Like components: areas and bounding-box sides within these ratios (common practice of
# comparing phases of the same device; no single source).
_LIKE_AREA_RATIO = 1.6
_LIKE_SIDE_RATIO = 1.5
# ... and body temperatures (medians) within 2 K or a fifth of their rise over the image.
_LIKE_BODY_K = 2.0
_LIKE_BODY_SHARE = 0.2
_OBJECT_MIN_STEP_K = 1.0
_OBJECT_SHARE = 0.25
# Surroundings: this percentile of the ring, so that a ridge (a cable, a busbar edge)
# crossing the ring counts as surroundings and only a spot stands out.
_RING_PERCENTILE = 90.0
# Roof background: a quadratic surface fitted robustly to a grid of about this many
# samples; outliers beyond this many robust standard deviations are left out.
_BACKGROUND_SAMPLES = 20_000
_BACKGROUND_ITERATIONS = 4
_BACKGROUND_CLIP = 2.5


@dataclass(frozen=True)
class Proposal:
    """A proposed mark: what to draw, why, and how strongly.

    ``category`` is ``"envelope"``, ``"hot_spot"``, ``"reference"`` or ``"roof"``;
    ``kind`` and ``points`` are a mark as :func:`survey.thermal.mark_statistics` takes it
    (``"polygon"``, ``"ellipse"`` or ``"point"``); ``reason`` says in a line why it was
    proposed; ``score`` ranks proposals of one category (kelvin beyond the criterion:
    below the limit temperature for envelopes, rise for hot spots and roofs); ``stats``
    holds the numbers behind the reason (°C, K, pixels, m²; positions as [x, y]).
    """

    category: str
    kind: str
    points: list
    reason: str
    score: float
    stats: dict = field(default_factory=dict)

    def as_dict(self) -> dict:
        """Plain JSON-ready data."""
        return asdict(self)


# --------------------------------------------------------------------------------------
# Regions: connected-component labelling, outlines, overlap


def label_regions(mask, *, connectivity: int = 8) -> tuple[np.ndarray, int]:
    """Label the connected regions of a boolean mask.

    Parameters
    ----------
    mask : H×W array_like of bool
    connectivity : {4, 8}
        4: pixels touching by a side are connected; 8: also by a corner.

    Returns
    -------
    (labels, count)
        int32 H×W array, 0 outside the mask and 1…count inside, numbered in raster order
        of each region's first pixel; and the number of regions.

    Notes
    -----
    Two passes over runs of pixels rather than pixels [Rosenfeld1966]: each row's runs are
    found with one ``diff``; runs of neighbouring rows that overlap are joined by a
    vectorised union-find (hooking roots to the smaller index, then pointer jumping)
    [Tarjan1975]; the labels are painted back with a cumulative sum.

    Examples
    --------
    >>> labels, count = label_regions([[1, 0, 1], [0, 1, 0], [0, 0, 1]], connectivity=4)
    >>> count, labels.tolist()
    (4, [[1, 0, 2], [0, 3, 0], [0, 0, 4]])
    >>> label_regions([[1, 0, 1], [0, 1, 0], [0, 0, 1]])[1]
    1
    """
    array = np.asarray(mask)
    if array.ndim != 2:
        raise ValueError(f"mask must be a 2-D array, not shape {array.shape}")
    if connectivity not in (4, 8):
        raise ValueError("connectivity must be 4 or 8.")
    runs = _label_runs(array.astype(bool, copy=False), connectivity)
    return _paint(runs, array.shape), runs.count


@dataclass
class _Runs:
    rows: np.ndarray
    starts: np.ndarray
    ends: np.ndarray  # exclusive
    labels: np.ndarray  # 1…count per run
    count: int


def _label_runs(mask: np.ndarray, connectivity: int) -> _Runs:
    height, width = mask.shape
    padded = np.zeros((height, width + 2), dtype=np.int8)
    padded[:, 1:-1] = mask
    changes = np.diff(padded, axis=1).ravel()
    stride = width + 1
    start_index = np.flatnonzero(changes == 1)
    end_index = np.flatnonzero(changes == -1)
    rows = start_index // stride
    starts = start_index - rows * stride
    ends = end_index - rows * stride
    n = len(rows)
    if n == 0:
        empty = np.zeros(0, dtype=np.int64)
        return _Runs(empty, empty, empty, empty.astype(np.int32), 0)
    # Keys order the runs of all rows on one axis; a row's keys never reach the next's.
    key_stride = width + 2
    start_key = rows * key_stride + starts
    end_key = rows * key_stride + ends
    reach = 1 if connectivity == 8 else 0
    below = np.flatnonzero(rows > 0)
    previous = (rows[below] - 1) * key_stride
    first = np.searchsorted(end_key, previous + starts[below] - reach, side="right")
    last = np.searchsorted(start_key, previous + ends[below] + reach, side="left")
    counts = np.maximum(last - first, 0)
    total = int(counts.sum())
    a = np.repeat(below, counts)
    offsets = np.arange(total) - np.repeat(np.cumsum(counts) - counts, counts)
    b = np.repeat(first, counts) + offsets
    parent = _union(n, a, b)
    roots, labels = np.unique(parent, return_inverse=True)
    return _Runs(rows, starts, ends, (labels + 1).astype(np.int32), len(roots))


def _union(n: int, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Root (smallest run index) of every run's component, for edges a–b."""
    parent = np.arange(n)
    # Each round hooks at least one root under a smaller one, so n rounds always suffice;
    # runs of real images need a handful.
    for _ in range(n + 1):
        root_a, root_b = parent[a], parent[b]
        differ = root_a != root_b
        if not differ.any():
            break
        a, b = a[differ], b[differ]
        root_a, root_b = root_a[differ], root_b[differ]
        np.minimum.at(parent, np.maximum(root_a, root_b), np.minimum(root_a, root_b))
        # Pointer jumping halves every path: 64 steps cover any index that fits in int64.
        for _ in range(64):
            grand = parent[parent]
            if np.array_equal(grand, parent):
                break
            parent = grand
    return parent


def _paint(runs: _Runs, shape: tuple[int, int]) -> np.ndarray:
    height, width = shape
    labels = np.zeros(height * width + 1, dtype=np.int32)
    if runs.count:
        base = runs.rows * width
        ending = np.zeros_like(labels)
        labels[base + runs.starts] = runs.labels
        ending[base + runs.ends] = runs.labels
        labels -= ending
        np.cumsum(labels, out=labels)
    return labels[:-1].reshape(shape)


def region_outline(
    mask,
    *,
    connectivity: int = 8,
    tolerance_px: float = SIMPLIFY_TOLERANCE_PX,
    max_corners: int = MAX_CORNERS,
) -> list[list[float]]:
    """Polygon around the outer edge of the first region of a mask (raster order).

    Parameters
    ----------
    mask : H×W array_like of bool
    connectivity : {4, 8}
        How the region's pixels connect; 8 keeps pixels touching by a corner together.
    tolerance_px : float
        Largest distance, px, between the outline and its simplification.
    max_corners : int
        Upper bound on the corners returned (≥ 4); the tolerance grows until it holds.

    Returns
    -------
    list of [x, y]
        Corners, clockwise on screen. Holes are not traced: the polygon covers them. A
        region so thin that its simplification would cover none of it keeps its exact
        outline (or, beyond ``max_corners``, its bounding box).

    Notes
    -----
    The outline follows the pixel edges between the region and the rest (a crack
    boundary), turning at corners where only diagonal pixels meet towards the region for
    8-connectivity and away from it for 4-connectivity. It is then simplified by the
    Douglas–Peucker algorithm [Douglas1973].

    Examples
    --------
    >>> region_outline([[0, 0, 0], [0, 1, 1], [0, 1, 1]])
    [[0.5, 0.5], [2.5, 0.5], [2.5, 2.5], [0.5, 2.5]]
    """
    array = np.asarray(mask, dtype=bool)
    if array.ndim != 2:
        raise ValueError(f"mask must be a 2-D array, not shape {array.shape}")
    if max_corners < 4:
        raise ValueError("max_corners must be at least 4.")
    rows = np.flatnonzero(array.any(axis=1))
    if len(rows) == 0:
        raise ValueError("mask holds no region to outline.")
    top = int(rows[0])
    cols = np.flatnonzero(array.any(axis=0))
    crop = array[top : rows[-1] + 1, cols[0] : cols[-1] + 1]
    labels, _ = label_regions(crop, connectivity=connectivity)
    region = labels == labels[0, np.flatnonzero(crop[0])[0]]
    return _covering_polygon(region, top, int(cols[0]), connectivity, tolerance_px, max_corners)


# Directions, clockwise on screen (y down): east, south, west, north.
_STEPS = np.array([[1, 0], [0, 1], [-1, 0], [0, -1]])


def _without_holes(mask: np.ndarray, connectivity: int) -> np.ndarray:
    """The region with its holes filled: everything the outside cannot reach."""
    padded = np.zeros((mask.shape[0] + 2, mask.shape[1] + 2), dtype=bool)
    padded[1:-1, 1:-1] = mask
    # The background connects the other way round: 4 around an 8-connected region.
    outside, _ = label_regions(~padded, connectivity=12 - connectivity)
    return (outside != outside[0, 0])[1:-1, 1:-1]


def _crack_outline(mask: np.ndarray, connectivity: int) -> np.ndarray:
    """Corners (x, y) of the outer crack boundary of the region holding the first pixel.

    Vertex (i, j) is the top-left corner of pixel (i, j) of `mask`, at x = j, y = i in the
    returned coordinates (shift by −0.5 for pixel-centre coordinates).
    """
    height, width = mask.shape
    padded = np.zeros((height + 2, width + 2), dtype=bool)
    padded[1:-1, 1:-1] = mask
    core = padded[1:-1, 1:-1]
    vertex_cols = width + 1
    # Each boundary edge, walked with the region on its right: top edges go east, right
    # edges south, bottom edges west, left edges north.
    sides = (
        (core & ~padded[:-2, 1:-1], (0, 0), (0, 1)),
        (core & ~padded[1:-1, 2:], (0, 1), (1, 1)),
        (core & ~padded[2:, 1:-1], (1, 1), (1, 0)),
        (core & ~padded[1:-1, :-2], (1, 0), (0, 0)),
    )
    starts, ends, directions = [], [], []
    for direction, (on_edge, start, end) in enumerate(sides):
        r, c = np.nonzero(on_edge)
        starts.append((r + start[0]) * vertex_cols + c + start[1])
        ends.append((r + end[0]) * vertex_cols + c + end[1])
        directions.append(np.full(len(r), direction))
    start = np.concatenate(starts)
    end = np.concatenate(ends)
    direction = np.concatenate(directions)
    table = np.full((height + 1) * vertex_cols * 4, -1, dtype=np.int64)
    table[start * 4 + direction] = np.arange(len(start))
    # At a vertex where only diagonal pixels meet there are two ways on: turning left
    # joins them (8-connectivity), turning right keeps them apart (4-connectivity).
    turns = (3, 0, 1) if connectivity == 8 else (1, 0, 3)
    following = np.full(len(start), -1, dtype=np.int64)
    for turn in turns:
        candidate = table[end * 4 + (direction + turn) % 4]
        following = np.where(following < 0, candidate, following)
    # The first top edge (raster order) lies on the outer boundary of the first region,
    # and the edge before it comes up that pixel's left side: its start is a corner.
    first, previous = 0, 3
    successor = following.tolist()
    heading = direction.tolist()
    corners = []
    edge = first
    for _ in range(len(successor)):  # a loop visits each edge at most once
        if heading[edge] != previous:
            corners.append(start[edge])
        previous = heading[edge]
        edge = successor[edge]
        if edge == first:
            break
    vertices = np.asarray(corners)
    return np.column_stack([vertices % vertex_cols, vertices // vertex_cols]).astype(float)


def _simplify_bounded(corners: np.ndarray, tolerance: float, max_corners: int) -> list:
    kept = _simplify(corners, tolerance)
    # Each try widens the tolerance by half: 40 tries reach 10⁷ times the start.
    for _ in range(40):
        if len(kept) <= max_corners:
            break
        tolerance = max(tolerance, 0.5) * 1.5
        kept = _simplify(corners, tolerance)
    return [[_coordinate(x), _coordinate(y)] for x, y in kept]


def _simplify(points: np.ndarray, tolerance: float) -> np.ndarray:
    """Douglas–Peucker simplification of a closed polygon [Douglas1973]."""
    n = len(points)
    if n <= 4 or tolerance <= 0:
        return points
    closed = np.vstack([points, points[:1]])
    far = int(np.argmax(np.hypot(*(points - points[0]).T)))
    keep = np.zeros(n, dtype=bool)
    keep[[0, far]] = True
    stack = [(0, far), (far, n)]
    # Every pop either keeps a new point (at most n) or closes a span: 2n + 2 pops at most.
    for _ in range(2 * n + 2):
        if not stack:
            break
        i, j = stack.pop()
        if j - i < 2:
            continue
        a, b = closed[i], closed[j]
        between = closed[i + 1 : j]
        dx, dy = b - a
        length = math.hypot(dx, dy)
        if length == 0:
            distance = np.hypot(*(between - a).T)
        else:
            distance = np.abs(dx * (between[:, 1] - a[1]) - dy * (between[:, 0] - a[0])) / length
        k = int(np.argmax(distance))
        if distance[k] > tolerance:
            middle = i + 1 + k
            keep[middle % n] = True
            stack.extend(((i, middle), (middle, j)))
    return points[keep]


def iou(mask_a, mask_b) -> float:
    """Intersection over union of two boolean masks of the same shape (0 when both empty).

    Examples
    --------
    >>> a = np.zeros((4, 4), bool); a[:2] = True
    >>> b = np.zeros((4, 4), bool); b[1:3] = True
    >>> round(iou(a, b), 3)
    0.333
    """
    a, b = np.asarray(mask_a, dtype=bool), np.asarray(mask_b, dtype=bool)
    if a.shape != b.shape:
        raise ValueError(f"masks differ in shape: {a.shape} and {b.shape}")
    union = int(np.count_nonzero(a | b))
    return int(np.count_nonzero(a & b)) / union if union else 0.0


def same_place(
    a, b, shape: tuple[int, int], *, min_iou: float = 0.5, max_distance_px: float = 3.0
) -> bool:
    """Whether two marks or proposals point at the same place of a thermogram.

    Each is a :class:`Proposal`, a dict or an object with ``kind`` and ``points``. Two
    area marks are the same place when their pixel masks overlap by at least ``min_iou``;
    when either is a point, when the point lies within ``max_distance_px`` of the other
    point or inside the other area. This is how a rejected proposal keeps a new one with
    the same place from being proposed again.

    Examples
    --------
    >>> square = {"kind": "rectangle", "points": [[0, 0], [9, 9]]}
    >>> shifted = {"kind": "rectangle", "points": [[2, 0], [11, 9]]}
    >>> far = {"kind": "point", "points": [[15, 15]]}
    >>> same_place(square, shifted, (20, 20)), same_place(square, far, (20, 20))
    (True, False)
    """
    kind_a, points_a = _kind_points(a)
    kind_b, points_b = _kind_points(b)
    if kind_a == "point" or kind_b == "point":
        if kind_a == kind_b:
            (xa, ya), (xb, yb) = points_a[0], points_b[0]
            return math.hypot(xa - xb, ya - yb) <= max_distance_px
        (x, y), (area_kind, area_points) = (
            (points_a[0], (kind_b, points_b))
            if kind_a == "point"
            else (points_b[0], (kind_a, points_a))
        )
        if area_kind == "line":
            return False
        area = mark_mask(shape, area_kind, area_points)
        col, row = int(math.floor(x + 0.5)), int(math.floor(y + 0.5))
        return 0 <= row < shape[0] and 0 <= col < shape[1] and bool(area[row, col])
    if "line" in (kind_a, kind_b):
        return False
    return iou(mark_mask(shape, kind_a, points_a), mark_mask(shape, kind_b, points_b)) >= min_iou


def drop_rejected(
    proposals: Iterable[Proposal],
    rejected: Iterable,
    shape: tuple[int, int],
    *,
    min_iou: float = 0.5,
) -> list[Proposal]:
    """The proposals that are not in the same place as any rejected one (:func:`same_place`).

    Examples
    --------
    >>> p = Proposal("roof", "rectangle", [[0, 0], [9, 9]], "test", 1.0)
    >>> drop_rejected([p], [{"kind": "rectangle", "points": [[1, 1], [9, 9]]}], (20, 20))
    []
    """
    rejected = list(rejected)
    return [
        proposal
        for proposal in proposals
        if not any(same_place(proposal, old, shape, min_iou=min_iou) for old in rejected)
    ]


def _kind_points(mark) -> tuple[str, list]:
    if isinstance(mark, dict):
        return mark["kind"], mark["points"]
    return mark.kind, mark.points


# --------------------------------------------------------------------------------------
# Image helpers


def _check_image(temperatures_c) -> np.ndarray:
    t = np.asarray(temperatures_c)
    if t.ndim != 2 or t.shape[0] < 3 or t.shape[1] < 3:
        raise ValueError(f"temperatures_c must be a 2-D array of at least 3×3, not shape {t.shape}")
    if t.dtype.kind not in "fiu":
        raise ValueError("temperatures_c must hold numbers")
    t = t.astype(np.float64, copy=False)
    if not np.isfinite(t).any():
        raise ValueError("temperatures_c holds no finite temperature.")
    return t


def _box_sum(values: np.ndarray, radius: int) -> np.ndarray:
    """Sum over the (2r+1)² window around each pixel, clipped at the border."""
    height, width = values.shape
    size = 2 * radius + 1
    # Zero padding plus one leading zero row/column: each sum is a difference of two
    # contiguous slices of a cumulative sum.
    rows = np.zeros((height + size, width))
    np.cumsum(values, axis=0, out=rows[radius + 1 : radius + 1 + height])
    rows[radius + 1 + height :] = rows[radius + height]
    summed = rows[size:] - rows[:-size]
    cols = np.zeros((height, width + size))
    np.cumsum(summed, axis=1, out=cols[:, radius + 1 : radius + 1 + width])
    cols[:, radius + 1 + width :] = cols[:, radius + width : radius + width + 1]
    return cols[:, size:] - cols[:, :-size]


def _box_mean(t: np.ndarray, radius: int) -> np.ndarray:
    """Mean of the finite values in the (2r+1)² window; NaN where the window has none."""
    if radius <= 0:
        return t
    finite = np.isfinite(t)
    if finite.all():
        total = _box_sum(t, radius)
        height, width = t.shape
        rows = _window_counts(height, radius)
        cols = _window_counts(width, radius)
        total /= np.multiply.outer(rows, cols)
        return total
    total = _box_sum(np.where(finite, t, 0.0), radius)
    count = _box_sum(finite.astype(np.float64), radius)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(count > 0.5, total / np.maximum(count, 1.0), np.nan)


def _window_counts(length: int, radius: int) -> np.ndarray:
    """How many of the 2r+1 positions around each index lie inside [0, length)."""
    index = np.arange(length)
    return (np.minimum(index + radius, length - 1) - np.maximum(index - radius, 0) + 1).astype(
        np.float64
    )


def _majority(flags: np.ndarray) -> np.ndarray:
    """True where more than half of the 3 × 3 neighbourhood (clipped at the border) is."""
    height, width = flags.shape
    padded = np.zeros((height + 2, width + 2), dtype=np.uint8)
    padded[1:-1, 1:-1] = flags
    votes = padded[:-2, 1:-1] + padded[2:, 1:-1]
    votes += padded[1:-1, 1:-1]
    rows = votes.copy()
    votes_padded = np.zeros((height, width + 2), dtype=np.uint8)
    votes_padded[:, 1:-1] = rows
    votes = votes_padded[:, :-2] + votes_padded[:, 2:]
    votes += rows
    # The window holds 9 pixels inside, 6 along an edge and 4 at a corner.
    row_count = np.full(height, 3, dtype=np.uint8)
    row_count[[0, -1]] = 2
    col_count = np.full(width, 3, dtype=np.uint8)
    col_count[[0, -1]] = 2
    return 2 * votes > np.multiply.outer(row_count, col_count)


def _max_filter(values: np.ndarray, radius: int) -> np.ndarray:
    """Largest value in the (2r+1)² window (separable; −inf padding)."""
    height, width = values.shape
    padded = np.full((height + 2 * radius, width), -np.inf)
    padded[radius : radius + height] = values
    rows = padded[:height].copy()
    for k in range(1, 2 * radius + 1):
        np.maximum(rows, padded[k : k + height], out=rows)
    padded = np.full((height, width + 2 * radius), -np.inf)
    padded[:, radius : radius + width] = rows
    out = padded[:, :width].copy()
    for k in range(1, 2 * radius + 1):
        np.maximum(out, padded[:, k : k + width], out=out)
    return out


def _coordinate(value) -> int | float:
    value = float(value)
    return int(value) if value.is_integer() else round(value, 2)


def _area_text(area_px: int, pixel_size_m: float | None) -> str:
    if pixel_size_m is None:
        return f"{area_px} px"
    area = area_px * pixel_size_m**2
    return f"{area:.2f} m²" if area < 10 else f"{area:.1f} m²"


def _minimum_area_px(min_area_px, min_area_m2, pixel_size_m) -> int:
    smallest = int(_checks.in_range(min_area_px, "min_area_px", 1, np.inf))
    if min_area_m2 is not None:
        if pixel_size_m is None:
            raise ValueError(
                "min_area_m2 needs pixel_size_m (the side of one pixel on the target)."
            )
        area = float(_checks.positive(min_area_m2, "min_area_m2", " m²"))
        smallest = max(1, math.ceil(area / pixel_size_m**2))
    return smallest


def _pixel_size(pixel_size_m) -> float | None:
    if pixel_size_m is None:
        return None
    return float(_checks.positive(pixel_size_m, "pixel_size_m", " m"))


@dataclass
class _Region:
    label: int
    top: int
    left: int
    mask: np.ndarray  # over the bounding box

    @property
    def area_px(self) -> int:
        return int(np.count_nonzero(self.mask))


def _regions(flagged: np.ndarray, min_area_px: int, limit: int) -> list[_Region]:
    """Connected regions of at least min_area_px pixels, at most `limit` (largest first)."""
    runs = _label_runs(flagged, 8)
    if runs.count == 0:
        return []
    areas = np.bincount(runs.labels, weights=runs.ends - runs.starts, minlength=runs.count + 1)
    big = np.flatnonzero(areas >= min_area_px)
    big = big[big > 0]
    if len(big) == 0:
        return []
    big = big[np.argsort(-areas[big], kind="stable")][: max(limit * 4, limit)]
    labels = _paint(runs, flagged.shape)
    regions = []
    for label in big.tolist():
        mine = runs.labels == label
        top, bottom = int(runs.rows[mine].min()), int(runs.rows[mine].max())
        left, right = int(runs.starts[mine].min()), int(runs.ends[mine].max())
        crop = labels[top : bottom + 1, left:right] == label
        regions.append(_Region(label, top, left, crop))
    return regions


def _outline(region: _Region, max_corners: int) -> list:
    return _covering_polygon(
        region.mask, region.top, region.left, 8, SIMPLIFY_TOLERANCE_PX, max_corners
    )


def _covering_polygon(
    mask: np.ndarray, top: int, left: int, connectivity: int, tolerance: float, max_corners: int
) -> list:
    """Simplified outline of the region holding the crop's first pixel, in image
    coordinates, that still covers the region (IoU ≥ 0.5 with its pixels).

    A thin region (a line of pixels) can simplify to a sliver that covers no pixel centre;
    then the exact outline is used, or when that has too many corners the bounding box.
    """
    crack = _crack_outline(mask, connectivity) - 0.5  # pixel-centre coordinates of the crop
    filled = _without_holes(mask, connectivity)
    for tried in (tolerance, 0.0):
        points = _simplify_bounded(crack, tried, max_corners)
        if 3 <= len(points) <= max_corners:
            if iou(mark_mask(mask.shape, "polygon", points), filled) >= 0.5:
                return [[_coordinate(x + left), _coordinate(y + top)] for x, y in points]
    height, width = mask.shape
    box = [[-0.5, -0.5], [width - 0.5, -0.5], [width - 0.5, height - 0.5], [-0.5, height - 0.5]]
    return [[_coordinate(x + left), _coordinate(y + top)] for x, y in box]


def _extreme(t: np.ndarray, region: _Region, coldest: bool) -> tuple[float, list[int]]:
    crop = t[
        region.top : region.top + region.mask.shape[0],
        region.left : region.left + region.mask.shape[1],
    ]
    fill = np.inf if coldest else -np.inf
    values = np.where(region.mask & np.isfinite(crop), crop, fill)
    index = int(values.argmin() if coldest else values.argmax())
    row, col = divmod(index, region.mask.shape[1])
    return float(values.flat[index]), [region.left + col, region.top + row]


def _region_mean(t: np.ndarray, region: _Region) -> float:
    crop = t[
        region.top : region.top + region.mask.shape[0],
        region.left : region.left + region.mask.shape[1],
    ]
    values = crop[region.mask]
    return float(np.nanmean(values)) if np.isfinite(values).any() else math.nan


# --------------------------------------------------------------------------------------
# Envelope


def mould_limit_temperature(t_inside_c, rh_inside_pct, limit_rh_pct=MOULD_LIMIT_RH_PCT):
    """Surface temperature at which the room air reaches a surface RH limit.

    Parameters
    ----------
    t_inside_c : float
        Indoor air temperature, °C.
    rh_inside_pct : float
        Indoor RH, %, in (0, 100].
    limit_rh_pct : float
        Surface RH limit, %: 80 for mould, 100 for condensation [ISO13788].

    Returns
    -------
    float
        θsi,min, °C: a surface at or below it reaches the limit (over ice below 0 °C).

    Notes
    -----
    θsi,min = θe + fRsi,min·(θi − θe) for any θe below θi, with fRsi,min from
    :func:`critical_temperature_factor` [ISO13788]: the outdoor temperature cancels out,
    so any value serves (θi − 10 K here).

    Examples
    --------
    >>> round(mould_limit_temperature(20.0, 50.0), 2)
    12.63
    """
    t_inside = float(_checks.temperature(t_inside_c, "t_inside_c"))
    t_outside = t_inside - 10.0
    factor = critical_temperature_factor(t_inside, rh_inside_pct, t_outside, limit_rh_pct)
    return _checks.result(t_outside + factor * (t_inside - t_outside))


def propose_envelope(
    temperatures_c,
    *,
    t_inside_c: float,
    rh_inside_pct: float,
    t_outside_c: float | None = None,
    f_rsi_min: float | None = None,
    limit_rh_pct: float = MOULD_LIMIT_RH_PCT,
    min_area_px: int = ENVELOPE_MIN_AREA_PX,
    min_area_m2: float | None = None,
    pixel_size_m: float | None = None,
    max_corners: int = MAX_CORNERS,
    max_proposals: int = 20,
) -> list[Proposal]:
    """Regions of an inside surface at risk of mould (or below a temperature factor).

    Parameters
    ----------
    temperatures_c : H×W array
        Surface temperatures of the inside of the envelope, °C (NaN = no data).
    t_inside_c, rh_inside_pct : float
        Indoor air temperature, °C, and RH, %, recorded for the survey.
    t_outside_c : float, optional
        Outdoor air temperature, °C; needed for ``f_rsi_min`` and reported as fRsi.
    f_rsi_min : float, optional
        A critical temperature factor chosen by the inspector (a design value); pixels
        with fRsi below it are flagged too. Left out, only the surface RH criterion
        applies, which is the same as fRsi below fRsi,min for the recorded conditions.
    limit_rh_pct : float
        Surface RH limit, %; 80 (mould, [ISO13788]) by default, 100 for condensation.
    min_area_px, min_area_m2 : int, float
        Smaller regions are ignored (``min_area_m2`` needs ``pixel_size_m``).
    pixel_size_m : float, optional
        Side of one pixel on the surface (:func:`survey.thermal.pixel_footprint_m`); with
        it, areas are also given in m².
    max_corners : int
        Most corners per polygon.
    max_proposals : int
        Most proposals returned, the strongest first.

    Returns
    -------
    list of Proposal
        ``category="envelope"``, ``kind="polygon"``; stats: ``area_px``, ``area_m2``,
        ``coldest_c``, ``coldest`` ([x, y]), ``mean_c``, ``surface_rh_pct`` (at the
        coldest point), ``limit_temperature_c``, ``margin_k`` (coldest minus the limit
        temperature: negative below it), and with ``t_outside_c`` ``f_rsi`` and with
        ``f_rsi_min`` ``f_rsi_min`` too. Score: kelvin below the threshold temperature.

    Notes
    -----
    Surface RH rises as the surface cools, so "surface RH ≥ limit" is "θs ≤ θsi,min"
    (:func:`mould_limit_temperature`) and "fRsi < f" is "θs < θe + f·(θi − θe)"
    [ISO13788]: the whole image is compared with one temperature, and the psychrometric
    functions run only at each region's coldest point. A majority vote over each pixel's
    3 × 3 neighbourhood then removes isolated pixels that camera noise pushed across the
    threshold without moving straight edges.

    Examples
    --------
    >>> wall = np.full((40, 60), 17.0); wall[5:20, 10:30] = 11.0
    >>> [p] = propose_envelope(wall, t_inside_c=20.0, rh_inside_pct=50.0, pixel_size_m=0.01)
    >>> p.kind, p.reason, p.stats["area_px"]
    ('polygon', 'surface RH 89 %, 0.03 m²', 296)
    """
    t = _check_image(temperatures_c)
    size = _pixel_size(pixel_size_m)
    smallest = _minimum_area_px(min_area_px, min_area_m2, size)
    limit_c = mould_limit_temperature(t_inside_c, rh_inside_pct, limit_rh_pct)
    threshold = limit_c
    factor_c = None
    if f_rsi_min is not None:
        if t_outside_c is None:
            raise ValueError("f_rsi_min needs t_outside_c (the outdoor air temperature).")
        f_min = float(_checks.in_range(f_rsi_min, "f_rsi_min", 0.0, 1.0))
        factor_c = t_outside_c + f_min * (t_inside_c - t_outside_c)
        threshold = max(threshold, factor_c)
    elif t_outside_c is not None:
        _checks.temperature(t_outside_c, "t_outside_c")
    with np.errstate(invalid="ignore"):
        flagged = _majority(t <= threshold) & np.isfinite(t)
    proposals = []
    for region in _regions(flagged, smallest, max_proposals):
        coldest_c, coldest_at = _extreme(t, region, coldest=True)
        stats = {
            "area_px": region.area_px,
            "area_m2": None if size is None else region.area_px * size**2,
            "coldest_c": coldest_c,
            "coldest": coldest_at,
            "mean_c": _region_mean(t, region),
            "surface_rh_pct": float(surface_rh(t_inside_c, rh_inside_pct, coldest_c)),
            "limit_rh_pct": float(limit_rh_pct),
            "limit_temperature_c": limit_c,
            "margin_k": coldest_c - limit_c,
        }
        if t_outside_c is not None and t_outside_c != t_inside_c:
            stats["f_rsi"] = float(temperature_factor(coldest_c, t_inside_c, t_outside_c))
        if factor_c is not None:
            stats["f_rsi_min"] = float(f_rsi_min)
            stats["f_rsi_temperature_c"] = factor_c
        proposals.append(
            Proposal(
                "envelope",
                "polygon",
                _outline(region, max_corners),
                proposal_reason("envelope", stats),
                float(threshold - coldest_c),
                stats,
            )
        )
    return _ranked(proposals, max_proposals)


# --------------------------------------------------------------------------------------
# Roof


def roof_background(temperatures_c, *, field_mask=None) -> np.ndarray:
    """Smooth background of a roof field: a quadratic surface fitted robustly, °C.

    Parameters
    ----------
    temperatures_c : H×W array, °C
    field_mask : H×W bool array, optional
        The roof field; pixels outside (parapets, sky) take no part in the fit.

    Returns
    -------
    H×W float64 array, °C.

    Notes
    -----
    Least squares on a grid of about 20 000 samples, refitted while leaving out samples
    further than 2.5 robust standard deviations (1.4826 × median absolute deviation) from
    the surface: warm wet areas, vents and cold patches do not pull the background, while
    the lens's fall-off towards the corners and slow gradients across the roof are
    followed (common practice of robust fitting; no single source).

    Examples
    --------
    >>> y, x = np.mgrid[0:50, 0:80]
    >>> roof = -3.0 + 0.01 * x; roof[10:20, 10:20] += 2.0
    >>> round(float(roof_background(roof)[15, 15]), 2)
    -2.85
    """
    t = _check_image(temperatures_c)
    height, width = t.shape
    step = max(1, int(math.sqrt(height * width / _BACKGROUND_SAMPLES)))
    ys = np.arange(0, height, step)
    xs = np.arange(0, width, step)
    sample = t[::step, ::step]
    use = np.isfinite(sample)
    if field_mask is not None:
        field_mask = np.asarray(field_mask, dtype=bool)
        if field_mask.shape != t.shape:
            raise ValueError("field_mask must have the shape of temperatures_c.")
        use &= field_mask[::step, ::step]
    u = 2.0 * xs / max(width - 1, 1) - 1.0
    v = 2.0 * ys / max(height - 1, 1) - 1.0
    uu, vv = np.meshgrid(u, v)
    design = np.column_stack(
        [
            np.ones(uu.size),
            uu.ravel(),
            vv.ravel(),
            uu.ravel() ** 2,
            (uu * vv).ravel(),
            vv.ravel() ** 2,
        ]
    )
    values = sample.ravel()
    inliers = use.ravel()
    if np.count_nonzero(inliers) < 12:
        level = float(np.nanmedian(t if field_mask is None else t[field_mask]))
        return np.full(t.shape, level)
    coefficients = np.zeros(6)
    filled = np.where(use.ravel(), values, 0.0)
    for _ in range(_BACKGROUND_ITERATIONS):
        # Normal equations of the 6 coefficients: well conditioned on coordinates in
        # [−1, 1], and a fraction of the cost of a full least-squares solver.
        weighted = design * inliers[:, None]
        coefficients = np.linalg.solve(weighted.T @ design, weighted.T @ filled)
        residual = values - design @ coefficients
        spread = 1.4826 * float(np.median(np.abs(residual[inliers])))
        spread = max(spread, 0.02)  # below the noise of any thermal camera
        keep = use.ravel() & (
            np.abs(np.nan_to_num(residual, nan=np.inf)) <= _BACKGROUND_CLIP * spread
        )
        if np.count_nonzero(keep) < 12 or np.array_equal(keep, inliers):
            break
        inliers = keep
    c0, c1, c2, c3, c4, c5 = coefficients
    u = 2.0 * np.arange(width) / max(width - 1, 1) - 1.0
    v = 2.0 * np.arange(height) / max(height - 1, 1) - 1.0
    return (c0 + c2 * v + c5 * v**2)[:, None] + (c1 * u + c3 * u**2)[None, :] + c4 * np.outer(v, u)


def propose_roof(
    temperatures_c,
    *,
    min_rise_c: float = ROOF_MIN_RISE_C,
    min_area_px: int = ROOF_MIN_AREA_PX,
    min_area_m2: float | None = None,
    pixel_size_m: float | None = None,
    field_mask=None,
    max_corners: int = MAX_CORNERS,
    max_proposals: int = 20,
) -> list[Proposal]:
    """Warm regions of a night roof survey: where insulation may be wet.

    Parameters
    ----------
    temperatures_c : H×W array
        Roof surface temperatures, °C, taken after sunset (NaN = no data).
    min_rise_c : float
        Least rise above the roof field's background, K.
    min_area_px, min_area_m2 : int, float
        Smaller regions (vents, drains, fasteners) are ignored.
    pixel_size_m : float, optional
        Side of one pixel on the roof; with it, wet areas are estimated in m².
    field_mask : H×W bool array, optional
        The roof field, when the image also shows parapets, walls or sky.
    max_corners, max_proposals
        As in :func:`propose_envelope`.

    Returns
    -------
    list of Proposal
        ``category="roof"``, ``kind="polygon"``; stats: ``area_px``, ``area_m2`` (the
        wet-area estimate), ``mean_rise_k``, ``max_rise_k``, ``warmest_c``, ``warmest``,
        ``background_c``. Score: mean rise, K.

    Notes
    -----
    Wet insulation holds the day's heat longer than dry insulation and shows warmer after
    sunset [ASTMC1153]. The background is :func:`roof_background`; a region is the
    connected pixels whose rise reaches ``min_rise_c``, after the same 3 × 3 majority vote
    as :func:`propose_envelope`.

    Examples
    --------
    >>> roof = np.full((60, 80), -2.0); roof[10:30, 20:40] += 2.0
    >>> [p] = propose_roof(roof, pixel_size_m=0.05)
    >>> p.reason, p.stats["area_px"]
    ('2.0 K above the roof field, wet area about 0.99 m²', 396)
    """
    t = _check_image(temperatures_c)
    size = _pixel_size(pixel_size_m)
    smallest = _minimum_area_px(min_area_px, min_area_m2, size)
    rise_floor = float(_checks.positive(min_rise_c, "min_rise_c", " K"))
    background = roof_background(t, field_mask=field_mask)
    raw_rise = t - background
    with np.errstate(invalid="ignore"):
        flagged = raw_rise >= rise_floor
    if field_mask is not None:
        flagged &= np.asarray(field_mask, dtype=bool)
    flagged = _majority(flagged) & np.isfinite(t)
    proposals = []
    for region in _regions(flagged, smallest, max_proposals):
        warmest_c, warmest_at = _extreme(t, region, coldest=False)
        mean_rise = _region_mean(raw_rise, region)
        stats = {
            "area_px": region.area_px,
            "area_m2": None if size is None else region.area_px * size**2,
            "mean_rise_k": mean_rise,
            "max_rise_k": _extreme(raw_rise, region, coldest=False)[0],
            "warmest_c": warmest_c,
            "warmest": warmest_at,
            "background_c": _region_mean(background, region),
        }
        proposals.append(
            Proposal(
                "roof",
                "polygon",
                _outline(region, max_corners),
                proposal_reason("roof", stats),
                float(mean_rise),
                stats,
            )
        )
    return _ranked(proposals, max_proposals)


# --------------------------------------------------------------------------------------
# Hot spots


@dataclass
class _Component:
    label: int
    area: int
    height: int
    width: int
    hottest_c: float
    hottest: tuple[int, int]  # (row, col)
    body_c: float  # median
    group: int = -1


def _warm_components(t: np.ndarray, smooth: np.ndarray) -> tuple[np.ndarray, list[_Component]]:
    """Label image and the warm objects standing clearly above the image's background."""
    sample = smooth[::2, ::2]
    sample = sample[np.isfinite(sample)]
    median, high = np.percentile(sample, [50.0, 99.5])
    # Objects stand a quarter of the way from the image's typical level (the back plate,
    # the wall behind) to its warm end, and at least 1 K above it: one cut that keeps
    # lightly and heavily loaded devices whole, where a two-class split would halve the
    # lighter ones.
    level = median + max(_OBJECT_MIN_STEP_K, _OBJECT_SHARE * (high - median))
    with np.errstate(invalid="ignore"):
        warm = smooth >= level
    runs = _label_runs(warm, 8)
    if runs.count == 0:
        return np.zeros(smooth.shape, np.int32), []
    areas = np.bincount(runs.labels, weights=runs.ends - runs.starts, minlength=runs.count + 1)
    labels = _paint(runs, smooth.shape)
    keep = np.flatnonzero(areas >= _MIN_COMPONENT_PX)
    keep = keep[keep > 0]
    keep = keep[np.argsort(-areas[keep], kind="stable")][:_MAX_COMPONENTS]
    components = []
    for label in keep.tolist():
        mine = runs.labels == label
        top, bottom = int(runs.rows[mine].min()), int(runs.rows[mine].max())
        left, right = int(runs.starts[mine].min()), int(runs.ends[mine].max())
        inside = labels[top : bottom + 1, left:right] == label
        crop = np.where(inside, smooth[top : bottom + 1, left:right], -np.inf)
        index = int(np.argmax(crop))
        row, col = divmod(index, crop.shape[1])
        components.append(
            _Component(
                label,
                int(areas[label]),
                bottom - top + 1,
                right - left,
                float(crop.flat[index]),
                (top + row, left + col),
                float(np.nanmedian(t[top : bottom + 1, left:right][inside])),
            )
        )
    _group_like(components, median)
    return labels, components


def _group_like(components: list[_Component], background_c: float) -> None:
    """Join components of similar size, shape and body temperature (like components under
    like load) into groups."""
    n = len(components)
    parent = list(range(n))

    def root(i: int) -> int:
        for _ in range(n):  # paths are shorter than n
            if parent[i] == i:
                break
            i = parent[i]
        return i

    for i in range(n):
        for j in range(i + 1, n):
            a, b = components[i], components[j]
            if (
                max(a.area, b.area) <= _LIKE_AREA_RATIO * min(a.area, b.area)
                and max(a.height, b.height) <= _LIKE_SIDE_RATIO * min(a.height, b.height)
                and max(a.width, b.width) <= _LIKE_SIDE_RATIO * min(a.width, b.width)
                and abs(a.body_c - b.body_c)
                <= max(_LIKE_BODY_K, _LIKE_BODY_SHARE * (min(a.body_c, b.body_c) - background_c))
            ):
                ra, rb = root(i), root(j)
                if ra != rb:
                    parent[max(ra, rb)] = min(ra, rb)
    roots = [root(i) for i in range(n)]
    for i, component in enumerate(components):
        if roots.count(roots[i]) >= 2:
            component.group = roots[i]


def _ring_offsets() -> tuple[np.ndarray, np.ndarray]:
    span = np.arange(-_RING_OUTER, _RING_OUTER + 1)
    dy, dx = np.meshgrid(span, span, indexing="ij")
    distance = np.hypot(dx, dy)
    ring = (distance >= _RING_INNER) & (distance <= _RING_OUTER)
    return dy[ring], dx[ring]


def propose_hot_spots(
    temperatures_c,
    *,
    min_rise_c: float = HOT_SPOT_MIN_RISE_C,
    shape: str = "ellipse",
    pixel_size_m: float | None = None,
    max_proposals: int = 20,
) -> list[Proposal]:
    """Hot spots of electrical or mechanical equipment, with reference marks.

    Parameters
    ----------
    temperatures_c : H×W array
        Surface temperatures, °C (NaN = no data).
    min_rise_c : float
        Least rise, K, of a hot spot above its surroundings and above its like components.
    shape : {"ellipse", "point"}
        Mark a hot spot with an ellipse around its hot area or a point at its maximum.
    pixel_size_m : float, optional
        Side of one pixel on the target; reported as the spot's width in metres.
    max_proposals : int
        Most hot spots returned, the largest rise first (references come with them).

    Returns
    -------
    list of Proposal
        Hot spots (``category="hot_spot"``) ranked by rise, then their references
        (``category="reference"``, ``kind="point"``). Hot-spot stats: ``hottest_c``,
        ``hottest``, ``surroundings_c``, ``surroundings_rise_k``, and when like components
        are seen ``like_count``, ``like_reference_c``, ``like_rise_k`` and
        ``reference_index`` (the position of its reference in the returned list); inside a
        lone warm object ``body_c`` and ``body_rise_k``. Score: the rise used, K.

    Notes
    -----
    A maximum of the image smoothed by a 3 × 3 mean (the largest within 4 px) is a hot
    spot when it stands ``min_rise_c`` above its surroundings, the 90th percentile of a
    ring 6–9 px around it (a cable or an edge crossing the ring counts as surroundings, so
    only spots stand out), and, when it lies on a warm object, above that object's peers.
    Warm objects are the connected pixels a quarter of the way from the image's median to
    its 99.5th percentile (at least 1 K above the median). Objects of similar area,
    bounding box and median temperature are like components (the phases of a breaker) and
    are compared hottest to hottest, against the lower median of the others' maxima so
    that one other faulty phase does not hide a fault [NETA-MTS]. A lone object is
    compared with its own median (a hot terminal on a motor or a contactor). A component
    warm as a whole, with no spot of its own, is not proposed: without its body
    temperature it could not be told from a like component under another load.

    Examples
    --------
    >>> y, x = np.mgrid[0:80, 0:100]
    >>> panel = np.full((80, 100), 25.0)
    >>> for left in (20, 45, 70):
    ...     panel[10:70, left : left + 12] = 33.0
    >>> panel += 12.0 * np.exp(-((x - 51) ** 2 + (y - 15) ** 2) / 8.0)
    >>> spots = propose_hot_spots(panel)
    >>> [(p.category, p.kind, p.stats["hottest"]) for p in spots]
    [('hot_spot', 'ellipse', [51, 15]), ('reference', 'point', [21, 11])]
    """
    t = _check_image(temperatures_c)
    floor = float(_checks.positive(min_rise_c, "min_rise_c", " K"))
    _checks.choice(shape, "shape", ("ellipse", "point"))
    size = _pixel_size(pixel_size_m)
    smooth = _box_mean(t, 1)
    filled = np.where(np.isfinite(smooth), smooth, -np.inf)
    # A maximum must be a measured pixel: the mean of its neighbours is not enough.
    peaks = (filled == _max_filter(filled, _PEAK_RADIUS)) & np.isfinite(t)
    # Cheap first cut: a hot spot stands well above the mean of a wide window around it.
    with np.errstate(invalid="ignore"):
        peaks &= smooth - _box_mean(t, 2 * _RING_OUTER) >= 0.3 * floor
    rows, cols = np.nonzero(peaks)
    labels, components = _warm_components(t, smooth)
    groups: dict[int, list[_Component]] = {}
    for component in components:
        if component.group >= 0:
            groups.setdefault(component.group, []).append(component)
    found = _local_spots(t, smooth, rows, cols, floor, labels, components, groups)
    found.sort(key=lambda item: -item[0])
    accepted: list[tuple] = []
    for item in found:
        _, row, col, _, _ = item
        if all(math.hypot(row - other[1], col - other[2]) > 2 * _PEAK_RADIUS for other in accepted):
            accepted.append(item)
    accepted = accepted[: max(int(max_proposals), 0)]
    # References follow the hot spots in the list: the first sits at len(accepted).
    spots, references, reference_positions = [], [], {}
    for used, row, col, value, spot in accepted:
        reference = spot.pop("_reference", None)
        kind, points, hottest_c, hottest_at, spot_px = _spot_mark(
            t, smooth, row, col, value - used / 2, shape
        )
        spot.update(hottest_c=hottest_c, hottest=hottest_at, peak=[col, row])
        if size is not None:
            spot["width_m"] = spot_px * size
        if reference is not None:
            if reference.label not in reference_positions:
                reference_positions[reference.label] = len(accepted) + len(references)
                references.append(reference)
            spot["reference_index"] = reference_positions[reference.label]
        reason = proposal_reason("hot_spot", spot)
        spots.append(Proposal("hot_spot", kind, points, reason, float(used), spot))
    for reference in references:
        row, col = reference.hottest
        stats = {
            "hottest_c": reference.hottest_c,
            "hottest": [col, row],
            "like_count": len(groups[reference.group]),
        }
        reason = proposal_reason("reference", stats)
        spots.append(Proposal("reference", "point", [[col, row]], reason, 0.0, stats))
    return spots


def _like_reference(component: _Component, members: list[_Component]) -> tuple:
    """The like component a member is compared with, and the group's size: the lower
    median of the others' maxima, hottest to hottest."""
    others = sorted((m for m in members if m is not component), key=lambda m: m.hottest_c)
    return others[(len(others) - 1) // 2], len(others) + 1


def _local_spots(t, smooth, rows, cols, floor, labels, components, groups) -> list[tuple]:
    """(rise used, row, col, value, stats) of the maxima that pass the rise tests."""
    if len(rows) == 0:
        return []
    height, width = t.shape
    ring_dy, ring_dx = _ring_offsets()
    ring_rows = np.clip(rows[:, None] + ring_dy[None, :], 0, height - 1)
    ring_cols = np.clip(cols[:, None] + ring_dx[None, :], 0, width - 1)
    ring = t[ring_rows, ring_cols]
    # nanpercentile works row by row; most thermograms have no NaN and take the fast path.
    percentile = np.percentile if np.isfinite(ring).all() else np.nanpercentile
    surroundings = percentile(ring, _RING_PERCENTILE, axis=1)
    values = smooth[rows, cols]
    keep = values - surroundings >= floor
    by_label = {component.label: component for component in components}
    found = []
    for row, col, value, around in zip(
        rows[keep].tolist(),
        cols[keep].tolist(),
        values[keep].tolist(),
        surroundings[keep].tolist(),
        strict=True,
    ):
        rise = value - around
        spot = {"surroundings_c": around, "surroundings_rise_k": rise}
        component = by_label.get(int(labels[row, col]))
        used = rise
        if component is not None and component.group >= 0:
            reference, count = _like_reference(component, groups[component.group])
            like_rise = value - reference.hottest_c
            if like_rise < floor:
                continue
            used = like_rise
            spot.update(
                like_count=count,
                like_reference_c=reference.hottest_c,
                like_rise_k=like_rise,
                _reference=reference,
            )
        elif component is not None:
            body = component.body_c
            if value - body < floor:
                continue
            used = min(used, value - body)
            spot.update(body_c=body, body_rise_k=value - body)
        found.append((used, row, col, value, spot))
    return found


def _spot_mark(t, smooth, row, col, level, shape):
    """Mark of one hot spot: (kind, points, hottest °C, hottest [x, y], width px)."""
    height, width = t.shape
    top, left = max(row - _SPOT_WINDOW, 0), max(col - _SPOT_WINDOW, 0)
    bottom, right = min(row + _SPOT_WINDOW + 1, height), min(col + _SPOT_WINDOW + 1, width)
    with np.errstate(invalid="ignore"):
        hot = smooth[top:bottom, left:right] >= level
    labels, _ = label_regions(hot)
    area = labels == labels[row - top, col - left]
    ys, xs = np.nonzero(area)
    values = t[top:bottom, left:right]
    crop = np.where(area & np.isfinite(values), values, -np.inf)
    index = int(np.argmax(crop))
    hot_row, hot_col = divmod(index, crop.shape[1])
    hottest_c = float(crop.flat[index])
    hottest_at = [left + hot_col, top + hot_row]
    spot_px = int(max(xs.max() - xs.min(), ys.max() - ys.min()) + 1)
    if shape == "point":
        return "point", [hottest_at], hottest_c, hottest_at, spot_px
    # One pixel of margin: the ellipse inscribed in the hot area's box would cut its corners.
    x0, x1 = left + xs.min() - 1, left + xs.max() + 1
    y0, y1 = top + ys.min() - 1, top + ys.max() + 1
    x0, x1 = max(x0, 0), min(x1, width - 1)
    y0, y1 = max(y0, 0), min(y1, height - 1)
    # At least 5 × 5 pixels: a reading needs 3 × 3 on the target (common practice).
    if x1 - x0 < 4:
        x0, x1 = max(min(x0, col - 2), 0), min(max(x1, col + 2), width - 1)
    if y1 - y0 < 4:
        y0, y1 = max(min(y0, row - 2), 0), min(max(y1, row + 2), height - 1)
    return "ellipse", [[int(x0), int(y0)], [int(x1), int(y1)]], hottest_c, hottest_at, spot_px


# --------------------------------------------------------------------------------------
# Reasons, ranking, dispatch


def proposal_reason(category: str, stats: dict, *, unit: str = "C") -> str:
    """One line saying why a proposal was made, in °C/K or °F.

    Examples
    --------
    >>> proposal_reason("envelope", {"surface_rh_pct": 91.6, "area_px": 41, "area_m2": 0.41})
    'surface RH 92 %, 0.41 m²'
    >>> stats = {"like_rise_k": 12.3, "like_count": 3, "surroundings_rise_k": 15.1}
    >>> proposal_reason("hot_spot", stats, unit="F")
    '22.1 °F above like components (3 similar), 27.2 °F above its surroundings'
    """
    _checks.choice(unit, "unit", ("C", "F"))

    def rise(kelvin: float) -> str:
        return f"{kelvin * 1.8:.1f} °F" if unit == "F" else f"{kelvin:.1f} K"

    def temperature(celsius: float) -> str:
        return f"{celsius * 1.8 + 32:.1f} °F" if unit == "F" else f"{celsius:.1f} °C"

    def area() -> str:
        if stats.get("area_m2") is not None:
            value = stats["area_m2"]
            return f"{value:.2f} m²" if value < 10 else f"{value:.1f} m²"
        return f"{stats['area_px']} px"

    if category == "envelope":
        parts = [f"surface RH {stats['surface_rh_pct']:.0f} %"]
        if "f_rsi_min" in stats and "f_rsi" in stats:
            parts.append(f"fRsi {stats['f_rsi']:.2f} (limit {stats['f_rsi_min']:.2f})")
        return ", ".join([*parts, area()])
    if category == "roof":
        return f"{rise(stats['mean_rise_k'])} above the roof field, wet area about {area()}"
    if category == "hot_spot":
        if "like_rise_k" in stats:
            count = stats["like_count"]
            first = f"{rise(stats['like_rise_k'])} above like components ({count} similar)"
        elif "body_rise_k" in stats:
            first = f"{rise(stats['body_rise_k'])} above the rest of the object"
        else:
            return f"{rise(stats['surroundings_rise_k'])} above its surroundings"
        return f"{first}, {rise(stats['surroundings_rise_k'])} above its surroundings"
    if category == "reference":
        count, hottest = stats["like_count"], temperature(stats["hottest_c"])
        return f"reference: hottest point of a like component ({count} similar), {hottest}"
    raise ValueError(f"category must be one of {', '.join(CATEGORIES)}, got {category!r}.")


def _ranked(proposals: list[Proposal], limit: int) -> list[Proposal]:
    return sorted(proposals, key=lambda p: -p.score)[: max(int(limit), 0)]


def propose(temperatures_c, survey_kind: str, **settings) -> list[Proposal]:
    """Proposals for a thermogram of a survey of the given kind.

    ``envelope`` → :func:`propose_envelope` (needs ``t_inside_c`` and ``rh_inside_pct``),
    ``roof`` → :func:`propose_roof`, ``electrical`` and ``mechanical`` →
    :func:`propose_hot_spots`; ``settings`` are passed on.

    Examples
    --------
    >>> propose(np.full((10, 10), 20.0), "roof")
    []
    """
    _checks.choice(survey_kind, "survey_kind", SURVEY_KINDS)
    if survey_kind == "envelope":
        return propose_envelope(temperatures_c, **settings)
    if survey_kind == "roof":
        return propose_roof(temperatures_c, **settings)
    return propose_hot_spots(temperatures_c, **settings)


def proposal_mask(shape: tuple[int, int], proposal) -> np.ndarray:
    """Boolean mask of the pixels a proposal's mark covers (:func:`survey.thermal.marks.mark_mask`).

    Examples
    --------
    >>> int(proposal_mask((10, 10), {"kind": "point", "points": [[5, 5]]}).sum())
    9
    """
    kind, points = _kind_points(proposal)
    return mark_mask(shape, kind, points)
