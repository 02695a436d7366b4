"""Aligning a visual photo with its thermogram from matching point pairs.

Two pairs fix a similarity (scale, rotation and shift), three pairs a full affine
transform. The result maps photo pixels to thermogram pixels; pixel centres are at whole
numbers, x to the right and y down.
"""

import numpy as np


def affine_from_pairs(photo_xy, thermogram_xy) -> np.ndarray:
    """The 2×3 matrix taking photo pixels to thermogram pixels, fitted to 2 or 3 pairs.

    Parameters
    ----------
    photo_xy, thermogram_xy : array_like, shape (n, 2), n = 2 or 3
        Matching points, pixels: photo point i shows the place of thermogram point i.

    Returns
    -------
    ndarray, shape (2, 3)
        ``[[a11, a12, tx], [a21, a22, ty]]``: x' = a11·x + a12·y + tx, y' = a21·x + a22·y + ty.

    Notes
    -----
    Two pairs solve the similarity x' = a·x − b·y + c, y' = b·x + a·y + d (four unknowns,
    four equations); three pairs solve the six affine unknowns. Both are linear systems,
    solved by least squares (exact here, as the systems are square). Raises ValueError when
    the points do not define a transform: two photo points at one place, three on a line,
    or a matrix that collapses the plane.

    Examples
    --------
    >>> affine_from_pairs([[0, 0], [10, 0]], [[5, 5], [25, 5]]).round(6).tolist()
    [[2.0, -0.0, 5.0], [0.0, 2.0, 5.0]]
    """
    photo = np.asarray(photo_xy, dtype=float)
    target = np.asarray(thermogram_xy, dtype=float)
    if photo.shape != target.shape or photo.ndim != 2 or photo.shape[1] != 2:
        raise ValueError("pairs must be matching lists of [x, y] points.")
    if len(photo) not in (2, 3):
        raise ValueError("Give two or three pairs of matching points.")
    if len(photo) == 2:
        rows, rhs = [], []
        for (x, y), (u, v) in zip(photo, target, strict=True):
            rows += [[x, -y, 1.0, 0.0], [y, x, 0.0, 1.0]]
            rhs += [u, v]
        system = np.array(rows)
        if np.linalg.matrix_rank(system) < 4:
            raise ValueError("The two photo points must be different places.")
        a, b, c, d = np.linalg.lstsq(system, np.array(rhs), rcond=None)[0]
        matrix = np.array([[a, -b, c], [b, a, d]])
    else:
        design = np.column_stack([photo, np.ones(len(photo))])
        if np.linalg.matrix_rank(design) < 3:
            raise ValueError("The three points must not lie on one straight line.")
        matrix = np.linalg.lstsq(design, target, rcond=None)[0].T
    if abs(np.linalg.det(matrix[:, :2])) < 1e-9:
        raise ValueError("These points do not define a usable alignment.")
    return matrix


def thermogram_to_photo(matrix, points_xy) -> np.ndarray:
    """Thermogram pixels to photo pixels: the inverse of an alignment from `affine_from_pairs`.

    Parameters
    ----------
    matrix : array_like, shape (2, 3)
        Photo-to-thermogram affine transform.
    points_xy : array_like, shape (n, 2)
        Thermogram pixel positions.

    Returns
    -------
    ndarray, shape (n, 2)
        Photo pixel positions.

    Notes
    -----
    With p' = A·p + t, p = A⁻¹·(p' − t); A is invertible for every alignment that
    `affine_from_pairs` returns. Raises ValueError for a singular matrix.

    Examples
    --------
    >>> m = affine_from_pairs([[0, 0], [10, 0]], [[5, 5], [25, 5]])
    >>> thermogram_to_photo(m, [[25, 5], [5, 25]]).round(6).tolist()
    [[10.0, 0.0], [0.0, 10.0]]
    """
    m = np.asarray(matrix, dtype=float)
    if m.shape != (2, 3):
        raise ValueError("matrix must be 2 × 3.")
    linear, shift = m[:, :2], m[:, 2]
    if abs(np.linalg.det(linear)) < 1e-12:
        raise ValueError("matrix does not define a usable alignment.")
    points = np.asarray(points_xy, dtype=float).reshape(-1, 2)
    return np.linalg.solve(linear, (points - shift).T).T
