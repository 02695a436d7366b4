"""Photo-to-thermogram alignment from matching point pairs."""

import math

import numpy as np
import pytest

from survey.thermal.alignment import affine_from_pairs


def _apply(matrix, points):
    points = np.asarray(points, dtype=float)
    return points @ matrix[:, :2].T + matrix[:, 2]


def test_affine_from_pairs_recovers_a_similarity_from_two_pairs():
    """Scale 0.5, a 30° turn and a shift, built by hand, are found from two pairs."""
    # Source: the similarity x' = s(cos θ·x − sin θ·y) + c, y' = s(sin θ·x + cos θ·y) + d
    # written out by hand for s = 0.5, θ = 30°, (c, d) = (12, −4).
    s, theta = 0.5, math.radians(30)
    truth = np.array(
        [
            [s * math.cos(theta), -s * math.sin(theta), 12.0],
            [s * math.sin(theta), s * math.cos(theta), -4.0],
        ]
    )
    photo = [[100.0, 40.0], [300.0, 220.0]]
    matrix = affine_from_pairs(photo, _apply(truth, photo))
    np.testing.assert_allclose(matrix, truth, atol=1e-12)


def test_affine_from_pairs_recovers_a_shear_from_three_pairs():
    """A full affine map (with shear) is found exactly from three pairs."""
    truth = np.array([[1.2, 0.3, -7.0], [-0.1, 0.9, 3.5]])  # chosen by hand
    photo = [[0.0, 0.0], [640.0, 0.0], [0.0, 480.0]]
    matrix = affine_from_pairs(photo, _apply(truth, photo))
    np.testing.assert_allclose(matrix, truth, atol=1e-9)


@pytest.mark.parametrize(
    ("photo", "message"),
    [
        ([[5.0, 5.0], [5.0, 5.0]], "different places"),
        ([[0.0, 0.0], [1.0, 1.0], [2.0, 2.0]], "straight line"),
    ],
)
def test_affine_from_pairs_refuses_degenerate_points(photo, message):
    """Points that cannot fix a transform raise ValueError saying why."""
    target = [[float(i), 2.0 * i] for i in range(len(photo))]
    with pytest.raises(ValueError, match=message):
        affine_from_pairs(photo, target)


def test_thermogram_to_photo_returns_the_photo_points_of_the_fitted_pairs():
    """Three pairs fix the affine exactly, so its inverse takes each thermogram point back to
    its photo point (the definition of the inverse; the pairs are the check values)."""
    from survey.thermal import thermogram_to_photo

    photo = [[12.0, 30.0], [410.0, 44.0], [220.0, 290.0]]
    thermogram = [[3.0, 5.0], [38.0, 9.0], [20.0, 27.0]]
    matrix = affine_from_pairs(photo, thermogram)
    np.testing.assert_allclose(thermogram_to_photo(matrix, thermogram), photo, atol=1e-9)


def test_thermogram_to_photo_refuses_a_matrix_that_collapses_the_plane():
    """A singular linear part has no inverse: ValueError naming the matrix."""
    from survey.thermal import thermogram_to_photo

    with pytest.raises(ValueError, match="matrix"):
        thermogram_to_photo([[1.0, 2.0, 0.0], [2.0, 4.0, 0.0]], [[1.0, 1.0]])
