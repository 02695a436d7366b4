"""Aligning thermograms of identical equipment, to carry a template's marks across.

A :class:`Transform` maps pixel coordinates of the template's thermogram to those of
another (x to the right, y down, pixel centres at whole numbers, as in
:mod:`survey.thermal.marks`). It comes from 2–3 point pairs the inspector clicks
(:func:`transform_from_points`) or from the temperature arrays themselves
(:func:`register`: phase correlation for the shift, a search over small angles for the
rotation). Angles are clockwise on screen, because y points down.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from survey.thermal import _checks

# The coarse angle search runs on images of about this many pixels across; the fine one
# on twice that; the translation on the full image.
_COARSE_SIZE = 160
_COARSE_STEP_DEG = 1.0
_FINE_STEP_DEG = 0.25
# Width of the correlation peak, px (see _gaussian_taper).
_PEAK_SIGMA_PX = 1.5
# Refinement by tiles: the least correlation peak a tile must reach to count, and the
# largest disagreement with the fit, px.
_TILE_MIN_PEAK = 0.1
_TILE_MAX_ERROR_PX = 1.5


@dataclass(frozen=True)
class Transform:
    """x' = a·x + b·y + c, y' = d·x + e·y + f: template pixel → image pixel.

    ``matrix`` holds the rows ((a, b, c), (d, e, f)).

    Examples
    --------
    >>> Transform(((1.0, 0.0, 5.0), (0.0, 1.0, -2.0))).apply([[10, 10]])
    [[15.0, 8.0]]
    """

    matrix: tuple

    @property
    def array(self) -> np.ndarray:
        return np.asarray(self.matrix, dtype=np.float64)

    def apply(self, points: Sequence[Sequence[float]]) -> list[list[float]]:
        """The points mapped into the image, as [[x, y], …]."""
        p = np.asarray(points, dtype=np.float64).reshape(-1, 2)
        m = self.array
        mapped = p @ m[:, :2].T + m[:, 2]
        return mapped.tolist()

    @property
    def angle_deg(self) -> float:
        """Rotation, degrees, clockwise on screen (the linear part's polar angle)."""
        m = self.array
        return math.degrees(math.atan2(m[1, 0] - m[0, 1], m[0, 0] + m[1, 1]))

    @property
    def scale(self) -> float:
        """Mean linear scale (square root of the determinant's magnitude)."""
        m = self.array
        return math.sqrt(abs(m[0, 0] * m[1, 1] - m[0, 1] * m[1, 0]))

    def inverse(self) -> Transform:
        """The transform from image back to template."""
        m = np.vstack([self.array, [0.0, 0.0, 1.0]])
        return Transform(_rows(np.linalg.inv(m)[:2]))


def _rows(m: np.ndarray) -> tuple:
    return tuple(tuple(float(v) for v in row) for row in m)


def similarity(
    *,
    angle_deg: float = 0.0,
    scale: float = 1.0,
    shift_x: float = 0.0,
    shift_y: float = 0.0,
    centre: Sequence[float] = (0.0, 0.0),
) -> Transform:
    """Rotation by ``angle_deg`` (clockwise on screen) and scaling about ``centre``, then a
    shift.

    Examples
    --------
    >>> [[round(v, 6) for v in p] for p in similarity(angle_deg=90, centre=(1, 1)).apply([[2, 1]])]
    [[1.0, 2.0]]
    """
    theta = math.radians(float(_checks.as_array(angle_deg, "angle_deg")))
    s = float(_checks.positive(scale, "scale"))
    cx, cy = (float(v) for v in centre)
    cos, sin = s * math.cos(theta), s * math.sin(theta)
    linear = np.array([[cos, -sin], [sin, cos]])
    offset = np.array([cx, cy]) - linear @ np.array([cx, cy]) + np.array([shift_x, shift_y])
    return Transform(_rows(np.column_stack([linear, offset])))


def transform_from_points(
    template_points: Sequence[Sequence[float]],
    image_points: Sequence[Sequence[float]],
    *,
    kind: str = "similarity",
) -> Transform:
    """The transform that best carries clicked template points onto image points.

    Parameters
    ----------
    template_points, image_points : sequences of [x, y]
        Matching points, same order: at least 2 for a similarity, 3 for an affine map.
    kind : {"similarity", "affine", "translation"}
        similarity: rotation, uniform scale and shift (no mirror); affine: any linear map
        and shift (exact for 3 points); translation: the mean shift.

    Returns
    -------
    Transform
        Least squares over all pairs when there are more than needed.

    Notes
    -----
    The similarity is Umeyama's closed form [Umeyama1991] (centroids, the cross-covariance's
    singular value decomposition, no reflection); the affine map solves the linear least
    squares problem directly.

    Examples
    --------
    >>> t = transform_from_points([[0, 0], [10, 0]], [[5, 5], [5, 15]])
    >>> round(t.angle_deg, 6), round(t.scale, 6), [round(v, 6) for v in t.apply([[10, 10]])[0]]
    (90.0, 1.0, [-5.0, 15.0])
    """
    source = _point_array(template_points, "template_points")
    target = _point_array(image_points, "image_points")
    if source.shape != target.shape:
        raise ValueError("template_points and image_points must hold the same number of points.")
    _checks.choice(kind, "kind", ("similarity", "affine", "translation"))
    needed = {"translation": 1, "similarity": 2, "affine": 3}[kind]
    if len(source) < needed:
        raise ValueError(f"A {kind} alignment needs at least {needed} pairs of points.")
    if kind == "translation":
        shift = (target - source).mean(axis=0)
        return Transform(_rows(np.column_stack([np.eye(2), shift])))
    if kind == "affine":
        design = np.column_stack([source, np.ones(len(source))])
        solution, _, rank, _ = np.linalg.lstsq(design, target, rcond=None)
        if rank < 3:
            raise ValueError("The points lie on one line; choose points spread over the image.")
        return Transform(_rows(solution.T))
    mean_source, mean_target = source.mean(axis=0), target.mean(axis=0)
    a, b = source - mean_source, target - mean_target
    spread = float((a**2).sum())
    if spread == 0:
        raise ValueError("The template points coincide; choose points apart from each other.")
    u, singular, vt = np.linalg.svd(b.T @ a)
    sign = np.diag([1.0, np.sign(np.linalg.det(u @ vt)) or 1.0])
    rotation = u @ sign @ vt
    scale = float(np.trace(np.diag(singular) @ sign)) / spread
    linear = scale * rotation
    offset = mean_target - linear @ mean_source
    return Transform(_rows(np.column_stack([linear, offset])))


def _point_array(points, name: str) -> np.ndarray:
    try:
        array = np.asarray(points, dtype=np.float64)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a list of [x, y] pairs of numbers") from None
    if array.ndim != 2 or array.shape[1] != 2 or not np.isfinite(array).all():
        raise ValueError(f"{name} must be a list of [x, y] pairs of numbers")
    return array


def transform_mark(kind: str, points: Sequence[Sequence[float]], transform: Transform):
    """A mark carried by a transform: (kind, points).

    Points, lines and polygons move vertex by vertex. Rectangles and ellipses are kept
    upright (marks have no rotation): a rectangle turned by 1° or more becomes a polygon
    of its four corners; an ellipse keeps its radii, scaled, around its moved centre.

    Examples
    --------
    >>> transform_mark("ellipse", [[0, 0], [10, 4]], similarity(shift_x=3))
    ('ellipse', [[3.0, 0.0], [13.0, 4.0]])
    """
    p = _point_array(points, "points")
    if kind in ("point", "line", "polygon"):
        return kind, transform.apply(p)
    if kind not in ("rectangle", "ellipse"):
        raise ValueError(f"Unknown mark kind {kind!r}.")
    (x0, y0), (x1, y1) = p.min(axis=0), p.max(axis=0)
    if kind == "rectangle" and abs(transform.angle_deg) >= 1.0:
        return "polygon", transform.apply([[x0, y0], [x1, y0], [x1, y1], [x0, y1]])
    [[cx, cy]] = transform.apply([[(x0 + x1) / 2, (y0 + y1) / 2]])
    half_x = float(x1 - x0) / 2 * transform.scale
    half_y = float(y1 - y0) / 2 * transform.scale
    return kind, [[cx - half_x, cy - half_y], [cx + half_x, cy + half_y]]


# --------------------------------------------------------------------------------------
# Registration from the temperature arrays


@dataclass(frozen=True)
class Registration:
    """Where a template's thermogram lies in another: the transform and how sure.

    ``peak`` is the height of the normalised phase-correlation peak, 0–1: 0.7–0.95 for
    the same equipment shifted and turned, 0.1–0.2 for unrelated thermograms (measured on
    the synthetic scenes of the tests); below about 0.3, align by points instead.
    """

    transform: Transform
    angle_deg: float
    shift_x: float
    shift_y: float
    peak: float


def phase_correlation(reference, moving) -> tuple[float, float, float]:
    """Shift of ``moving`` against ``reference`` by phase correlation.

    Parameters
    ----------
    reference, moving : H×W arrays (NaN filled with the mean)

    Returns
    -------
    (shift_x, shift_y, peak)
        ``moving(x, y) ≈ reference(x − shift_x, y − shift_y)``, to a fraction of a pixel;
        ``peak`` the correlation peak, 0–1.

    Notes
    -----
    The cross-power spectrum F·G*/|F·G*| of the two images (each less its mean and
    tapered by a Hann window so that the borders do not dominate) transforms back to a
    peak at the shift [Kuglin1975]. Weighted by a Gaussian in frequency, that peak is a
    Gaussian 1.5 px wide, and a parabola through the logarithms of its three central
    samples along each axis gives the fraction of a pixel.

    Examples
    --------
    >>> y, x = np.mgrid[0:64, 0:64]
    >>> a = np.exp(-((x - 30) ** 2 + (y - 25) ** 2) / 20.0)
    >>> b = np.exp(-((x - 35) ** 2 + (y - 22) ** 2) / 20.0)
    >>> [round(v) for v in phase_correlation(a, b)[:2]]
    [5, -3]
    """
    a = _prepared(reference, "reference")
    b = _prepared(moving, "moving")
    if a.shape != b.shape:
        raise ValueError(f"The images differ in size: {a.shape} and {b.shape}.")
    return _correlate(_window(a), _window(b))


def _prepared(array, name: str) -> np.ndarray:
    t = np.asarray(array, dtype=np.float64)
    if t.ndim != 2 or min(t.shape) < 8:
        raise ValueError(f"{name} must be a 2-D array of at least 8×8, not shape {t.shape}")
    finite = np.isfinite(t)
    if not finite.any():
        raise ValueError(f"{name} holds no finite temperature.")
    if not finite.all():
        t = np.where(finite, t, t[finite].mean())
    return t


def _window(t: np.ndarray) -> np.ndarray:
    hann = np.outer(np.hanning(t.shape[0]), np.hanning(t.shape[1]))
    return (t - t.mean()) * hann


def _correlate(a: np.ndarray, b: np.ndarray) -> tuple[float, float, float]:
    height, width = a.shape
    spectrum = np.fft.rfft2(b) * np.conj(np.fft.rfft2(a))
    spectrum /= np.abs(spectrum) + 1e-12
    spectrum *= _gaussian_taper(height, width)
    surface = np.fft.irfft2(spectrum, s=a.shape)
    index = int(np.argmax(surface))
    row, col = divmod(index, width)
    peak = float(surface[row, col])
    dy = _fraction(surface[(row - 1) % height, col], peak, surface[(row + 1) % height, col])
    dx = _fraction(surface[row, (col - 1) % width], peak, surface[row, (col + 1) % width])
    shift_y = row + dy if row <= height // 2 else row + dy - height
    shift_x = col + dx if col <= width // 2 else col + dx - width
    return float(shift_x), float(shift_y), peak


def _gaussian_taper(height: int, width: int) -> np.ndarray:
    """Gaussian weights of the whitened spectrum, scaled so identical images peak at 1.

    Whitening alone makes a peak as sharp as a sampled sinc, which a smooth thermal image
    fills with leakage from its borders; these weights turn the peak into a Gaussian of
    _PEAK_SIGMA_PX, whose three central samples give its centre exactly (a parabola
    through their logarithms), and keep the noisiest frequencies out.
    """
    ky = 2 * np.pi * np.fft.fftfreq(height)
    kx = 2 * np.pi * np.fft.rfftfreq(width)
    gy = np.exp(-0.5 * (_PEAK_SIGMA_PX * ky) ** 2)
    gx = np.exp(-0.5 * (_PEAK_SIGMA_PX * kx) ** 2)
    full_x = np.exp(-0.5 * (_PEAK_SIGMA_PX * 2 * np.pi * np.fft.fftfreq(width)) ** 2)
    return np.outer(gy, gx) / (gy.mean() * full_x.mean())


def _fraction(minus: float, centre: float, plus: float) -> float:
    """Offset of a Gaussian peak's centre from its largest sample, from three samples."""
    if min(minus, centre, plus) > 0:
        minus, centre, plus = math.log(minus), math.log(centre), math.log(plus)
    bend = minus - 2 * centre + plus
    return 0.0 if bend >= 0 else max(-0.5, min(0.5, 0.5 * (minus - plus) / bend))


def _rotated_back(t: np.ndarray, angle_deg: float) -> np.ndarray:
    """u(q) = t(R(q − c) + c): the image turned back by the angle about its centre
    (bilinear; outside the image, the image's mean)."""
    height, width = t.shape
    theta = math.radians(angle_deg)
    cos, sin = math.cos(theta), math.sin(theta)
    cx, cy = (width - 1) / 2, (height - 1) / 2
    qx = np.arange(width, dtype=np.float64) - cx
    qy = np.arange(height, dtype=np.float64)[:, None] - cy
    xs = cos * qx - sin * qy + cx
    ys = sin * qx + cos * qy + cy
    return _bilinear(t, xs, ys, float(t.mean()))


def _bilinear(t: np.ndarray, xs: np.ndarray, ys: np.ndarray, fill: float) -> np.ndarray:
    height, width = t.shape
    inside = (xs >= 0) & (xs <= width - 1) & (ys >= 0) & (ys <= height - 1)
    x0 = np.clip(np.floor(xs).astype(np.intp), 0, width - 2)
    y0 = np.clip(np.floor(ys).astype(np.intp), 0, height - 2)
    fx, fy = xs - x0, ys - y0
    top = t[y0, x0] * (1 - fx) + t[y0, x0 + 1] * fx
    bottom = t[y0 + 1, x0] * (1 - fx) + t[y0 + 1, x0 + 1] * fx
    return np.where(inside, top * (1 - fy) + bottom * fy, fill)


def _shrunk(t: np.ndarray, factor: int) -> np.ndarray:
    """Block means of factor × factor pixels (the image cropped to whole blocks)."""
    if factor <= 1:
        return t
    height, width = (t.shape[0] // factor) * factor, (t.shape[1] // factor) * factor
    blocks = t[:height, :width].reshape(height // factor, factor, width // factor, factor)
    return blocks.mean(axis=(1, 3))


def _best_angle(reference: np.ndarray, moving: np.ndarray, angles: np.ndarray) -> tuple:
    """(angle, peak heights) of the angle whose turned-back image correlates best."""
    windowed = _window(reference)
    peaks = np.array([_correlate(windowed, _window(_rotated_back(moving, a)))[2] for a in angles])
    return float(angles[int(np.argmax(peaks))]), peaks


def register(reference_c, moving_c, *, max_rotation_deg: float = 10.0) -> Registration:
    """Align two thermograms of identical equipment: shift and small rotation.

    Parameters
    ----------
    reference_c : H×W array
        The template's thermogram, °C (NaN filled).
    moving_c : H×W array
        The thermogram the template's marks go to, same size.
    max_rotation_deg : float
        Largest rotation searched, degrees, in [0, 45]; 0 for a shift only (no rotation,
        no change of scale).

    Returns
    -------
    Registration
        ``transform`` maps template pixels to ``moving_c`` pixels; ``angle_deg`` its
        rotation, ``shift_x``/``shift_y`` where the image centre c goes (T(c) − c):
        p' ≈ R(θ)·(p − c) + c + t.

    Notes
    -----
    Rotation: the moving image is turned back by each trial angle about its centre and
    phase-correlated with the template [Kuglin1975]; the best peak wins, first every 1°
    on images shrunk to about 160 px across, then every 0.25° within ±1° at twice that
    size, with a parabola through the three best peaks. Translation: phase correlation of
    the full images at that angle. Refinement: nine overlapping tiles, each half the
    image's size, are located by phase correlation to a fraction of a pixel, and a
    similarity is fitted to their centres [Umeyama1991], which also takes up a small
    change of scale (the camera a little nearer). Temperatures are aligned as they are:
    equipment under different load still lines up, since the correlation is whitened and
    follows edges more than levels.

    Examples
    --------
    >>> y, x = np.mgrid[0:96, 0:128]
    >>> def spots(dx, dy):
    ...     return sum(np.exp(-((x - cx - dx) ** 2 + (y - cy - dy) ** 2) / 30)
    ...                for cx, cy in ((40, 50), (80, 30), (70, 70)))
    >>> r = register(spots(0, 0), spots(-6, 4), max_rotation_deg=0)
    >>> round(r.shift_x), round(r.shift_y), round(r.angle_deg, 1)
    (-6, 4, 0.0)
    """
    reference = _prepared(reference_c, "reference_c")
    moving = _prepared(moving_c, "moving_c")
    if reference.shape != moving.shape:
        raise ValueError(
            f"The thermograms differ in size ({reference.shape[1]}×{reference.shape[0]} and "
            f"{moving.shape[1]}×{moving.shape[0]}); align them by points instead."
        )
    limit = float(_checks.in_range(max_rotation_deg, "max_rotation_deg", 0.0, 45.0))
    angle = 0.0
    if limit > 0:
        factor = max(1, max(reference.shape) // _COARSE_SIZE)
        steps = int(math.ceil(limit / _COARSE_STEP_DEG))
        coarse = np.linspace(-steps, steps, 2 * steps + 1) * _COARSE_STEP_DEG
        coarse = coarse[np.abs(coarse) <= limit + 1e-9]
        angle, _ = _best_angle(_shrunk(reference, factor), _shrunk(moving, factor), coarse)
        fine_factor = max(1, factor // 2)
        fine = angle + np.arange(-4, 5) * _FINE_STEP_DEG
        angle, peaks = _best_angle(
            _shrunk(reference, fine_factor), _shrunk(moving, fine_factor), fine
        )
        best = int(np.argmax(peaks))
        if 0 < best < len(peaks) - 1:
            minus, centre, plus = peaks[best - 1 : best + 2]
            bend = minus - 2 * centre + plus
            if bend < 0:
                angle += 0.5 * (minus - plus) / bend * _FINE_STEP_DEG
    turned = _rotated_back(moving, angle)
    sx, sy, peak = _correlate(_window(reference), _window(turned))
    height, width = reference.shape
    centre = ((width - 1) / 2, (height - 1) / 2)
    theta = math.radians(angle)
    # The correlation measured the shift s in the turned-back frame; the transform's shift
    # is R·s (see the Returns formula).
    coarse = similarity(
        angle_deg=angle,
        shift_x=math.cos(theta) * sx - math.sin(theta) * sy,
        shift_y=math.sin(theta) * sx + math.cos(theta) * sy,
        centre=centre,
    )
    kind = "similarity" if limit > 0 else "translation"
    transform = _refined(reference, turned, (sx, sy), angle, centre, kind) or coarse
    [[cx, cy]] = transform.apply([centre])
    return Registration(transform, transform.angle_deg, cx - centre[0], cy - centre[1], peak)


def _refined(reference, turned, shift, angle, centre, kind) -> Transform | None:
    """A similarity fitted to the shifts of nine overlapping tiles, or None.

    The angle search is only as fine as its steps; tiles a quarter of the image apart,
    each located to a fraction of a pixel, fix the rotation (and a small change of scale)
    far more closely. Tiles without structure correlate weakly and are left out, as are
    tiles that disagree with the others by more than a pixel and a half.
    """
    height, width = reference.shape
    tile_h, tile_w = height // 2, width // 2
    sx, sy = round(shift[0]), round(shift[1])
    template_points, image_points = [], []
    for fy in (0.25, 0.5, 0.75):
        for fx in (0.25, 0.5, 0.75):
            top, left = int(fy * height) - tile_h // 2, int(fx * width) - tile_w // 2
            moved_top, moved_left = top + sy, left + sx
            if not (
                0 <= moved_top
                and moved_top + tile_h <= height
                and 0 <= moved_left
                and moved_left + tile_w <= width
            ):
                continue
            a = reference[top : top + tile_h, left : left + tile_w]
            b = turned[moved_top : moved_top + tile_h, moved_left : moved_left + tile_w]
            dx, dy, peak = _correlate(_window(a), _window(b))
            if peak < _TILE_MIN_PEAK or abs(dx) > 3 or abs(dy) > 3:
                continue
            x, y = left + (tile_w - 1) / 2, top + (tile_h - 1) / 2
            template_points.append([x, y])
            image_points.append([x + sx + dx, y + sy + dy])
    if len(template_points) < 3:
        return None
    # Back from the turned frame to the moving image: p = R(θ)(q − c) + c.
    turn = similarity(angle_deg=angle, centre=centre)
    image_points = turn.apply(image_points)
    source, target = np.asarray(template_points), np.asarray(image_points)
    fitted = transform_from_points(source, target, kind=kind)
    for _ in range(2):  # leave out outliers once or twice, never below three tiles
        errors = np.hypot(*(np.asarray(fitted.apply(source)) - target).T)
        keep = errors <= _TILE_MAX_ERROR_PX
        if keep.all() or keep.sum() < 3:
            break
        source, target = source[keep], target[keep]
        fitted = transform_from_points(source, target, kind=kind)
    return fitted
