"""Moist air at building surfaces: saturation pressure, dew and frost point, surface RH.

Relative humidity is always relative to liquid water, also below 0 °C: that is the
meteorological convention and what hand-held hygrometers report [WMO2018]. Saturation
pressure is the Sonntag (1990) formulation on ITS-90 [Sonntag1990], within 0.01 % of the
IAPWS and ASHRAE (Hyland–Wexler) values from −40 to +60 °C.
"""

import numpy as np

from survey.thermal import _checks
from survey.thermal.constants import ZERO_CELSIUS_K

# Sonntag (1990): ln(e / Pa) = a/T + b + c·T + d·T² + f·ln(T), T in K. The constant terms
# b are for pascals (the often-quoted 16.635794 and 24.7219 are for hectopascals).
_SONNTAG_WATER = (-6096.9385, 21.2409642, -2.711193e-2, 1.673952e-5, 2.433502)
_SONNTAG_ICE = (-6024.5282, 29.32707, 1.0613868e-2, -1.3198825e-5, -0.49382577)

# Magnus forms [Alduchov1996] only start the Newton iteration of the inverse.
_MAGNUS_WATER = (17.625, 243.04)
_MAGNUS_ICE = (22.587, 273.86)
_MAGNUS_E0_PA = 610.94

# Newton's method from a Magnus start (within 2 K) converges quadratically: three steps
# reach 1e-12 K anywhere from −100 to +100 °C, so the loop has a fixed bound (one spare).
_NEWTON_STEPS = 4

_OVER = ("auto", "water", "ice")


def _ln_saturation(t_k: np.ndarray, coefficients) -> np.ndarray:
    a, b, c, d, f = coefficients
    # In-place steps: a whole thermogram passes through here, and temporaries cost time.
    ln_e = np.divide(a, t_k)
    ln_e += b
    polynomial = t_k * d
    polynomial += c
    polynomial *= t_k
    ln_e += polynomial
    log_t = np.log(t_k)
    log_t *= f
    ln_e += log_t
    return ln_e


def _ln_saturation_slope(t_k: np.ndarray, coefficients) -> np.ndarray:
    a, _, c, d, f = coefficients
    return -a / t_k**2 + c + 2.0 * d * t_k + f / t_k


def _saturation(t_c: np.ndarray, over: str) -> np.ndarray:
    t_k = t_c + ZERO_CELSIUS_K
    if over == "auto":
        smallest, largest = _checks.nan_bounds(t_c)
        if largest < 0.0:
            over = "ice"
        elif not smallest < 0.0:  # also when every value is NaN
            over = "water"
    if over == "auto":
        ln_e = _ln_saturation(t_k, _SONNTAG_WATER)
        frozen = t_c < 0.0
        ln_e[frozen] = _ln_saturation(t_k[frozen], _SONNTAG_ICE)
    else:
        ln_e = _ln_saturation(t_k, _SONNTAG_ICE if over == "ice" else _SONNTAG_WATER)
    return np.exp(ln_e, out=ln_e) if isinstance(ln_e, np.ndarray) else np.exp(ln_e)


def _saturation_temperature(e_pa: np.ndarray, over: str) -> np.ndarray:
    """Inverse of the Sonntag formula: the temperature, °C, at which e_pa is saturation."""
    coefficients, (m_a, m_b) = (
        (_SONNTAG_ICE, _MAGNUS_ICE) if over == "ice" else (_SONNTAG_WATER, _MAGNUS_WATER)
    )
    ln_e = np.log(e_pa)
    ratio = ln_e - np.log(_MAGNUS_E0_PA)
    t_k = m_b * ratio / (m_a - ratio) + ZERO_CELSIUS_K
    for _ in range(_NEWTON_STEPS):
        t_k = t_k - (_ln_saturation(t_k, coefficients) - ln_e) / _ln_saturation_slope(
            t_k, coefficients
        )
    return t_k - ZERO_CELSIUS_K


def _vapour_pressure(t_air_c, rh_pct, *, allow_dry: bool) -> np.ndarray:
    t_air = _checks.temperature(t_air_c, "t_air_c")
    rh = _checks.in_range(rh_pct, "rh_pct", 0.0, 100.0, low_inclusive=allow_dry, unit=" %")
    return rh / 100.0 * _saturation(t_air, "water")


def saturation_vapor_pressure(t_c, over="auto"):
    """Saturation vapour pressure of water vapour over liquid water or over ice.

    Parameters
    ----------
    t_c : float or array_like
        Temperature, °C. NaN is passed through (an image pixel without data).
    over : {"auto", "water", "ice"}
        ``"water"`` (also supercooled water below 0 °C), ``"ice"``, or ``"auto"``: ice
        below 0 °C, water at and above 0 °C.

    Returns
    -------
    float or ndarray
        Saturation vapour pressure, Pa.

    Notes
    -----
    Sonntag (1990) on ITS-90 [Sonntag1990], T in K:

    over water: ln(e/Pa) = −6096.9385/T + 21.2409642 − 2.711193e−2·T
    + 1.673952e−5·T² + 2.433502·ln T

    over ice: ln(e/Pa) = −6024.5282/T + 29.32707 + 1.0613868e−2·T − 1.3198825e−5·T²
    − 0.49382577·ln T

    Within 0.01 % of IAPWS-95 [IAPWS95] and of the Hyland–Wexler formulation of the ASHRAE
    Handbook [ASHRAE2017] from −40 to +60 °C; valid from −100 to +100 °C over water and
    from −100 to 0 °C over ice. No enhancement factor: this is pure water vapour.

    Examples
    --------
    >>> round(saturation_vapor_pressure(20.0), 1)
    2339.2
    >>> round(saturation_vapor_pressure(-10.0, over="ice"), 1)
    259.9
    """
    t = _checks.temperature(t_c, "t_c", allow_nan=True)
    return _checks.result(_saturation(t, _checks.choice(over, "over", _OVER)))


def dew_point(t_air_c, rh_pct):
    """Dew point of air over liquid water: the surface temperature where dew forms.

    Parameters
    ----------
    t_air_c : float or array_like
        Air temperature, °C.
    rh_pct : float or array_like
        Relative humidity of the air relative to liquid water, %, in (0, 100]. Below 0 °C
        this is still relative to water, as hygrometers report it.

    Returns
    -------
    float or ndarray
        Dew point, °C. Below 0 °C this is the dew point over supercooled water; use
        :func:`frost_point` for surfaces below 0 °C, where ice deposits first.

    Notes
    -----
    e = φ·e_w(T_air); T_d solves e_w(T_d) = e, with e_w from :func:`saturation_vapor_pressure`
    over water [Sonntag1990], inverted by Newton's method from a Magnus start
    [Alduchov1996] (bounded number of steps).

    Examples
    --------
    >>> round(dew_point(20.0, 80.0), 2)
    16.45
    """
    e = _vapour_pressure(t_air_c, rh_pct, allow_dry=False)
    return _checks.result(_saturation_temperature(e, "water"))


def frost_point(t_air_c, rh_pct):
    """Frost point of air: the surface temperature where ice deposits directly.

    Parameters
    ----------
    t_air_c : float or array_like
        Air temperature, °C.
    rh_pct : float or array_like
        Relative humidity of the air relative to liquid water, %, in (0, 100].

    Returns
    -------
    float or ndarray
        Frost point, °C. Meaningful when it is below 0 °C; it is always above the dew
        point over supercooled water for the same air.

    Notes
    -----
    e = φ·e_w(T_air); T_f solves e_i(T_f) = e with e_i over ice [Sonntag1990].

    Examples
    --------
    >>> round(frost_point(0.0, 80.0), 2)
    -2.68
    """
    e = _vapour_pressure(t_air_c, rh_pct, allow_dry=False)
    return _checks.result(_saturation_temperature(e, "ice"))


def surface_rh(t_air_c, rh_pct, t_surface_c):
    """Relative humidity that room air reaches in the thin layer touching a surface.

    Parameters
    ----------
    t_air_c : float or array_like
        Air temperature, °C.
    rh_pct : float or array_like
        Relative humidity of the air relative to liquid water, %, in [0, 100].
    t_surface_c : float or array_like
        Surface temperature, °C, for example a corrected thermogram. NaN pixels give NaN.

    Returns
    -------
    float or ndarray
        Surface relative humidity, %, **not capped**: 100 % or more means condensation
        (or frost, below 0 °C) is expected; 80 % or more is the mould criterion of
        ISO 13788 [ISO13788].

    Notes
    -----
    φ_s = φ·e_w(T_air) / e_s(T_s). The vapour pressure of the air is unchanged at the
    surface; e_s is over water at and above 0 °C and over ice below 0 °C, as in
    ISO 13788 [ISO13788], with the Sonntag formulas [Sonntag1990].

    Examples
    --------
    >>> round(surface_rh(20.0, 50.0, 12.0), 1)
    83.4
    """
    e = _vapour_pressure(t_air_c, rh_pct, allow_dry=True)
    t_surface = _checks.temperature(t_surface_c, "t_surface_c", allow_nan=True)
    return _checks.result(100.0 * e / _saturation(t_surface, "auto"))


def temperature_factor(t_surface_c, t_inside_c, t_outside_c):
    """Temperature factor at the internal surface, fRsi.

    Parameters
    ----------
    t_surface_c : float or array_like
        Internal surface temperature θsi, °C. NaN pixels give NaN.
    t_inside_c : float or array_like
        Indoor air temperature θi, °C.
    t_outside_c : float or array_like
        Outdoor air temperature θe, °C; must differ from ``t_inside_c``.

    Returns
    -------
    float or ndarray
        fRsi, dimensionless: 1 for a perfectly insulated surface, 0 for a surface at the
        outdoor temperature. Measured during a survey (the "temperature index") it is only
        meaningful near steady state.

    Notes
    -----
    fRsi = (θsi − θe) / (θi − θe) [ISO13788], [ISO10211].

    Examples
    --------
    >>> round(temperature_factor(14.0, 20.0, 0.0), 3)
    0.7
    """
    t_surface = _checks.temperature(t_surface_c, "t_surface_c", allow_nan=True)
    t_inside = _checks.temperature(t_inside_c, "t_inside_c")
    t_outside = _checks.temperature(t_outside_c, "t_outside_c")
    difference = t_inside - t_outside
    if (difference == 0).any():
        raise ValueError("t_outside_c must differ from t_inside_c.")
    return _checks.result((t_surface - t_outside) / difference)


def critical_temperature_factor(t_inside_c, rh_inside_pct, t_outside_c, limit_rh_pct=80.0):
    """Minimum temperature factor fRsi,min that keeps the surface RH below a limit.

    Parameters
    ----------
    t_inside_c : float or array_like
        Indoor air temperature θi, °C.
    rh_inside_pct : float or array_like
        Indoor relative humidity φi (relative to liquid water), %, in (0, 100].
    t_outside_c : float or array_like
        Outdoor air temperature θe, °C; must be below ``t_inside_c``.
    limit_rh_pct : float or array_like
        Highest acceptable surface RH, %, in (0, 100]: 80 for mould (ISO 13788), 100 for
        surface condensation.

    Returns
    -------
    float or ndarray
        fRsi,min, dimensionless. A measured or designed fRsi below it fails the criterion.

    Notes
    -----
    ISO 13788 method [ISO13788]: p_i = φi·p_sat(θi); p_sat,min = p_i / φ_limit;
    θsi,min = p_sat⁻¹(p_sat,min) (over ice when below 0 °C);
    fRsi,min = (θsi,min − θe) / (θi − θe). For a design check the standard adds a moisture
    excess by humidity class and takes the worst month; this function takes the indoor
    humidity as given. Saturation pressure from [Sonntag1990].

    Examples
    --------
    >>> round(critical_temperature_factor(20.0, 50.0, -5.0), 3)
    0.705
    """
    t_inside = _checks.temperature(t_inside_c, "t_inside_c")
    rh = _checks.in_range(rh_inside_pct, "rh_inside_pct", 0.0, 100.0, low_inclusive=False)
    t_outside = _checks.temperature(t_outside_c, "t_outside_c")
    limit = _checks.in_range(
        limit_rh_pct, "limit_rh_pct", 0.0, 100.0, low_inclusive=False, unit=" %"
    )
    if (t_outside >= t_inside).any():
        raise ValueError("t_outside_c must be below t_inside_c (a heated interior).")
    p_min = rh / limit * _saturation(t_inside, "water")
    t_min = _saturation_temperature(p_min, "water")
    frozen = t_min < 0.0
    if frozen.any():
        t_min = np.where(frozen, _saturation_temperature(p_min, "ice"), t_min)
    return _checks.result((t_min - t_outside) / (t_inside - t_outside))
