"""Template alignment: known shifts and rotations applied by scipy.ndimage, recovered to
within one pixel (docs/references.md § Anomaly proposals, template alignment)."""

import math

import numpy as np
import pytest
from scipy import ndimage
from scipy.optimize import least_squares

from survey.thermal.registration import (
    Transform,
    phase_correlation,
    register,
    similarity,
    transform_from_points,
    transform_mark,
)
from tests import scenes

CORNERS_AND_CENTRE = [[0, 0], [639, 0], [0, 479], [639, 479], [320, 240], [100, 400]]


def moved_by_scipy(reference, transform):
    """The image a camera turned and shifted by `transform` would take, built with
    scipy.ndimage.affine_transform (cubic spline): moving(p) = reference(T⁻¹ p)."""
    inverse = np.linalg.inv(np.vstack([transform.array, [0, 0, 1]]))
    swap = np.array([[0, 1], [1, 0]])  # scipy works in (row, column)
    return ndimage.affine_transform(
        reference,
        swap @ inverse[:2, :2] @ swap,
        offset=swap @ inverse[:2, 2],
        order=3,
        mode="nearest",
    )


def largest_error(found, truth, points=CORNERS_AND_CENTRE):
    return float(np.max(np.hypot(*(np.array(found.apply(points)) - truth.apply(points)).T)))


@pytest.mark.parametrize(
    "kind, angle, shift_x, shift_y",
    [
        ("electrical", 3.5, 12.3, -7.6),
        ("electrical", -7.2, -25.0, 18.4),
        ("electrical", 0.3, 4.6, 2.2),
        ("envelope", 2.0, -15.5, -9.1),
        ("roof", -4.4, 20.2, 11.7),
    ],
)
def test_register_recovers_shift_and_rotation_within_a_pixel(kind, angle, shift_x, shift_y):
    """Marks anywhere on the template (corners included) land within 1 px of where the
    known transform puts them."""
    scene = scenes.scenes(kind, seed=1803, count=1)[0]
    reference = scene.temperatures_c.astype(np.float64)
    truth = similarity(angle_deg=angle, shift_x=shift_x, shift_y=shift_y, centre=(319.5, 239.5))
    rng = np.random.default_rng(1)
    moving = moved_by_scipy(reference, truth) + rng.normal(0, 0.06, reference.shape)
    result = register(reference, moving)
    assert largest_error(result.transform, truth) < 1.0
    assert result.angle_deg == pytest.approx(angle, abs=0.15)
    assert result.peak > 0.2


def test_register_shift_only_to_a_fraction_of_a_pixel():
    """A sub-pixel shift (scipy.ndimage.shift) comes back within 0.1 px."""
    reference = scenes.electrical_scene((5, 2, 0)).temperatures_c.astype(np.float64)
    moving = ndimage.shift(reference, (-3.4, 7.7), order=3, mode="nearest")
    result = register(reference, moving, max_rotation_deg=0)
    assert result.shift_x == pytest.approx(7.7, abs=0.1)
    assert result.shift_y == pytest.approx(-3.4, abs=0.1)
    assert result.angle_deg == 0.0


def test_phase_correlation_sign_and_peak():
    """Content moved by +5.3 rows and −9.6 columns (scipy.ndimage.shift) reads as shift_x
    −9.6, shift_y +5.3 within 0.15 px; unrelated noise gives a low peak."""
    rng = np.random.default_rng(2)
    image = ndimage.gaussian_filter(rng.normal(size=(120, 160)), 3)
    moved = ndimage.shift(image, (5.3, -9.6), order=3, mode="nearest")
    shift_x, shift_y, peak = phase_correlation(image, moved)
    assert shift_x == pytest.approx(-9.6, abs=0.15)
    assert shift_y == pytest.approx(5.3, abs=0.15)
    assert peak > 0.5
    other = ndimage.gaussian_filter(rng.normal(size=(120, 160)), 3)
    assert phase_correlation(image, other)[2] < 0.1


def test_register_refuses_images_of_different_size():
    """Arrays of different shapes are refused with a message naming both sizes."""
    with pytest.raises(ValueError, match="160×120 and 100×120"):
        register(np.zeros((120, 160)), np.zeros((120, 100)))


def test_transform_from_points_similarity_from_two_points():
    """Two points fix a similarity: rotation 30°, scale 1.2, shift (7, −3), by hand:
    (10, 0) → 1.2·(cos 30°·10, sin 30°·10) + (7, −3) = (17.392, 3.0)."""
    truth = similarity(angle_deg=30, scale=1.2, shift_x=7, shift_y=-3)
    assert truth.apply([[10, 0]])[0] == pytest.approx([7 + 12 * math.cos(math.pi / 6), 3.0])
    found = transform_from_points([[0, 0], [10, 0]], truth.apply([[0, 0], [10, 0]]))
    assert found.angle_deg == pytest.approx(30.0)
    assert found.scale == pytest.approx(1.2)
    np.testing.assert_allclose(found.array, truth.array, atol=1e-12)


def test_transform_from_points_least_squares_matches_scipy():
    """With four noisy clicks, the similarity equals scipy's least-squares fit of
    (angle, scale, shift)."""
    template = np.array([[30.0, 40.0], [600.0, 60.0], [580.0, 420.0], [50.0, 450.0]])
    clicked = np.array(
        similarity(angle_deg=-2.5, scale=0.98, shift_x=11, shift_y=4).apply(template)
    )
    clicked += np.array([[0.8, -0.4], [-0.5, 0.6], [0.3, 0.9], [-0.7, -0.2]])

    def residual(p):
        return (
            np.array(
                similarity(angle_deg=p[0], scale=p[1], shift_x=p[2], shift_y=p[3]).apply(template)
            )
            - clicked
        ).ravel()

    expected = least_squares(residual, [0.0, 1.0, 0.0, 0.0]).x
    found = transform_from_points(template, clicked)
    assert found.angle_deg == pytest.approx(expected[0], abs=1e-6)
    assert found.scale == pytest.approx(expected[1], abs=1e-8)
    np.testing.assert_allclose(found.apply([[0, 0]])[0], expected[2:], atol=1e-5)


def test_transform_from_points_affine_and_translation():
    """Three points give an affine map exactly; a translation is the mean shift; points
    on one line are refused for an affine map."""
    truth = Transform(((1.1, 0.2, 5.0), (-0.1, 0.9, -8.0)))
    template = [[0, 0], [100, 0], [0, 80]]
    found = transform_from_points(template, truth.apply(template), kind="affine")
    np.testing.assert_allclose(found.array, truth.array, atol=1e-9)
    moved = transform_from_points([[0, 0], [10, 10]], [[3, 1], [13, 13]], kind="translation")
    assert moved.apply([[0, 0]]) == [[3.0, 2.0]]
    with pytest.raises(ValueError, match="one line"):
        transform_from_points([[0, 0], [1, 1], [2, 2]], [[0, 0], [1, 1], [2, 2]], kind="affine")
    with pytest.raises(ValueError, match="at least 2"):
        transform_from_points([[0, 0]], [[1, 1]])


def test_transform_inverse_round_trip():
    """T⁻¹(T(p)) = p."""
    transform = similarity(angle_deg=4, scale=1.05, shift_x=-3, shift_y=2, centre=(50, 40))
    points = [[0, 0], [99, 79], [12.5, 60.25]]
    back = transform.inverse().apply(transform.apply(points))
    np.testing.assert_allclose(back, points, atol=1e-9)


def test_transform_mark_kinds():
    """Vertices move; a turned rectangle becomes a 4-corner polygon; an ellipse keeps
    its size around its moved centre."""
    turn = similarity(angle_deg=90, centre=(0, 0))
    np.testing.assert_allclose(transform_mark("point", [[1, 0]], turn)[1], [[0, 1]], atol=1e-12)
    kind, corners = transform_mark("rectangle", [[0, 0], [4, 2]], turn)
    assert kind == "polygon"
    np.testing.assert_allclose(corners, [[0, 0], [0, 4], [-2, 4], [-2, 0]], atol=1e-12)
    kind, box = transform_mark("ellipse", [[0, 0], [4, 2]], turn)
    assert kind == "ellipse"
    np.testing.assert_allclose(box, [[-3, 1], [1, 3]], atol=1e-12)
    assert transform_mark("rectangle", [[0, 0], [4, 2]], similarity(shift_x=1))[0] == "rectangle"
