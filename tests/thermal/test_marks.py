"""Mark statistics against plain numpy on hand-built masks."""

import numpy as np
import pytest

from survey.thermal.marks import (
    MAX_PROFILE_SAMPLES,
    mark_mask,
    mark_statistics,
    mark_statistics_many,
)


def field(height=40, width=50, seed=3):
    """Invented random temperatures, float32 °C, all distinct."""
    rng = np.random.default_rng(seed)
    return (20 + 10 * rng.random((height, width))).astype(np.float32)


def expected_stats(values_at_mask, mask):
    """Plain-numpy statistics of the pixels of a hand-built mask (no source needed)."""
    values = values_at_mask[mask].astype(np.float64)
    finite = values[np.isfinite(values)]
    ys, xs = np.nonzero(mask)
    flat = np.where(mask & np.isfinite(values_at_mask), values_at_mask, np.nan)
    hot = np.unravel_index(np.nanargmax(flat), flat.shape)
    cold = np.unravel_index(np.nanargmin(flat), flat.shape)
    return {
        "min": finite.min(),
        "max": finite.max(),
        "mean": finite.mean(),
        "std": finite.std(),
        "count": finite.size,
        "nan_count": values.size - finite.size,
        "hottest": [int(hot[1]), int(hot[0])],
        "coldest": [int(cold[1]), int(cold[0])],
    }


def assert_matches(result, expected):
    for key in ("min", "max", "mean", "std"):
        assert result[key] == pytest.approx(expected[key], rel=1e-9, abs=1e-9), key
    for key in ("count", "nan_count", "hottest", "coldest"):
        assert result[key] == expected[key], key


def test_mark_statistics_rectangle_matches_slice():
    """A rectangle from two corners covers both corner pixels inclusive."""
    t = field()
    mask = np.zeros(t.shape, bool)
    mask[5:13, 7:20] = True  # y 5..12, x 7..19
    assert_matches(mark_statistics(t, "rectangle", [(19, 12), (7, 5)]), expected_stats(t, mask))


def test_mark_statistics_rectangle_with_fractional_corners():
    """Only pixels whose centres lie inside count."""
    t = field()
    mask = np.zeros(t.shape, bool)
    mask[3:6, 2:5] = True  # centres x 2..4, y 3..5 lie inside [1.6, 4.4] × [2.5, 5.9]
    result = mark_statistics(t, "rectangle", [(1.6, 2.5), (4.4, 5.9)])
    assert_matches(result, expected_stats(t, mask))


def test_mark_statistics_concave_polygon():
    """A U-shaped polygon (two concave corners) matches its hand-built mask."""
    t = field()
    # U shape with vertices on half-pixel lines, so no pixel centre lies on an edge.
    u_shape = [
        (4.5, 4.5), (16.5, 4.5), (16.5, 20.5), (12.5, 20.5),
        (12.5, 9.5), (8.5, 9.5), (8.5, 20.5), (4.5, 20.5),
    ]  # fmt: skip
    mask = np.zeros(t.shape, bool)
    mask[5:10, 5:17] = True  # the bottom bar: y 5..9, x 5..16
    mask[10:21, 5:9] = True  # left arm: y 10..20, x 5..8
    mask[10:21, 13:17] = True  # right arm: x 13..16
    assert_matches(mark_statistics(t, "polygon", u_shape), expected_stats(t, mask))


def test_mark_statistics_concave_arrow_polygon_with_diagonals():
    """A concave arrow with slanted edges matches a mask listed pixel by pixel."""
    t = field()
    # A square with a triangular notch cut up from its bottom edge to the concave vertex
    # (4.5, 4). The notch edges y = (18x − 17)/16 and y = (145 − 18x)/16 never pass through
    # a pixel centre (2x ≡ 1 mod 16 has no integer solution), so no centre is ambiguous.
    polygon = [(0.5, 0.5), (8.5, 0.5), (8.5, 8.5), (4.5, 4.0), (0.5, 8.5)]
    mask = np.zeros(t.shape, bool)
    for y in range(1, 9):
        for x in range(1, 9):
            in_notch = y > (18 * x - 17) / 16 and y > (145 - 18 * x) / 16
            mask[y, x] = not in_notch
    assert mask.sum() < 64 and mask[1:5, 1:9].all()  # the notch is really there
    assert_matches(mark_statistics(t, "polygon", polygon), expected_stats(t, mask))


def test_mark_statistics_ellipse_at_the_image_edge():
    """An ellipse centred on the corner pixel keeps only the quarter inside the image."""
    t = field()
    # Centre (0, 0), radii 2: centres with x² + y² ≤ 4 in the image quadrant.
    listed = [(0, 0), (1, 0), (2, 0), (0, 1), (1, 1), (0, 2)]
    mask = np.zeros(t.shape, bool)
    for x, y in listed:
        mask[y, x] = True
    result = mark_statistics(t, "ellipse", [(-2, -2), (2, 2)])
    assert_matches(result, expected_stats(t, mask))


def test_mark_statistics_ellipse_matches_formula_mask():
    """An elongated ellipse crossing the right edge matches the inside test per pixel."""
    t = field()
    ys, xs = np.mgrid[0 : t.shape[0], 0 : t.shape[1]]
    cx, cy, rx, ry = 47.0, 20.5, 6.0, 9.5
    mask = ((xs - cx) / rx) ** 2 + ((ys - cy) / ry) ** 2 <= 1
    result = mark_statistics(t, "ellipse", [(41, 11), (53, 30)])
    assert_matches(result, expected_stats(t, mask))


def test_mark_statistics_point_uses_3x3_mean():
    """A point reads the mean of its 3×3 neighbourhood (common practice, no source)."""
    t = field()
    result = mark_statistics(t, "point", [(10.2, 7.8)])
    assert result["mean"] == pytest.approx(t[7:10, 9:12].astype(np.float64).mean())
    assert result["count"] == 9


def test_mark_statistics_point_single_pixel():
    """single_pixel reads exactly the pixel under the point."""
    t = field()
    result = mark_statistics(t, "point", [(10, 8)], single_pixel=True)
    assert result["mean"] == float(t[8, 10]) and result["count"] == 1


def test_mark_statistics_point_in_the_corner_is_clipped():
    """A point on the corner pixel averages the 2×2 pixels that exist."""
    t = field()
    result = mark_statistics(t, "point", [(0, 0)])
    assert result["count"] == 4
    assert result["mean"] == pytest.approx(t[0:2, 0:2].astype(np.float64).mean())


def test_mark_statistics_leaves_nan_out_and_counts_it():
    """NaN pixels are left out of every statistic and counted."""
    t = field()
    t[6, 8] = np.nan
    t[7, 9] = np.nan
    mask = np.zeros(t.shape, bool)
    mask[5:10, 5:12] = True
    result = mark_statistics(t, "rectangle", [(5, 5), (11, 9)])
    assert result["nan_count"] == 2 and result["count"] == 33
    assert_matches(result, expected_stats(t, mask))


def test_mark_statistics_all_nan_gives_none():
    """A mark over no-data pixels only has None statistics, never a number."""
    t = field()
    t[:5, :5] = np.nan
    result = mark_statistics(t, "rectangle", [(0, 0), (4, 4)])
    assert result["count"] == 0 and result["nan_count"] == 25
    assert result["mean"] is None and result["hottest"] is None


def test_mark_statistics_line_profile_is_bilinear():
    """Along a diagonal of a linear field the bilinear profile equals the field exactly."""
    height, width = 30, 40
    ys, xs = np.mgrid[0:height, 0:width]
    t = (10 + 0.5 * xs + 0.25 * ys).astype(np.float64)
    result = mark_statistics(t, "line", [(2.5, 3.0), (32.5, 23.0)])
    # Bilinear interpolation reproduces a linear function exactly (its definition).
    length = np.hypot(30.0, 20.0)
    profile = np.array(result["profile"])
    assert profile[0, 0] == 0 and profile[-1, 0] == pytest.approx(length)
    assert len(profile) == int(np.ceil(length)) + 1
    along = profile[:, 0] / length
    expected = 10 + 0.5 * (2.5 + 30 * along) + 0.25 * (3 + 20 * along)
    np.testing.assert_allclose(profile[:, 1], expected, atol=1e-6)
    assert result["max"] == pytest.approx(10 + 0.5 * 32.5 + 0.25 * 23)
    assert result["hottest"] == [32.5, 23]


def test_mark_statistics_horizontal_line_reads_pixels():
    """A line along a pixel row samples the pixel values themselves."""
    t = field()
    result = mark_statistics(t, "line", [(3, 5), (13, 5)])
    np.testing.assert_allclose([v for _, v in result["profile"]], t[5, 3:14], rtol=1e-6)
    assert result["count"] == 11


def test_mark_statistics_line_next_to_nan_counts_nan_samples():
    """Samples touching a NaN pixel are NaN (None in the profile) and counted."""
    t = field()
    t[5, 8] = np.nan
    result = mark_statistics(t, "line", [(3, 5), (13, 5)])
    assert result["nan_count"] == 1
    assert result["profile"][5][1] is None


def test_mark_statistics_polyline_profile_distance_adds_up():
    """A polyline's distance is the sum of its segments."""
    result = mark_statistics(field(), "line", [(0, 0), (10, 0), (10, 10)])
    assert result["profile"][-1][0] == pytest.approx(20.0)


@pytest.mark.parametrize(
    "kind, points, message",
    [
        ("point", [(50, 3)], "outside the 50×40"),
        ("point", [(-0.6, 3)], "outside"),
        ("rectangle", [(60, 50), (70, 60)], "outside"),
        ("ellipse", [(-10, -10), (-3, -3)], "outside"),
        ("polygon", [(-10, 0), (-5, 0), (-5, 5)], "outside"),
        ("line", [(5, 5), (60, 5)], "outside"),
        ("rectangle", [(3.2, 3.2), (3.8, 3.8)], "covers no pixel"),
        ("polygon", [(3.1, 3.1), (3.9, 3.1), (3.5, 3.9)], "covers no pixel"),
        ("ellipse", [(3, 3), (3, 8)], "no width"),
        ("line", [(5, 5), (5, 5)], "no length"),
        ("circle", [(1, 1)], "Unknown mark kind"),
        ("polygon", [(1, 1), (2, 2)], "needs at least 3 points"),
        ("rectangle", [(1, 1)], "needs 2 points"),
        ("point", [(1, float("nan"))], "finite"),
        ("point", [[1, 2, 3]], r"\[x, y\] pairs"),
        ("point", "A1", r"\[x, y\] pairs"),
    ],
)
def test_mark_statistics_refuses_bad_marks(kind, points, message):
    """Marks outside the image, covering nothing or malformed raise a clear ValueError."""
    with pytest.raises(ValueError, match=message):
        mark_statistics(field(), kind, points)


def test_mark_statistics_refuses_non_2d_array():
    """A 1-D or empty array is refused."""
    with pytest.raises(ValueError, match="2-D"):
        mark_statistics(np.zeros(5), "point", [(1, 0)])


def test_mark_mask_matches_statistics_count():
    """mark_mask covers exactly the pixels the statistics count."""
    t = field()
    mask = mark_mask(t.shape, "ellipse", [(10, 10), (30, 25)])
    assert mask.sum() == mark_statistics(t, "ellipse", [(10, 10), (30, 25)])["count"]


def many_marks(width, height, count, seed=5):
    rng = np.random.default_rng(seed)
    kinds = ["point", "rectangle", "ellipse", "polygon", "line"]
    marks = []
    for i in range(count):
        kind = kinds[i % len(kinds)]
        x, y = rng.uniform(0, width - 1), rng.uniform(0, height - 1)
        size = rng.uniform(10, 200)
        if kind == "point":
            points = [(x, y)]
        elif kind == "polygon":
            angles = np.sort(rng.uniform(0, 2 * np.pi, 7))
            radii = rng.uniform(0.3, 1.0, 7) * size / 2
            points = list(zip(x + radii * np.cos(angles), y + radii * np.sin(angles), strict=True))
        elif kind == "line":
            points = [(x, y), (min(max(x + size, 0), width - 1), min(y + size / 2, height - 1))]
        else:
            points = [(x - size / 2, y - size / 3), (x + size / 2, y + size / 3)]
        marks.append({"kind": kind, "points": points})
    return marks


def test_mark_statistics_many_equals_one_by_one():
    """The batch gives the same result as each mark alone."""
    t = field(120, 160)
    marks = many_marks(160, 120, 25)
    batch = mark_statistics_many(t, marks)
    for mark, result in zip(marks, batch, strict=True):
        assert result == mark_statistics(t, mark["kind"], mark["points"])


# --- bounded work: long lines and many-cornered polygons -----------------------------------


def _even_odd_reference(xs, ys, vertices):
    """The even-odd rule edge by edge over every pixel (ray to +x, edges half-open in y):
    the definition, written out plainly; slow on purpose."""
    inside = np.zeros((ys.shape[0], xs.shape[1]), dtype=bool)
    x_prev, y_prev = vertices[-1]
    for x_next, y_next in vertices:
        if y_prev != y_next:
            spans = (ys >= min(y_prev, y_next)) & (ys < max(y_prev, y_next))
            x_cross = x_prev + (ys - y_prev) * (x_next - x_prev) / (y_next - y_prev)
            inside ^= spans & (xs < x_cross)
        x_prev, y_prev = x_next, y_next
    return inside


@pytest.mark.parametrize("seed", range(12))
def test_mark_mask_polygon_equals_the_even_odd_rule(seed):
    """Random polygons, concave and self-crossing, some with corners on pixel centres."""
    rng = np.random.default_rng(seed)
    corners = rng.integers(3, 40)
    vertices = rng.uniform(-2, 42, (corners, 2))
    if seed % 2:
        vertices = np.round(vertices)  # corners and edges through pixel centres
    mask = mark_mask((40, 40), "polygon", vertices.tolist()) if _covers(vertices) else None
    ys = np.arange(40, dtype=np.float64)[:, None]
    xs = np.arange(40, dtype=np.float64)[None, :]
    expected = _even_odd_reference(xs, ys, vertices)
    if mask is None:
        assert not expected.any()
    else:
        np.testing.assert_array_equal(mask, expected)


def _covers(vertices) -> bool:
    try:
        mark_mask((40, 40), "polygon", vertices.tolist())
    except ValueError:
        return False
    return True


def test_mark_statistics_polygon_of_500_corners_on_20_megapixels_is_quick():
    """One 500-corner polygon over a 5000 × 4000 image: well under the 12.7 s it once took
    (the cost now grows with rows × corners plus pixels, not pixels × corners)."""
    import time

    t = np.zeros((4000, 5000), dtype=np.float32)
    angles = np.linspace(0, 2 * np.pi, 500, endpoint=False)
    radius = 1900 + 80 * np.sin(7 * angles)  # a wavy ring: concave in places
    vertices = np.c_[2500 + 2400 * np.cos(angles) * radius / 1980, 2000 + radius * np.sin(angles)]
    started = time.perf_counter()
    result = mark_statistics(t, "polygon", vertices.tolist())
    assert time.perf_counter() - started < 3.0
    assert result["count"] > 10_000_000


def test_mark_statistics_line_profile_is_capped_keeping_its_extremes():
    """A line of 20 000 samples keeps at most MAX_PROFILE_SAMPLES in its profile, in order of
    distance, with the coldest and hottest sample of the line among them."""
    rng = np.random.default_rng(5)
    t = (20 + rng.random((1000, 20000))).astype(np.float32)
    t[500, 12345] = 99.0  # a single hot pixel on the line
    t[500, 777] = -9.0  # and a single cold one
    t[500, 4000] = np.nan
    result = mark_statistics(t, "line", [[0, 500], [19999, 500]])
    profile = result["profile"]
    assert len(profile) <= MAX_PROFILE_SAMPLES
    distances = [d for d, _ in profile]
    assert distances == sorted(distances) and distances[0] == 0 and distances[-1] == 19999
    values = [v for _, v in profile if v is not None]
    assert max(values) == result["max"] == pytest.approx(99.0)
    assert min(values) == result["min"] == pytest.approx(-9.0)
    assert result["count"] == 19999 and result["nan_count"] == 1  # statistics of every sample
