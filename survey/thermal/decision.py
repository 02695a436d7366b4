"""Deciding whether a measured value exceeds a limit, allowing for its uncertainty.

The decision rule is the non-binary statement with a guard band of ILAC-G8:2019 [ILAC-G8]
with the guard band w equal to the expanded uncertainty U (coverage factor k = 2, about
95 %): a limit is "exceeded" when the whole interval value ± U lies beyond it, "not
exceeded" when the whole interval lies on the safe side, and "cannot tell" when the
interval reaches the limit (the guide's conditional pass and conditional fail, merged).
Judged this way, the chance that "exceeded" or "not exceeded" is wrong is at most about
2.5 % for a normally distributed error.

Every ± in this module is an **expanded uncertainty U at k = 2 (about 95 %)** unless a
parameter says otherwise. A camera's accuracy specification ("±2 °C or ±2 %") is a limit,
not a standard deviation; :func:`expanded_from_limit` turns such a limit into U.

The interval helpers evaluate a monotonic function at the ends of its inputs' intervals:
with one uncertain input the result is exactly the 95 % interval of the output; with
several it is the worst case, wider than the root-sum-square combination of the
GUM [GUM2008], never narrower.
"""

import numpy as np

from survey.thermal import _checks
from survey.thermal.psychrometrics import surface_margin_k, surface_rh, temperature_factor

EXCEEDED = "exceeded"
NOT_EXCEEDED = "not exceeded"
CANNOT_TELL = "cannot tell"

#: The three decisions and the words to show for them.
DECISIONS = {
    EXCEEDED: "limit exceeded",
    NOT_EXCEEDED: "limit not exceeded",
    CANNOT_TELL: "cannot tell within the measurement uncertainty",
}

DIRECTIONS = ("above", "below")

#: Coverage factor of every expanded uncertainty here: about 95 % for a normal error.
COVERAGE_FACTOR = 2.0


def decide_interval(low, high, limit, direction="above"):
    """Whether an interval of possible values lies beyond a limit, short of it, or across it.

    Parameters
    ----------
    low, high : float or array_like
        Ends of the interval of the measured quantity (for example the 95 % interval from
        :func:`surface_rh_interval`), in the unit of ``limit``; ``low`` ≤ ``high``.
    limit : float or array_like
        The limit, same unit.
    direction : {"above", "below"}
        ``"above"``: the limit is exceeded by values above it (surface RH over 80 %, a
        rise over a band). ``"below"``: by values below it (a margin below 0 K, a
        temperature factor below fRsi,min).

    Returns
    -------
    str or ndarray of str
        ``"exceeded"``, ``"not exceeded"`` or ``"cannot tell"`` (the interval touches or
        straddles the limit); :data:`DECISIONS` gives the words to show.

    Notes
    -----
    ILAC-G8:2019 non-binary statement with guard band [ILAC-G8]: for ``"above"``,
    exceeded when low > limit, not exceeded when high < limit, otherwise cannot tell
    (mirror image for ``"below"``).

    Examples
    --------
    >>> decide_interval(85.0, 114.0, 100.0)
    'cannot tell'
    >>> decide_interval(-2.5, -0.1, 0.0, direction="below")
    'exceeded'
    """
    low_a = _checks.as_array(low, "low")
    high_a = _checks.as_array(high, "high")
    limit_a = _checks.as_array(limit, "limit")
    direction = _checks.choice(direction, "direction", DIRECTIONS)
    if (low_a > high_a).any():
        raise ValueError("low must not be above high.")
    if direction == "below":
        beyond, short = high_a < limit_a, low_a > limit_a
    else:
        beyond, short = low_a > limit_a, high_a < limit_a
    words = np.where(beyond, EXCEEDED, np.where(short, NOT_EXCEEDED, CANNOT_TELL))
    return str(words) if words.ndim == 0 else words


def decide(value, uncertainty, limit, direction="above"):
    """Guarded decision on a value ± its expanded uncertainty against a limit.

    Parameters
    ----------
    value : float or array_like
        Measured value, in the unit of ``limit``.
    uncertainty : float or array_like
        Expanded uncertainty U of the value (k = 2, about 95 %), same unit, ≥ 0; also the
        guard band w.
    limit : float or array_like
        The limit, same unit.
    direction : {"above", "below"}
        As in :func:`decide_interval`.

    Returns
    -------
    str or ndarray of str
        ``"exceeded"``, ``"not exceeded"`` or ``"cannot tell"``.

    Notes
    -----
    Guard band w = U [ILAC-G8]: :func:`decide_interval` on [value − U, value + U]. With
    U = 0 this is simple acceptance, except that a value exactly at the limit is
    "cannot tell".

    Examples
    --------
    >>> decide(16.0, 2.2, 15.0)
    'cannot tell'
    >>> decide(18.0, 2.2, 15.0)
    'exceeded'
    """
    value_a = _checks.as_array(value, "value")
    u = _checks.in_range(uncertainty, "uncertainty", 0.0, np.inf)
    return decide_interval(value_a - u, value_a + u, limit, direction)


def expanded_from_limit(limit_u):
    """Expanded uncertainty (k = 2) of an error known only to lie within ± a limit.

    Parameters
    ----------
    limit_u : float or array_like
        Half-width a of the interval the error lies in, ≥ 0: for example a camera's
        accuracy "±2 °C" or a hygrometer's "±3 % RH".

    Returns
    -------
    float or ndarray
        U = k·a/√3 with k = 2, about 1.155·a, in the unit of ``limit_u``.

    Notes
    -----
    A rectangular distribution of half-width a has the standard uncertainty a/√3
    [GUM2008] (4.3.7); U = 2·u.

    Examples
    --------
    >>> round(expanded_from_limit(2.0), 2)
    2.31
    """
    a = _checks.in_range(limit_u, "limit_u", 0.0, np.inf)
    return _checks.result(COVERAGE_FACTOR * a / np.sqrt(3.0))


def root_sum_square(uncertainties):
    """Combined uncertainty of a sum of independent quantities.

    Parameters
    ----------
    uncertainties : array_like
        The expanded uncertainties (same unit, same coverage factor) of the terms of a sum,
        each ≥ 0.

    Returns
    -------
    float
        U = √(ΣUᵢ²), in the unit of the inputs; 0 for no terms.

    Notes
    -----
    The law of propagation of uncertainty for uncorrelated inputs with sensitivity
    coefficients of 1 (a sum) [GUM2008] (5.1.2, 5.1.3). With one coverage factor for all
    terms the expanded uncertainties combine the same way as the standard ones.

    Examples
    --------
    >>> float(root_sum_square([3.0, 4.0]))
    5.0
    """
    u = _checks.in_range(np.asarray(uncertainties, dtype=float), "uncertainties", 0.0, np.inf)
    return float(np.sqrt(np.sum(np.square(u))))


def _ends(value, u, name: str, u_name: str):
    centre = _checks.as_array(value, name)
    spread = _checks.in_range(u, u_name, 0.0, np.inf)
    return centre - spread, centre + spread


def _humidity_ends(rh_pct, rh_u_pct):
    rh = _checks.in_range(rh_pct, "rh_pct", 0.0, 100.0, low_inclusive=False, unit=" %")
    spread = _checks.in_range(rh_u_pct, "rh_u_pct", 0.0, 100.0, unit=" %")
    low = rh - spread
    if (low <= 0.0).any():
        raise ValueError("rh_u_pct must be smaller than rh_pct: the air cannot be dry.")
    # Air holds at most saturated vapour: the upper end stops at 100 %.
    return low, np.minimum(rh + spread, 100.0)


def surface_rh_interval(
    t_air_c, rh_pct, t_surface_c, t_surface_u_c, *, t_air_u_c=0.0, rh_u_pct=0.0
):
    """Interval of the surface relative humidity from the uncertainties of its inputs.

    Parameters
    ----------
    t_air_c : float or array_like
        Air temperature, °C.
    rh_pct : float or array_like
        Air relative humidity (relative to liquid water), %, in (0, 100].
    t_surface_c : float or array_like
        Surface temperature, °C.
    t_surface_u_c : float or array_like
        Expanded uncertainty U (k = 2, about 95 %) of the surface temperature, K, ≥ 0.
    t_air_u_c : float or array_like
        Expanded uncertainty of the air temperature, K, ≥ 0; 0 by default.
    rh_u_pct : float or array_like
        Expanded uncertainty of the air RH, % RH, ≥ 0 and below ``rh_pct``; 0 by default.
        The upper end is capped at 100 % RH.

    Returns
    -------
    tuple of (float or ndarray, float or ndarray)
        (low, high) surface RH, %, uncapped. With only the surface temperature uncertain
        it is the 95 % interval; with more inputs uncertain, a worst-case interval.

    Notes
    -----
    Surface RH (:func:`surface_rh`, [ISO13788]) falls as the surface warms and rises with
    the air temperature and RH, so low = φs(T_air − U, φ − U, T_s + U) and
    high = φs(T_air + U, φ + U, T_s − U). The decision on it: :func:`decide_interval`.

    Examples
    --------
    >>> low, high = surface_rh_interval(20.0, 53.53, 10.6, 2.2)
    >>> round(low, 1), round(high, 1)
    (84.7, 113.6)
    """
    s_low, s_high = _ends(t_surface_c, t_surface_u_c, "t_surface_c", "t_surface_u_c")
    a_low, a_high = _ends(t_air_c, t_air_u_c, "t_air_c", "t_air_u_c")
    h_low, h_high = _humidity_ends(rh_pct, rh_u_pct)
    low = surface_rh(a_low, h_low, s_high)
    high = surface_rh(a_high, h_high, s_low)
    return low, high


def surface_margin_interval_k(
    t_air_c,
    rh_pct,
    t_surface_c,
    t_surface_u_c,
    *,
    t_air_u_c=0.0,
    rh_u_pct=0.0,
    limit_rh_pct=100.0,
):
    """Interval of a surface's margin above its humidity-limit temperature, K.

    Parameters
    ----------
    t_air_c, rh_pct, t_surface_c, t_surface_u_c, t_air_u_c, rh_u_pct
        As in :func:`surface_rh_interval`; each ``_u`` an expanded uncertainty (k = 2).
    limit_rh_pct : float or array_like
        Surface RH limit, %: 100 for condensation (dew or frost point), 80 for mould.

    Returns
    -------
    tuple of (float or ndarray, float or ndarray)
        (low, high) of θ_s − θ_lim, K (:func:`~survey.thermal.psychrometrics.surface_margin_k`,
        over ice below 0 °C). With only the surface temperature uncertain it is
        margin ± U exactly. Decide with ``decide_interval(low, high, 0.0, "below")``;
        it always agrees with the decision on :func:`surface_rh_interval` at the same
        limit.

    Notes
    -----
    θ_lim rises with the air temperature and RH, so low = (T_s − U) − θ_lim(T_air + U,
    φ + U) and high = (T_s + U) − θ_lim(T_air − U, φ − U) [ISO13788].

    Examples
    --------
    >>> low, high = surface_margin_interval_k(0.0, 80.0, -2.86, 2.0)
    >>> round(low, 2), round(high, 2)
    (-2.18, 1.82)
    """
    s_low, s_high = _ends(t_surface_c, t_surface_u_c, "t_surface_c", "t_surface_u_c")
    a_low, a_high = _ends(t_air_c, t_air_u_c, "t_air_c", "t_air_u_c")
    h_low, h_high = _humidity_ends(rh_pct, rh_u_pct)
    low = surface_margin_k(a_high, h_high, s_low, limit_rh_pct)
    high = surface_margin_k(a_low, h_low, s_high, limit_rh_pct)
    return low, high


def temperature_factor_interval(t_surface_c, t_surface_u_c, t_inside_c, t_outside_c):
    """Interval of the temperature factor fRsi from the surface temperature's uncertainty.

    Parameters
    ----------
    t_surface_c : float or array_like
        Internal surface temperature θsi, °C.
    t_surface_u_c : float or array_like
        Its expanded uncertainty U (k = 2, about 95 %), K, ≥ 0.
    t_inside_c, t_outside_c : float or array_like
        Indoor and outdoor air temperature, °C; they must differ. Taken as exact.

    Returns
    -------
    tuple of (float or ndarray, float or ndarray)
        (low, high) fRsi, the 95 % interval: fRsi ± U/|θi − θe|. Compare with
        fRsi,min using ``decide_interval(low, high, f_min, "below")``.

    Notes
    -----
    fRsi = (θsi − θe)/(θi − θe) [ISO13788] is linear in θsi.

    Examples
    --------
    >>> low, high = temperature_factor_interval(14.0, 2.0, 20.0, 0.0)
    >>> round(low, 2), round(high, 2)
    (0.6, 0.8)
    """
    s_low, s_high = _ends(t_surface_c, t_surface_u_c, "t_surface_c", "t_surface_u_c")
    first = temperature_factor(s_low, t_inside_c, t_outside_c)
    second = temperature_factor(s_high, t_inside_c, t_outside_c)
    low, high = np.minimum(first, second), np.maximum(first, second)
    return _checks.result(low), _checks.result(high)
