"""Moist air at building surfaces: saturation pressure, dew and frost point, surface RH.

Relative humidity is always relative to liquid water, also below 0 °C: that is the
meteorological convention and what hand-held hygrometers report [WMO2018]. Saturation
pressure is the Sonntag (1990) formulation on ITS-90 [Sonntag1990]; what it was measured to
agree with is stated at :func:`saturation_vapor_pressure`.

Limits at a surface (condensation at 100 %, mould at 80 % surface RH) follow one convention
everywhere: saturation over liquid water at and above 0 °C and over ice below 0 °C, as
ISO 13788 does [ISO13788]. :func:`surface_rh`, :func:`surface_limit_temperature`,
:func:`surface_margin_k` and :func:`critical_temperature_factor` all use it, so a surface
flagged at 100 % surface RH always has a margin at or below 0 K.

Temperatures outside the range the formulas are valid for (−100 to +100 °C over water,
−100 to +0.01 °C over ice) are refused with a ``ValueError`` naming the parameter.
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

#: Range of validity of the Sonntag (1990) formula over liquid water, °C, as commonly
#: quoted for [Sonntag1990] (from memory and secondary sources, not the paper itself).
WATER_RANGE_C = (-100.0, 100.0)

#: Range of validity of the Sonntag (1990) formula over ice, °C (up to the triple point;
#: from memory and secondary sources, as :data:`WATER_RANGE_C`).
ICE_RANGE_C = (-100.0, 0.01)


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


def _vapour_pressure(
    t_air_c, rh_pct, *, allow_dry: bool, t_name: str = "t_air_c", rh_name: str = "rh_pct"
) -> np.ndarray:
    t_air = _checks.temperature(t_air_c, t_name, within=WATER_RANGE_C)
    rh = _checks.in_range(rh_pct, rh_name, 0.0, 100.0, low_inclusive=allow_dry, unit=" %")
    return rh / 100.0 * _saturation(t_air, "water")


def _saturation_point(e_pa: np.ndarray, over: str, rh_name: str) -> np.ndarray:
    """Temperature where e_pa saturates, refused where it leaves the formula's range."""
    return _within_range(_saturation_temperature(e_pa, over), over, rh_name)


def _within_range(t_c: np.ndarray, over: str, rh_name: str) -> np.ndarray:
    low, high = ICE_RANGE_C if over == "ice" else WATER_RANGE_C
    # A hair of slack: Newton lands within 1e-12 K of a saturated end of the range.
    if (t_c < low - 1e-9).any():
        raise ValueError(
            f"{rh_name} is too low: the saturation point would be below {low:g} °C, "
            "outside the range of the saturation formula."
        )
    if (t_c > high + 1e-9).any():
        if over == "ice":
            raise ValueError(
                "t_air_c and rh_pct give a frost point above 0.01 °C, where ice cannot form; "
                "use dew_point (or surface_limit_temperature with over='auto')."
            )
        raise ValueError(
            f"{rh_name} is too high: the saturation point would be above {high:g} °C, "
            "outside the range of the saturation formula."
        )
    return t_c


def _limit_temperature(e_pa: np.ndarray, limit_rh_pct, over: str, rh_name: str) -> np.ndarray:
    """Surface temperature, °C, at which air of vapour pressure e_pa reaches limit_rh_pct.

    Solves e_s(θ) = e / φ_limit. With ``over="auto"`` the water solution stands at and above
    0 °C and the ice solution below it, as :func:`surface_rh` reads the surface. Where the
    water solution is just below 0 °C but the ice solution is not (e within 0.01 % of
    e_w(0 °C), where the two formulas differ), the limit is 0 °C itself: every colder
    surface exceeds the limit.
    """
    p_limit = e_pa / (limit_rh_pct / 100.0)
    if over == "ice":
        return _saturation_point(p_limit, "ice", rh_name)
    t = _saturation_temperature(p_limit, "water")
    frozen = t < 0.0
    if over == "auto" and frozen.any():
        ice = np.minimum(_saturation_temperature(p_limit, "ice"), 0.0)
        t = np.where(frozen, ice, t)
    return _within_range(t, "water", rh_name)


def saturation_vapor_pressure(t_c, over="auto"):
    """Saturation vapour pressure of water vapour over liquid water or over ice.

    Parameters
    ----------
    t_c : float or array_like
        Temperature, °C: within −100…+100 °C over water and with ``"auto"``, within
        −100…+0.01 °C over ice. NaN is passed through (an image pixel without data).
    over : {"auto", "water", "ice"}
        ``"water"`` (also supercooled water below 0 °C), ``"ice"``, or ``"auto"``: ice
        below 0 °C, water at and above 0 °C.

    Returns
    -------
    float or ndarray
        Saturation vapour pressure, Pa.

    Raises
    ------
    ValueError
        Naming ``t_c`` outside the range of validity, ``over`` for an unknown choice.

    Notes
    -----
    Sonntag (1990) on ITS-90 [Sonntag1990], T in K:

    over water: ln(e/Pa) = −6096.9385/T + 21.2409642 − 2.711193e−2·T
    + 1.673952e−5·T² + 2.433502·ln T

    over ice: ln(e/Pa) = −6024.5282/T + 29.32707 + 1.0613868e−2·T − 1.3198825e−5·T²
    − 0.49382577·ln T

    Range of validity −100…+100 °C over water and −100…+0.01 °C over ice, as commonly
    quoted for the paper (from memory). Measured in the tests against the Hyland–Wexler
    formulation of the ASHRAE Handbook [ASHRAE2017] (psychrolib): over water within 0.03 %
    from 0 to 60 °C and within 0.1 % for supercooled water down to −40 °C (0.8 % at
    −100 °C); over ice within 0.07 % from −40 to 0 °C (0.22 % at −100 °C). Against the
    IAPWS-95 values [IAPWS95] of docs/references.md at 0, 20 and 40 °C within 0.005 %.
    No enhancement factor: this is pure water vapour.

    Examples
    --------
    >>> round(saturation_vapor_pressure(20.0), 1)
    2339.2
    >>> round(saturation_vapor_pressure(-10.0, over="ice"), 1)
    259.9
    """
    over = _checks.choice(over, "over", _OVER)
    valid = ICE_RANGE_C if over == "ice" else WATER_RANGE_C
    t = _checks.temperature(t_c, "t_c", allow_nan=True, within=valid)
    return _checks.result(_saturation(t, over))


def dew_point(t_air_c, rh_pct):
    """Dew point of air over liquid water: the surface temperature where dew forms.

    Parameters
    ----------
    t_air_c : float or array_like
        Air temperature, °C, within −100…+100 °C.
    rh_pct : float or array_like
        Relative humidity of the air relative to liquid water, %, in (0, 100]. Below 0 °C
        this is still relative to water, as hygrometers report it.

    Returns
    -------
    float or ndarray
        Dew point, °C. Below 0 °C this is the dew point over supercooled water; surfaces
        below 0 °C are judged with :func:`surface_limit_temperature` (over ice there).

    Raises
    ------
    ValueError
        Naming ``t_air_c`` outside −100…+100 °C, or ``rh_pct`` outside (0, 100] or so low
        that the dew point would fall below −100 °C.

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
    return _checks.result(_saturation_point(e, "water", "rh_pct"))


def frost_point(t_air_c, rh_pct):
    """Frost point of air: the surface temperature below 0 °C where ice deposits directly.

    Parameters
    ----------
    t_air_c : float or array_like
        Air temperature, °C, within −100…+100 °C.
    rh_pct : float or array_like
        Relative humidity of the air relative to liquid water, %, in (0, 100].

    Returns
    -------
    float or ndarray
        Frost point, °C, within −100…+0.01 °C. It is always above the dew point over
        supercooled water for the same air.

    Raises
    ------
    ValueError
        Naming ``t_air_c`` or ``rh_pct`` outside their ranges, or both when the frost point
        would be above 0.01 °C (no ice forms there: use :func:`dew_point`).

    Notes
    -----
    e = φ·e_w(T_air); T_f solves e_i(T_f) = e with e_i over ice [Sonntag1990].

    Examples
    --------
    >>> round(frost_point(0.0, 80.0), 2)
    -2.68
    """
    e = _vapour_pressure(t_air_c, rh_pct, allow_dry=False)
    return _checks.result(_saturation_point(e, "ice", "rh_pct"))


def surface_rh(t_air_c, rh_pct, t_surface_c, *, out_of_range="raise"):
    """Relative humidity that room air reaches in the thin layer touching a surface.

    Parameters
    ----------
    t_air_c : float or array_like
        Air temperature, °C, within −100…+100 °C.
    rh_pct : float or array_like
        Relative humidity of the air relative to liquid water, %, in [0, 100].
    t_surface_c : float or array_like
        Surface temperature, °C, within −100…+100 °C, for example a corrected
        thermogram. NaN pixels give NaN.
    out_of_range : {"raise", "nan"}
        ``"raise"`` (default) refuses surface temperatures outside −100…+100 °C with a
        ``ValueError`` naming ``t_surface_c``; ``"nan"`` gives NaN for those pixels only,
        for whole images that also show a flue or a lamp (a surface above 100 °C is far
        from any humidity limit).

    Returns
    -------
    float or ndarray
        Surface relative humidity, %, **not capped**: 100 % or more means condensation
        (or frost, below 0 °C) is expected and is best shown as "≥ 100 % (condensation)";
        80 % or more is the mould criterion of ISO 13788 [ISO13788].

    Notes
    -----
    φ_s = φ·e_w(T_air) / e_s(T_s). The vapour pressure of the air is unchanged at the
    surface; e_s is over water at and above 0 °C and over ice below 0 °C, as in
    ISO 13788 [ISO13788], with the Sonntag formulas [Sonntag1990]. φ_s ≥ limit exactly
    when :func:`surface_margin_k` for that limit is ≤ 0.

    Examples
    --------
    >>> round(surface_rh(20.0, 50.0, 12.0), 1)
    83.4
    """
    e = _vapour_pressure(t_air_c, rh_pct, allow_dry=True)
    if _checks.choice(out_of_range, "out_of_range", ("raise", "nan")) == "nan":
        t_surface = _checks.temperature(t_surface_c, "t_surface_c", allow_nan=True)
        with np.errstate(invalid="ignore"):
            outside = (t_surface < WATER_RANGE_C[0]) | (t_surface > WATER_RANGE_C[1])
        if outside.any():
            t_surface = np.where(outside, np.nan, t_surface)
    else:
        t_surface = _checks.temperature(
            t_surface_c, "t_surface_c", allow_nan=True, within=WATER_RANGE_C
        )
    return _checks.result(100.0 * e / _saturation(t_surface, "auto"))


def surface_limit_temperature(t_air_c, rh_pct, limit_rh_pct=100.0, over="auto"):
    """Surface temperature at which the air layer at a surface reaches a humidity limit.

    Parameters
    ----------
    t_air_c : float or array_like
        Air temperature, °C, within −100…+100 °C.
    rh_pct : float or array_like
        Relative humidity of the air relative to liquid water, %, in (0, 100].
    limit_rh_pct : float or array_like
        Surface RH limit, %, in (0, 100]: 100 for condensation (dew or frost), 80 for the
        mould criterion of ISO 13788.
    over : {"auto", "water", "ice"}
        Saturation at the surface: ``"auto"`` (default) over water at and above 0 °C and
        over ice below 0 °C, the convention of :func:`surface_rh` and ISO 13788;
        ``"water"`` gives the dew point for a 100 % limit, ``"ice"`` the frost point.

    Returns
    -------
    float or ndarray
        Limit temperature, °C. A surface at or below it reaches the limit. With a 100 %
        limit and ``"auto"`` this is the dew point when it is at or above 0 °C and the
        frost point below 0 °C. Print it as such ("dew point" or "frost point").

    Raises
    ------
    ValueError
        Naming the parameter out of range, or ``rh_pct`` when the limit temperature would
        leave −100…+100 °C.

    Notes
    -----
    e = φ·e_w(T_air); θ_lim solves e_s(θ_lim) = e / φ_lim with e_s as in
    :func:`surface_rh` [ISO13788], [Sonntag1990]; :func:`critical_temperature_factor` uses
    the same θ_lim. For air whose water solution lies just below 0 °C while the ice
    solution does not (vapour pressure within 0.01 % of e_w(0 °C)), θ_lim is 0 °C.

    Examples
    --------
    >>> round(surface_limit_temperature(20.0, 50.0, 80.0), 2)
    12.63
    >>> round(surface_limit_temperature(0.0, 80.0), 2)  # frost point: below 0 °C, over ice
    -2.68
    """
    over = _checks.choice(over, "over", _OVER)
    e = _vapour_pressure(t_air_c, rh_pct, allow_dry=False)
    limit = _checks.in_range(
        limit_rh_pct, "limit_rh_pct", 0.0, 100.0, low_inclusive=False, unit=" %"
    )
    return _checks.result(_limit_temperature(e, limit, over, "rh_pct"))


def surface_margin_k(t_air_c, rh_pct, t_surface_c, limit_rh_pct=100.0):
    """How far a surface is above the temperature where it reaches a humidity limit, K.

    Parameters
    ----------
    t_air_c : float or array_like
        Air temperature, °C, within −100…+100 °C.
    rh_pct : float or array_like
        Relative humidity of the air relative to liquid water, %, in (0, 100].
    t_surface_c : float or array_like
        Surface temperature, °C, within −100…+100 °C; NaN pixels give NaN.
    limit_rh_pct : float or array_like
        Surface RH limit, %, in (0, 100]: 100 for condensation, 80 for mould.

    Returns
    -------
    float or ndarray
        θ_s − θ_lim, K: positive is the safety margin, zero or negative means the surface
        reaches the limit (for 100 %: condensation or frost expected, |margin| below the
        dew or frost point).

    Notes
    -----
    θ_lim from :func:`surface_limit_temperature` with ``over="auto"`` (over ice below
    0 °C) [ISO13788], so the margin and the :func:`surface_rh` flag always agree.

    Examples
    --------
    >>> round(surface_margin_k(0.0, 80.0, -2.86), 2)
    -0.18
    """
    e = _vapour_pressure(t_air_c, rh_pct, allow_dry=False)
    limit = _checks.in_range(
        limit_rh_pct, "limit_rh_pct", 0.0, 100.0, low_inclusive=False, unit=" %"
    )
    t_surface = _checks.temperature(
        t_surface_c, "t_surface_c", allow_nan=True, within=WATER_RANGE_C
    )
    return _checks.result(t_surface - _limit_temperature(e, limit, "auto", "rh_pct"))


def condensation_margin_k(t_air_c, rh_pct, t_surface_c):
    """Margin of a surface above the dew point (or frost point below 0 °C), K.

    Parameters
    ----------
    t_air_c : float or array_like
        Air temperature, °C, within −100…+100 °C.
    rh_pct : float or array_like
        Relative humidity of the air relative to liquid water, %, in (0, 100].
    t_surface_c : float or array_like
        Surface temperature, °C, within −100…+100 °C; NaN pixels give NaN.

    Returns
    -------
    float or ndarray
        θ_s − θ_lim at a 100 % limit, K; ≤ 0 exactly when :func:`surface_rh` ≥ 100 %.

    Notes
    -----
    :func:`surface_margin_k` with ``limit_rh_pct=100`` (over ice below 0 °C, as
    ISO 13788 [ISO13788]).

    Examples
    --------
    >>> round(condensation_margin_k(20.0, 50.0, 12.0), 2)
    2.73
    """
    return surface_margin_k(t_air_c, rh_pct, t_surface_c, 100.0)


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
        Indoor air temperature θi, °C, within −100…+100 °C.
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
    θsi,min = p_sat⁻¹(p_sat,min) (over ice when below 0 °C), which is
    :func:`surface_limit_temperature`; fRsi,min = (θsi,min − θe) / (θi − θe). For a design
    check the standard adds a moisture excess by humidity class and takes the worst month;
    this function takes the indoor humidity as given. Saturation pressure from
    [Sonntag1990].

    Examples
    --------
    >>> round(critical_temperature_factor(20.0, 50.0, -5.0), 3)
    0.705
    """
    e = _vapour_pressure(
        t_inside_c, rh_inside_pct, allow_dry=False, t_name="t_inside_c", rh_name="rh_inside_pct"
    )
    t_inside = _checks.temperature(t_inside_c, "t_inside_c")
    t_outside = _checks.temperature(t_outside_c, "t_outside_c")
    limit = _checks.in_range(
        limit_rh_pct, "limit_rh_pct", 0.0, 100.0, low_inclusive=False, unit=" %"
    )
    if (t_outside >= t_inside).any():
        raise ValueError("t_outside_c must be below t_inside_c (a heated interior).")
    t_min = _limit_temperature(e, limit, "auto", "rh_inside_pct")
    return _checks.result((t_min - t_outside) / (t_inside - t_outside))
