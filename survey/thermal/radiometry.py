"""Radiometric correction: from the camera's apparent temperature to the object temperature.

The camera sees the object's own emission, the surroundings reflected by the object and the
emission of the air path. The measurement equation [ISO18434-1] separates them:

    W_meas = ε·τ·W(T_obj) + (1 − ε)·τ·W(T_refl) + (1 − τ)·W(T_atm)

W is the radiance the camera responds to: Planck's law integrated over the long-wave band
8–14 µm (``band="lwir"``, typical of microbolometer cameras) or σT⁴ (``band="total"``).
"""

from functools import lru_cache
from typing import NamedTuple

import numpy as np

from survey.thermal import _checks
from survey.thermal.constants import (
    LWIR_BAND_M,
    PLANCK_C1L_W_M2_SR,
    PLANCK_C2_M_K,
    STEFAN_BOLTZMANN_W_M2_K4,
    ZERO_CELSIUS_K,
)

BANDS = ("lwir", "total")

#: Temperatures the long-wave table covers, °C. Beyond the stated accuracy range
#: (−50 to +650 °C) on both sides so that cold skies and hot reflections still work.
LWIR_TABLE_RANGE_C = (-100.0, 1000.0)

#: Below this emissivity a reading is uncertain; below the second, a reflective surface
#: gives no quantitative differential (common practice, no source).
EMISSIVITY_UNCERTAIN_BELOW = 0.6
EMISSIVITY_NOT_QUANTITATIVE_BELOW = 0.3

REFLECTS_MORE_THAN_EMITS = (
    "The surface reflects more than it emits at this emissivity, so no object temperature "
    "can be computed from this reading; apply high-emissivity tape or paint and re-measure."
)

# 0.1 K steps in temperature and 16385 steps in ln W keep the linear-interpolation error
# below 2e-4 K both ways; an odd number of wavelength nodes 0.025 µm apart makes Simpson's
# rule agree with adaptive quadrature to 1e-10 (relative).
_TABLE_STEP_K = 0.1
_INVERSE_NODES = 16385
_WAVELENGTH_NODES = 241

# Central-difference steps for the sensitivity coefficients: small against the
# uncertainties; the table is piecewise linear, so a step inside one 0.1 K segment
# returns that segment's slope rather than rounding noise.
_EMISSIVITY_STEP_FRACTION = 1e-3
_TEMPERATURE_STEP_K = 0.01


def band_radiance(t_c, band="lwir"):
    """Radiance the camera responds to for a blackbody at ``t_c``, computed directly.

    Parameters
    ----------
    t_c : float or array_like
        Blackbody temperature, °C.
    band : {"lwir", "total"}
        ``"lwir"``: Planck's law integrated over 8–14 µm by Simpson's rule, W m⁻² sr⁻¹;
        ``"total"``: σT⁴, W m⁻².

    Returns
    -------
    float or ndarray
        Radiance in the unit of the band.

    Notes
    -----
    L_λ = 2hc² / λ⁵ / (exp(hc / λkT) − 1) [Planck1901], constants from [CODATA2018];
    M = σT⁴ [CODATA2018]. This is the slow, exact path used to build the cached table.

    Examples
    --------
    >>> round(band_radiance(0.0, "total"), 1)
    315.7
    """
    t_k = _checks.temperature(t_c, "t_c") + ZERO_CELSIUS_K
    if _checks.choice(band, "band", BANDS) == "total":
        return _checks.result(STEFAN_BOLTZMANN_W_M2_K4 * t_k**4)
    return _checks.result(_lwir_radiance(t_k))


def _lwir_radiance(t_k: np.ndarray) -> np.ndarray:
    wavelengths = np.linspace(*LWIR_BAND_M, _WAVELENGTH_NODES)
    weights = np.ones(_WAVELENGTH_NODES)
    weights[1:-1:2], weights[2:-1:2] = 4.0, 2.0
    weights *= (wavelengths[1] - wavelengths[0]) / 3.0
    t = np.asarray(t_k, dtype=np.float64)[..., np.newaxis]
    spectral = PLANCK_C1L_W_M2_SR / wavelengths**5 / np.expm1(PLANCK_C2_M_K / (wavelengths * t))
    return spectral @ weights


class _LwirTable(NamedTuple):
    """Band radiance on a uniform temperature grid, and temperature on a uniform ln W grid.

    Both directions are linear interpolation on a uniform grid, found by arithmetic rather
    than by searching, so the time per pixel does not depend on the image.
    """

    t_start_c: float
    t_step_k: float
    radiance: np.ndarray
    radiance_slope: np.ndarray
    ln_start: float
    ln_step: float
    temperature_c: np.ndarray
    temperature_slope: np.ndarray

    @property
    def radiance_range(self) -> tuple[float, float]:
        return float(self.radiance[0]), float(self.radiance[-1])


@lru_cache(maxsize=1)
def _lwir_table() -> _LwirTable:
    """Build the long-wave table once (a few tens of ms); the arrays are read-only."""
    low, high = LWIR_TABLE_RANGE_C
    t_c = np.linspace(low, high, round((high - low) / _TABLE_STEP_K) + 1)
    radiance = _lwir_radiance(t_c + ZERO_CELSIUS_K)
    ln_radiance = np.log(radiance)
    ln_grid = np.linspace(ln_radiance[0], ln_radiance[-1], _INVERSE_NODES)
    # ln W is smooth in T, so interpolating the 0.1 K table adds under 5e-5 K.
    temperature = np.interp(ln_grid, ln_radiance, t_c)
    arrays = [radiance, np.diff(radiance), temperature, np.diff(temperature)]
    for array in arrays:
        array.flags.writeable = False
    return _LwirTable(
        low, t_c[1] - t_c[0], arrays[0], arrays[1],
        ln_grid[0], ln_grid[1] - ln_grid[0], arrays[2], arrays[3],
    )  # fmt: skip


def _uniform_interp(x, start, step, values, slopes) -> np.ndarray:
    """Linear interpolation in a table sampled every ``step`` from ``start``; x in range."""
    position = np.subtract(x, start, dtype=np.float64)
    position *= 1.0 / step
    # A NaN pixel casts to an arbitrary index that mode="clip" keeps inside the table; its
    # NaN fraction keeps the result NaN. The top node takes the last slope times 0.
    with np.errstate(invalid="ignore"):
        index = position.astype(np.intp)
    position -= index
    result = np.take(slopes, index, mode="clip")
    result *= position
    result += np.take(values, index, mode="clip")
    return result


def _radiance(t_c: np.ndarray, band: str) -> np.ndarray:
    if band == "total":
        return STEFAN_BOLTZMANN_W_M2_K4 * (t_c + ZERO_CELSIUS_K) ** 4
    table = _lwir_table()
    return _uniform_interp(
        t_c, table.t_start_c, table.t_step_k, table.radiance, table.radiance_slope
    )


def _temperature(radiance: np.ndarray, band: str) -> np.ndarray:
    if band == "total":
        return np.sqrt(np.sqrt(radiance / STEFAN_BOLTZMANN_W_M2_K4)) - ZERO_CELSIUS_K
    table = _lwir_table()
    return _uniform_interp(
        np.log(radiance),
        table.ln_start,
        table.ln_step,
        table.temperature_c,
        table.temperature_slope,
    )


def _inputs(temperature_c, name, emissivity, reflected_c, transmittance, atmosphere_c, band):
    band = _checks.choice(band, "band", BANDS)
    within = LWIR_TABLE_RANGE_C if band == "lwir" else None
    t = _checks.temperature(temperature_c, name, allow_nan=True, within=within)
    eps = _checks.in_range(emissivity, "emissivity", 0.0, 1.0, low_inclusive=False)
    reflected = _checks.temperature(reflected_c, "reflected_c", within=within)
    tau = _checks.in_range(transmittance, "transmittance", 0.0, 1.0, low_inclusive=False)
    if atmosphere_c is None:
        atmosphere = reflected
    else:
        atmosphere = _checks.temperature(atmosphere_c, "atmosphere_c", within=within)
    return t, eps, reflected, tau, atmosphere, band


def _solve_object(apparent, eps, reflected, tau, atmosphere, band, out_of_range):
    """The measurement equation solved for the object; inputs already checked."""
    measured = _radiance(apparent, band)
    background = (1.0 - eps) * tau * _radiance(reflected, band)
    if np.any(tau != 1.0):
        background = background + (1.0 - tau) * _radiance(atmosphere, band)
    radiance = (measured - background) / (eps * tau)
    if band == "lwir":
        lowest, highest = _lwir_table().radiance_range
    else:
        lowest, highest = np.nextafter(0.0, 1.0), np.inf
    smallest, largest = _checks.nan_bounds(radiance)
    if smallest < lowest or largest > highest:
        if out_of_range == "nan":
            radiance = np.where((radiance < lowest) | (radiance > highest), np.nan, radiance)
        elif smallest < lowest:
            raise ValueError(REFLECTS_MORE_THAN_EMITS)
        else:
            raise ValueError(
                f"The object temperature would be above {LWIR_TABLE_RANGE_C[1]:g} °C, "
                "outside what this tool computes; check the emissivity and the reading."
            )
    return _temperature(radiance, band)


def object_temperature(
    apparent_c,
    emissivity,
    reflected_c,
    transmittance=1.0,
    atmosphere_c=None,
    band="lwir",
    *,
    out_of_range="raise",
):
    """Object temperature from an apparent (blackbody-equivalent) temperature.

    Parameters
    ----------
    apparent_c : float or array_like
        Apparent temperature read by the camera at ε = 1, τ = 1, °C; a whole thermogram
        is fine. NaN pixels give NaN.
    emissivity : float or array_like
        Emissivity ε of the surface, in (0, 1].
    reflected_c : float or array_like
        Reflected apparent temperature, °C (not the air temperature [ISO10878]).
    transmittance : float or array_like
        Transmittance τ of the air path (or window), in (0, 1]; 1 by default.
    atmosphere_c : float or array_like, optional
        Temperature of the air path, °C; defaults to ``reflected_c``.
    band : {"lwir", "total"}
        ``"lwir"``: Planck's law over 8–14 µm; ``"total"``: Stefan–Boltzmann σT⁴.
    out_of_range : {"raise", "nan"}
        What to do with pixels whose corrected radiance has no valid temperature: raise
        ``ValueError`` (default) or return NaN for those pixels (for whole images).

    Returns
    -------
    float or ndarray
        Object temperature, °C.

    Raises
    ------
    ValueError
        Naming the parameter for invalid input; with a message to re-measure with tape or
        paint when the corrected radiance is not positive or below the table (the surface
        reflects more than it emits).

    Notes
    -----
    W(T_obj) = [W_meas − (1 − ε)·τ·W(T_refl) − (1 − τ)·W(T_atm)] / (ε·τ) [ISO18434-1].
    For ``band="lwir"`` W is Planck's spectral radiance [Planck1901] integrated over
    8–14 µm (Simpson's rule); a monotone table from −100 to +1000 °C, W every 0.1 K and
    T on a uniform grid of ln W, is built once and interpolated linearly both ways (error
    below 0.001 K from −50 to +650 °C; no per-pixel root finding). For ``band="total"``
    W = σT⁴ and the inverse is exact.

    Examples
    --------
    >>> round(object_temperature(80.0, 0.90, 25.0), 2)
    85.0
    >>> round(object_temperature(80.0, 0.90, 25.0, band="total"), 2)
    84.73
    """
    _checks.choice(out_of_range, "out_of_range", ("raise", "nan"))
    inputs = _inputs(
        apparent_c, "apparent_c", emissivity, reflected_c, transmittance, atmosphere_c, band
    )
    return _checks.result(_solve_object(*inputs, out_of_range))


def apparent_temperature(
    object_c, emissivity, reflected_c, transmittance=1.0, atmosphere_c=None, band="lwir"
):
    """Apparent temperature a camera reads for an object: the inverse of the correction.

    Parameters
    ----------
    object_c : float or array_like
        Object temperature, °C. NaN pixels give NaN.
    emissivity : float or array_like
        Emissivity ε of the surface, in (0, 1].
    reflected_c : float or array_like
        Reflected apparent temperature, °C.
    transmittance : float or array_like
        Transmittance τ of the air path, in (0, 1]; 1 by default.
    atmosphere_c : float or array_like, optional
        Temperature of the air path, °C; defaults to ``reflected_c``.
    band : {"lwir", "total"}
        ``"lwir"``: Planck's law over 8–14 µm; ``"total"``: Stefan–Boltzmann σT⁴.

    Returns
    -------
    float or ndarray
        Apparent temperature, °C (what the camera shows at ε = 1, τ = 1).

    Notes
    -----
    W_meas = ε·τ·W(T_obj) + (1 − ε)·τ·W(T_refl) + (1 − τ)·W(T_atm) [ISO18434-1], then
    T_app = W⁻¹(W_meas); W as in :func:`object_temperature`.

    Examples
    --------
    >>> round(apparent_temperature(85.0, 0.90, 25.0), 2)
    80.0
    """
    t, eps, reflected, tau, atmosphere, band = _inputs(
        object_c, "object_c", emissivity, reflected_c, transmittance, atmosphere_c, band
    )
    measured = (
        eps * tau * _radiance(t, band)
        + (1.0 - eps) * tau * _radiance(reflected, band)
        + (1.0 - tau) * _radiance(atmosphere, band)
    )
    return _checks.result(_temperature(measured, band))


def object_temperature_uncertainty(
    apparent_c,
    emissivity,
    reflected_c,
    emissivity_u,
    reflected_u_c,
    camera_u_c,
    band="lwir",
    *,
    transmittance=1.0,
    atmosphere_c=None,
):
    """Uncertainty of the object temperature from emissivity, reflection and camera.

    Parameters
    ----------
    apparent_c : float or array_like
        Apparent temperature, °C.
    emissivity : float or array_like
        Emissivity ε, in (0, 1].
    reflected_c : float or array_like
        Reflected apparent temperature, °C.
    emissivity_u : float or array_like
        Uncertainty of the emissivity (absolute, e.g. 0.02), ≥ 0.
    reflected_u_c : float or array_like
        Uncertainty of the reflected apparent temperature, K, ≥ 0.
    camera_u_c : float or array_like
        Uncertainty of the camera's apparent temperature, K, ≥ 0 (for example the stated
        accuracy "±2 °C or ±2 % of reading, whichever is greater").
    band : {"lwir", "total"}
        Radiance band, as in :func:`object_temperature`.
    transmittance, atmosphere_c
        As in :func:`object_temperature`.

    Returns
    -------
    float or ndarray
        Combined uncertainty of the object temperature, ± K, at the coverage of the
        inputs (give all three as standard uncertainties to get a standard uncertainty).

    Notes
    -----
    Independent terms combined in quadrature [GUM2008]:
    u(T) = √[(∂T/∂ε·u_ε)² + (∂T/∂T_refl·u_refl)² + (∂T/∂T_app·u_cam)²], each sensitivity
    coefficient by a central difference, e.g. ∂T/∂ε ≈ [T(ε + h) − T(ε − h)] / 2h with
    h = 0.001·ε (and 0.01 K for the temperatures). This is first order: at low emissivity
    the true interval is asymmetric and wider, and the answer is large on purpose.

    Examples
    --------
    >>> round(object_temperature_uncertainty(58.0, 0.95, 20.0, 0.02, 2.0, 2.0), 1)
    2.2
    """
    t, eps, reflected, tau, atmosphere, band = _inputs(
        apparent_c, "apparent_c", emissivity, reflected_c, transmittance, atmosphere_c, band
    )
    u_eps = _checks.in_range(emissivity_u, "emissivity_u", 0.0, 1.0)
    u_reflected = _checks.in_range(reflected_u_c, "reflected_u_c", 0.0, np.inf)
    u_camera = _checks.in_range(camera_u_c, "camera_u_c", 0.0, np.inf)

    def solve(apparent=t, eps=eps, reflected=reflected):
        return _solve_object(apparent, eps, reflected, tau, atmosphere, band, "raise")

    h_eps = _EMISSIVITY_STEP_FRACTION * eps
    h_t = _TEMPERATURE_STEP_K
    d_eps = (solve(eps=eps + h_eps) - solve(eps=eps - h_eps)) / (2.0 * h_eps)
    d_reflected = (solve(reflected=reflected + h_t) - solve(reflected=reflected - h_t)) / (
        2.0 * h_t
    )
    d_apparent = (solve(apparent=t + h_t) - solve(apparent=t - h_t)) / (2.0 * h_t)
    combined = np.sqrt(
        (d_eps * u_eps) ** 2 + (d_reflected * u_reflected) ** 2 + (d_apparent * u_camera) ** 2
    )
    return _checks.result(combined)


def emissivity_warning(emissivity):
    """How far a reading at this emissivity can be trusted.

    Parameters
    ----------
    emissivity : float
        Emissivity ε, in (0, 1].

    Returns
    -------
    str or None
        ``None`` from 0.6 up; ``"uncertain"`` below 0.6 (reflections weigh heavily);
        ``"not_quantitative"`` below 0.3 (a reflective surface: no quantitative
        differential, only a qualitative pattern).

    Notes
    -----
    Thresholds are common practice, no source: the uncertainty of the object temperature
    grows roughly as 1/ε (see :func:`object_temperature_uncertainty`).

    Examples
    --------
    >>> emissivity_warning(0.95) is None
    True
    >>> emissivity_warning(0.1)
    'not_quantitative'
    """
    eps = _checks.in_range(emissivity, "emissivity", 0.0, 1.0, low_inclusive=False)
    if np.ndim(eps) != 0:
        raise ValueError("emissivity must be a single number.")
    if eps < EMISSIVITY_NOT_QUANTITATIVE_BELOW:
        return "not_quantitative"
    if eps < EMISSIVITY_UNCERTAIN_BELOW:
        return "uncertain"
    return None
