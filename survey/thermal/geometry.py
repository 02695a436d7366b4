"""What one pixel covers on the target: footprint and area."""

import numpy as np

from survey.thermal import _checks


def instantaneous_fov_mrad(field_of_view_deg, pixels):
    """Angle one detector pixel sees (IFOV) from the lens field of view.

    Parameters
    ----------
    field_of_view_deg : float or array_like
        Field of view across the image, degrees, in (0, 180).
    pixels : int or array_like
        Number of pixels across the same direction, > 0.

    Returns
    -------
    float or ndarray
        IFOV, mrad.

    Notes
    -----
    IFOV = FOV / pixels, in radians (the small-angle approximation used in camera data
    sheets; common practice, no source).

    Examples
    --------
    >>> round(instantaneous_fov_mrad(24.0, 320), 3)
    1.309
    """
    fov = _checks.in_range(
        field_of_view_deg,
        "field_of_view_deg",
        0.0,
        180.0,
        low_inclusive=False,
        high_inclusive=False,
    )
    count = _checks.positive(pixels, "pixels")
    return _checks.result(np.radians(fov) / count * 1000.0)


def pixel_footprint_m(distance_m, ifov_mrad):
    """Side of the square one pixel covers on a target seen face-on.

    Parameters
    ----------
    distance_m : float or array_like
        Distance from the camera to the target, m, > 0.
    ifov_mrad : float or array_like
        Instantaneous field of view of one pixel, mrad, > 0.

    Returns
    -------
    float or ndarray
        Footprint side, m. A spot reading needs about 3 × 3 pixels on the target to be
        measured reliably (common practice, no source).

    Notes
    -----
    footprint = distance × IFOV (small-angle approximation; below 1e-6 relative error at
    the IFOVs of thermal cameras; common practice, no source).

    Examples
    --------
    >>> round(pixel_footprint_m(5.0, 1.309), 5)
    0.00654
    """
    distance = _checks.positive(distance_m, "distance_m", " m")
    ifov = _checks.positive(ifov_mrad, "ifov_mrad", " mrad")
    return _checks.result(distance * ifov / 1000.0)


def pixel_area_m2(pixel_count, distance_m, ifov_mrad, *, view_angle_deg=0.0):
    """Area of the target covered by a number of pixels.

    Parameters
    ----------
    pixel_count : float or array_like
        Number of pixels (for example the pixel count of an area mark), ≥ 0.
    distance_m : float or array_like
        Distance from the camera to the target, m, > 0.
    ifov_mrad : float or array_like
        Instantaneous field of view of one pixel, mrad, > 0.
    view_angle_deg : float or array_like
        Angle between the line of sight and the surface normal, degrees, in [0, 90);
        0 (face-on) by default.

    Returns
    -------
    float or ndarray
        Area on the surface, m². An oblique view enlarges the true area behind each pixel
        by 1/cos θ; left at 0 the result is the face-on area, a lower bound.

    Notes
    -----
    A = N × footprint² / cos θ with footprint = distance × IFOV (common practice, no
    source).

    Examples
    --------
    >>> round(pixel_area_m2(100, 5.0, 1.309), 5)
    0.00428
    >>> round(pixel_area_m2(100, 5.0, 1.309, view_angle_deg=60.0), 5)
    0.00857
    """
    count = _checks.in_range(pixel_count, "pixel_count", 0.0, np.inf)
    angle = _checks.in_range(
        view_angle_deg, "view_angle_deg", 0.0, 90.0, high_inclusive=False, unit="°"
    )
    footprint = pixel_footprint_m(distance_m, ifov_mrad)
    return _checks.result(count * np.square(footprint) / np.cos(np.radians(angle)))
