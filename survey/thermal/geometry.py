"""What one pixel covers on the target: footprint and area.

Two ways to get a pixel's footprint from the lens. The data-sheet IFOV, FOV / N
(:func:`instantaneous_fov_mrad`), is the mean *angle* per pixel; on a plane facing the
camera a distortion-free (pinhole, rectilinear) lens spreads its pixels evenly over the
width 2·d·tan(FOV/2), so each pixel covers 2·d·tan(FOV/2)/N
(:func:`pixel_footprint_from_fov_m`). FOV / N understates that side by 1.5 % at 24°, 5 % at
45° and 21 % at 90° (areas about twice as much): use the pinhole form whenever the lens field of
view and the detector width are known.
"""

from dataclasses import dataclass

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
    IFOV = FOV / pixels, in radians: the mean angle per pixel, as camera data sheets give
    it (common practice, no source). For footprints and areas on a plane use
    :func:`ifov_from_fov_mrad` (pinhole lens), which this understates by the factor
    (FOV/2)/tan(FOV/2).

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


def _fov(fov_deg, name: str) -> np.ndarray:
    return _checks.in_range(
        fov_deg, name, 0.0, 180.0, low_inclusive=False, high_inclusive=False, unit="°"
    )


def ifov_from_fov_mrad(fov_deg, pixels):
    """Footprint per metre of distance of one pixel on a face-on plane, pinhole lens.

    Parameters
    ----------
    fov_deg : float or array_like
        Field of view of the lens across the image, degrees, in (0, 180).
    pixels : int or array_like
        Number of detector pixels across the same direction, > 0.

    Returns
    -------
    float or ndarray
        2·tan(FOV/2)/N × 1000, mrad (mm of target per m of distance): the IFOV of the
        centre pixel, and the value to store as ``ifov_mrad`` so that
        :func:`pixel_footprint_m` and :func:`pixel_area_m2` give pinhole footprints.

    Notes
    -----
    Pinhole (central-projection) camera: a point at angle θ off axis images at
    f·tan θ, so N pixels of pitch p span N·p = 2·f·tan(FOV/2) and one pixel sees p/f =
    2·tan(FOV/2)/N rad [HartleyZisserman2004].

    Examples
    --------
    >>> round(ifov_from_fov_mrad(24.0, 320), 4)
    1.3285
    >>> round(ifov_from_fov_mrad(90.0, 320) / instantaneous_fov_mrad(90.0, 320), 3)
    1.273
    """
    fov = _fov(fov_deg, "fov_deg")
    count = _checks.positive(pixels, "pixels")
    return _checks.result(2.0 * np.tan(np.radians(fov) / 2.0) / count * 1000.0)


def pixel_footprint_from_fov_m(distance_m, fov_deg, pixels):
    """Side of the square one pixel covers on a plane facing the camera, pinhole lens.

    Parameters
    ----------
    distance_m : float or array_like
        Perpendicular distance from the camera to the plane, m, > 0.
    fov_deg : float or array_like
        Field of view of the lens across the image, degrees, in (0, 180).
    pixels : int or array_like
        Number of detector pixels across the same direction, > 0.

    Returns
    -------
    float or ndarray
        Footprint side, m: the same for every pixel of a distortion-free lens on a plane
        parallel to the detector, so also the mean pixel side across the image.

    Notes
    -----
    footprint = 2·d·tan(FOV/2)/N, the width 2·d·tan(FOV/2) the lens sees at distance d
    shared by N pixels [HartleyZisserman2004]. A tilted plane: see ``view_angle_deg`` of
    :func:`pixel_area_m2` (area / cos θ).

    Examples
    --------
    >>> round(pixel_footprint_from_fov_m(5.0, 24.0, 320), 5)
    0.00664
    """
    distance = _checks.positive(distance_m, "distance_m", " m")
    return _checks.result(distance * ifov_from_fov_mrad(fov_deg, pixels) / 1000.0)


@dataclass(frozen=True)
class MaskedArea:
    """Area of the valid pixels of a mask on the target, with its interval.

    Attributes
    ----------
    area_m2 : float or ndarray
        Area of the counted pixels, m².
    low_m2, high_m2 : float or ndarray
        Ends of the interval from the edge and distance uncertainties, m².
    pixel_count : int
        Pixels counted: inside the mask and holding a temperature (not NaN).
    missing_count : int
        Pixels inside the mask without a temperature (NaN), not counted.
    edge_count : int
        Pixel sides on the edge of the counted region.
    """

    area_m2: float
    low_m2: float
    high_m2: float
    pixel_count: int
    missing_count: int
    edge_count: int

    @property
    def u_m2(self):
        """Half-width of the interval to print as ±, m² (the larger side)."""
        return np.maximum(self.area_m2 - self.low_m2, self.high_m2 - self.area_m2)


def masked_area_m2(
    mask_or_temperatures,
    distance_m,
    ifov_mrad,
    *,
    mask=None,
    view_angle_deg=0.0,
    distance_u_m=0.0,
    edge_u_px=0.5,
):
    """Area on the target of the valid pixels of a mask, each counted once, with its ±.

    Parameters
    ----------
    mask_or_temperatures : array_like, 2-D
        Either a boolean mask (True = counted) or a temperature array, °C, whose non-NaN
        pixels are counted.
    distance_m : float or array_like
        Distance from the camera to the surface, m, > 0.
    ifov_mrad : float or array_like
        Footprint per metre of distance, mrad; from :func:`ifov_from_fov_mrad` (pinhole
        lens) when the field of view and detector width are known.
    mask : array_like of bool, optional
        With a temperature array: the marked pixels (for example
        :func:`survey.thermal.marks.mark_mask`); only pixels inside it *and* holding a
        temperature are counted. Same shape.
    view_angle_deg : float or array_like
        Angle between the line of sight and the surface normal, degrees, in [0, 90).
    distance_u_m : float or array_like
        Expanded uncertainty (k = 2) of the distance, m, ≥ 0 and below the distance.
    edge_u_px : float
        How far the true edge may lie from the pixel edge, pixels, in [0, 1]; half a
        pixel by default.

    Returns
    -------
    MaskedArea
        ``area_m2``, ``low_m2``, ``high_m2`` (``u_m2`` the larger half-width), and the
        counts of counted, missing and edge pixels.

    Notes
    -----
    A = N·(d·IFOV)² / cos θ, N the count of pixels inside the mask that hold a number
    (pixels without data are left out once, never subtracted again); footprint as in
    :func:`pixel_footprint_m` and the oblique factor as in :func:`pixel_area_m2` (common
    practice). Uncertainty model (ours, stated): the wet edge may lie ``edge_u_px``
    pixels either side of the counted pixels' edge all around, which moves the area by
    edge_u_px·E pixels, E the number of pixel sides between a counted pixel and one that
    is not counted (outside the mask, without data, or the image border); the distance
    may be d ± U_d. The ends combine the worst cases: low = max(N − edge_u_px·E, 0)·
    ((d − U_d)·IFOV)²/cos θ, high = (N + edge_u_px·E)·((d + U_d)·IFOV)²/cos θ.

    Examples
    --------
    >>> t = np.array([[20.0, 20.0, np.nan], [20.0, 20.0, 20.0]])
    >>> result = masked_area_m2(t, 10.0, 2.0)
    >>> result.pixel_count, result.edge_count, round(result.area_m2, 6)
    (5, 10, 0.002)
    """
    values = np.asarray(mask_or_temperatures)
    if values.ndim != 2 or values.size == 0:
        raise ValueError("mask_or_temperatures must be a non-empty 2-D array.")
    if values.dtype == bool:
        inside, valid = values, np.ones(values.shape, dtype=bool)
    elif values.dtype.kind in "fiu":
        valid = np.isfinite(values)
        inside = np.ones(values.shape, dtype=bool)
    else:
        raise ValueError("mask_or_temperatures must be booleans or numbers.")
    if mask is not None:
        marked = np.asarray(mask)
        if marked.dtype != bool or marked.shape != values.shape:
            raise ValueError("mask must be a boolean array of the same shape.")
        inside = inside & marked
    counted = inside & valid
    pixel_count = int(np.count_nonzero(counted))
    missing_count = int(np.count_nonzero(inside & ~valid))
    padded = np.pad(counted, 1)
    edge_count = int(
        np.count_nonzero(padded[1:, :] != padded[:-1, :])
        + np.count_nonzero(padded[:, 1:] != padded[:, :-1])
    )
    distance = _checks.positive(distance_m, "distance_m", " m")
    spread = _checks.in_range(distance_u_m, "distance_u_m", 0.0, np.inf, unit=" m")
    if (spread >= distance).any():
        raise ValueError("distance_u_m must be smaller than distance_m.")
    edge = float(_checks.in_range(edge_u_px, "edge_u_px", 0.0, 1.0, unit=" px"))
    angle = _checks.in_range(
        view_angle_deg, "view_angle_deg", 0.0, 90.0, high_inclusive=False, unit="°"
    )
    tilt = np.cos(np.radians(angle))

    def area(count, d):
        return count * np.square(pixel_footprint_m(d, ifov_mrad)) / tilt

    return MaskedArea(
        area_m2=_checks.result(area(pixel_count, distance)),
        low_m2=_checks.result(area(max(pixel_count - edge * edge_count, 0.0), distance - spread)),
        high_m2=_checks.result(area(pixel_count + edge * edge_count, distance + spread)),
        pixel_count=pixel_count,
        missing_count=missing_count,
        edge_count=edge_count,
    )
