"""Ranking electrical findings: load-corrected temperature rise and a severity table as data.

Severity levels are ours: 1 act now, 2 act soon, 3 plan repair, 4 watch.
"""

import copy
from dataclasses import dataclass

import numpy as np

from survey.thermal import _checks
from survey.thermal.bands import band_index, check_bands, stepped_interval

#: Below this load a rise does not rank reliably: inspect at 40 % of normal load or more
#: [NFPA70B].
MIN_RELIABLE_LOAD_PCT = 40.0

#: Loads accepted by :func:`load_corrected_rise`, %: above 0 and up to 150 % of rating.
MAX_LOAD_PCT = 150.0

BASES = ("similar", "ambient")

#: Resolution at which rises are shown and classified, K.
RISE_RESOLUTION_K = 0.1

#: How a rise over a like component is taken: the key stored with a finding and the words
#: shown beside the rise ("rise over mark B, hottest to hottest"). Hottest to hottest, the
#: same point of similar components under similar load, is the default [NETA-MTS],
#: [ASTM-E1934]; hottest to mean is an explicit, labelled choice.
RISE_METHODS = {
    "hottest_to_hottest": "hottest to hottest",
    "hottest_to_mean": "hottest to mean",
}

#: The default severity tables, one per basis, as plain data an organization can copy and
#: edit: the one row shape of every criteria table (:mod:`survey.thermal.bands`). The
#: temperature bands follow Table 100.18 (thermographic survey) of the ANSI/NETA
#: Maintenance Testing Specifications [NETA-MTS] as RECALLED FROM MEMORY (``"confidence":
#: "memory"``; check them against a copy of the specification before relying on them).
#: The action texts are ours: what to do and by when, in plain words. ``name``, ``source``,
#: labels and actions are shown to clients and carry no internal notes.
#:
#: Rises are rounded to 0.1 K first (:func:`round_rise_c`), so the specification's integer
#: bands "1 to 3", "over 3 to 15", "over 15" are written [1.0, 3.1), [3.1, 15.1),
#: [15.1, ∞) for ``similar``, and [1.0, 10.1), [10.1, 20.1), [20.1, 40.1), [40.1, ∞) for
#: ``ambient``. Below 1 K no band applies: no finding.
_WATCH = (
    "Note it and measure it again at the next routine inspection; no work is needed "
    "before then unless it gets warmer."
)
_PLAN = (
    "Book the repair for the next planned shutdown, and measure it again at each "
    "inspection until it is done."
)
_SOON = (
    "Arrange the repair within weeks, not months; lighten the load if you can and keep "
    "checking it until the work is done."
)
_NOW = (
    "Make it safe today: take the load off or isolate it, and have it repaired before it "
    "goes back into normal service."
)
_SOURCE = (
    "Temperature bands of Table 100.18 (thermographic survey) of the ANSI/NETA "
    "Maintenance Testing Specifications (NETA MTS)."
)


def _band(label: str, lower: float, upper: float | None, level: int, action: str) -> dict:
    return {"label": label, "lower": lower, "upper": upper, "level": level, "action": action}


DEFAULT_CRITERIA = {
    "similar": {
        "key": "electrical-similar",
        "name": "Rise over a similar component under similar load (NETA MTS bands)",
        "source": _SOURCE,
        "confidence": "memory",
        "rows": [
            _band("1 to 3 °C", 1.0, 3.1, 4, _WATCH),
            _band("over 3 to 15 °C", 3.1, 15.1, 3, _PLAN),
            _band("over 15 °C", 15.1, None, 1, _NOW),
        ],
    },
    "ambient": {
        "key": "electrical-ambient",
        "name": "Rise over the ambient air (NETA MTS bands)",
        "source": _SOURCE,
        "confidence": "memory",
        "rows": [
            _band("1 to 10 °C", 1.0, 10.1, 4, _WATCH),
            _band("over 10 to 20 °C", 10.1, 20.1, 3, _PLAN),
            _band("over 20 to 40 °C", 20.1, 40.1, 2, _SOON),
            _band("over 40 °C", 40.1, None, 1, _NOW),
        ],
    },
}


@dataclass(frozen=True)
class RiseClassification:
    """The table row a temperature rise falls in.

    Attributes
    ----------
    level : int or None
        Severity level 1 (act now) to 4 (watch); None when the rise is no finding.
    action : str
        The row's action text.
    row : str
        The row's label, e.g. ``"over 3 to 15 °C"``; ``"no finding"`` when no band holds
        the rise.
    basis : str
        ``"similar"`` or ``"ambient"``.
    table : str
        Name of the table that was read.
    rise_c : float
        The rise as classified and as it must be printed: rounded to 0.1 K by
        :func:`round_rise_c`.
    row_index : int
        Position of the matched row in the table's ``rows`` (0-based); −1 for no finding.
    interval : str
        The matched band's limits in numbers, e.g. ``"over 3 to 15 K"``, or the stretch
        of no finding it fell in, e.g. ``"below 1 K"``.
    """

    level: int | None
    action: str
    row: str
    basis: str
    table: str
    rise_c: float = float("nan")
    row_index: int = -1
    interval: str = ""

    def as_dict(self) -> dict:
        """The classification as JSON-ready data (the table row used included)."""
        return {
            "level": self.level,
            "action": self.action,
            "row": self.row,
            "interval": self.interval,
            "row_index": self.row_index,
            "basis": self.basis,
            "table": self.table,
            "rise_c": self.rise_c,
        }


def round_rise_c(rise_c):
    """A temperature rise rounded to the 0.1 K it is shown at, halves away from zero.

    Parameters
    ----------
    rise_c : float or array_like
        Temperature rise (ΔT), K.

    Returns
    -------
    float or ndarray
        The rise rounded to 0.1 K, the nearest float to the printed decimal (so
        ``f"{value:.1f}"`` prints it exactly and a comparison with a table limit such as
        3.0 reads the printed number). Never −0.0.

    Notes
    -----
    Round half away from zero at 0.1 K (the resolution readings are shown at; common
    practice). Differences of one-decimal readings carry binary noise (4.4 − 1.4 =
    3.0000000000000004, 1.4 − 0.4 = 0.9999999999999999): the value is first snapped to
    1e−6 of a step, so a decimal half written with noise (2.95) still rounds away from
    zero (3.0), and the result is formed as n / 10 so that it is the float of the printed
    decimal.

    Examples
    --------
    >>> round_rise_c(4.4 - 1.4), round_rise_c(1.4 - 0.4), round_rise_c(2.95), round_rise_c(-0.04)
    (3.0, 1.0, 3.0, 0.0)
    """
    rise = _checks.as_array(rise_c, "rise_c")
    steps_per_k = round(1.0 / RISE_RESOLUTION_K)
    steps = np.round(np.abs(rise) * steps_per_k, 6)
    rounded = np.copysign(np.floor(steps + 0.5) / steps_per_k, rise) + 0.0
    return _checks.result(rounded)


def like_component_rise_c(
    hot_c, reference_hot_c=None, *, reference_mean_c=None, method="hottest_to_hottest"
):
    """Temperature rise of a component over a like component under like load.

    Parameters
    ----------
    hot_c : float or array_like
        Hottest (corrected) temperature of the suspect component's mark, °C.
    reference_hot_c : float or array_like, optional
        Hottest (corrected) temperature of the reference mark, °C; needed by
        ``"hottest_to_hottest"``.
    reference_mean_c : float or array_like, optional
        Mean (corrected) temperature of the reference mark, °C; needed by
        ``"hottest_to_mean"``.
    method : {"hottest_to_hottest", "hottest_to_mean"}
        Which statistic of the reference is compared; store it with the rise and show
        :data:`RISE_METHODS` ``[method]`` beside it.

    Returns
    -------
    float or ndarray
        Rise, K (not rounded; :func:`classify_rise` rounds it to 0.1 K). Two identical
        components give 0.0 K with the default method.

    Notes
    -----
    ΔT = T_max,suspect − T_max,reference: the same point of similar components under
    similar load [NETA-MTS], [ASTM-E1934]. Hottest to mean (ΔT = T_max − T_mean,ref) makes
    a uniform reference look cooler than its own hottest spot and overstates the rise; it
    is offered only as a labelled choice.

    Examples
    --------
    >>> like_component_rise_c(40.5, 40.5)
    0.0
    >>> like_component_rise_c(40.5, reference_mean_c=36.5, method="hottest_to_mean")
    4.0
    """
    method = _checks.choice(method, "method", tuple(RISE_METHODS))
    hot = _checks.temperature(hot_c, "hot_c")
    name = "reference_hot_c" if method == "hottest_to_hottest" else "reference_mean_c"
    value = reference_hot_c if method == "hottest_to_hottest" else reference_mean_c
    if value is None:
        raise ValueError(f"{name} is needed for the method {method!r}.")
    return _checks.result(hot - _checks.temperature(value, name))


def load_is_too_low(load_pct):
    """Whether a load is too low for a reliable ranking of its temperature rise.

    Parameters
    ----------
    load_pct : float or array_like
        Load at the time of the survey, % of rating (or of normal full load), in (0, 150].

    Returns
    -------
    bool or ndarray of bool
        True below 40 %: the load-corrected rise must then be flagged "load too low for a
        reliable ranking" rather than trusted.

    Notes
    -----
    Inspect at 40 % of normal load or more when full load is not possible [NFPA70B].

    Examples
    --------
    >>> load_is_too_low(30.0), load_is_too_low(40.0)
    (True, False)
    """
    load = _check_load(load_pct)
    too_low = load < MIN_RELIABLE_LOAD_PCT
    return bool(too_low) if np.ndim(too_low) == 0 else too_low


def load_corrected_rise(rise_c, load_pct, exponent=2.0):
    """Temperature rise expected at 100 % load from a rise measured at another load.

    The flag that goes with the value is :func:`load_is_too_low`: below 40 % load the
    corrected rise is an extrapolation too far to rank on, and callers must show it as
    "load too low for a reliable ranking" (both are computed from the same ``load_pct``).

    Parameters
    ----------
    rise_c : float or array_like
        Measured temperature rise (ΔT), K.
    load_pct : float or array_like
        Load during the measurement, % of full load, in (0, 150].
    exponent : float or array_like
        Exponent n, any value from 1 to 3 inclusive (1.5, 1.6, 1.8 … are all accepted);
        2 (I²R heating) by default, some practice uses 1.6. Store the n used with the
        rise and print that value wherever the full-load rise appears.

    Returns
    -------
    float or ndarray
        Rise expected at full load, K, unrounded: print it to 0.1 K with
        :func:`round_rise_c`, beside the measured rise, never with more digits.

    Raises
    ------
    ValueError
        Naming ``exponent`` outside [1, 3], ``load_pct`` outside (0, 150] or ``rise_c``
        when it is not a finite number.

    Notes
    -----
    ΔT_full = ΔT · (100 / load_pct)^n; n = 2 from I²R heating, 1.6–2 in practice (common
    practice, no single source). Loads below 40 % are not refused but flagged by
    :func:`load_is_too_low` [NFPA70B].

    Examples
    --------
    >>> round(load_corrected_rise(10.0, 40.0), 2)
    62.5
    >>> round(load_corrected_rise(10.0, 40.0, exponent=1.6), 2)
    43.32
    >>> round_rise_c(load_corrected_rise(10.0, 80.0, exponent=1.5))
    14.0
    """
    rise = _checks.as_array(rise_c, "rise_c")
    load = _check_load(load_pct)
    n = _checks.in_range(exponent, "exponent", 1.0, 3.0)
    return _checks.result(rise * (100.0 / load) ** n)


def _check_load(load_pct) -> np.ndarray:
    return _checks.in_range(load_pct, "load_pct", 0.0, MAX_LOAD_PCT, low_inclusive=False, unit=" %")


def classify_rise(rise_c, basis, *, table=None):
    """Severity of a temperature rise, read from a criteria table held as data.

    Parameters
    ----------
    rise_c : float
        Temperature rise, K: over a similar component under similar load (``basis
        "similar"``) or over the ambient air (``"ambient"``); load-correct it first if
        needed. It is rounded to 0.1 K (:func:`round_rise_c`) before it is compared.
    basis : {"similar", "ambient"}
        What the rise is measured against.
    table : dict, optional
        Either a mapping of basis to table in the shape of :data:`DEFAULT_CRITERIA`, or a
        single table (a dict with ``"name"`` and ``"rows"``, as stored in a
        ``CriteriaTable``). Defaults to :data:`DEFAULT_CRITERIA`.

    Returns
    -------
    RiseClassification
        level (1–4 or None), action, row label, basis, table name, the rise as classified
        (0.1 K), the row's index and its limits in numbers; ``as_dict()`` for JSON.

    Notes
    -----
    The rise is classified at the resolution it is shown, so the printed number and the
    band always agree: 4.4 − 1.4 is 3.0 K (in the band up to 3), 1.4 − 0.4 is 1.0 K (from
    1 up). The bands are read by :func:`survey.thermal.bands.band_index`, the lookup of
    every criteria table; the default bands are recalled from memory of the NETA
    thermographic survey table [NETA-MTS].

    Examples
    --------
    >>> result = classify_rise(16.0, "similar")
    >>> result.level, result.interval
    (1, 'over 15 K')
    >>> classify_rise(4.4 - 1.4, "similar").row
    '1 to 3 °C'
    """
    rise = _checks.as_array(rise_c, "rise_c")
    if rise.ndim != 0:
        raise ValueError("rise_c must be a single number.")
    shown = round_rise_c(float(rise))
    basis = _checks.choice(basis, "basis", BASES)
    chosen = _basis_table(DEFAULT_CRITERIA if table is None else table, basis)
    rows = chosen["rows"]
    index = band_index(shown, rows)
    common = {"basis": basis, "table": chosen["name"], "rise_c": shown}
    if index is None:
        lower, upper = _gap_around(shown, rows)
        return RiseClassification(
            level=None,
            action="No finding.",
            row="no finding",
            row_index=-1,
            interval=stepped_interval(lower, upper, RISE_RESOLUTION_K, "K"),
            **common,
        )
    row = rows[index]
    return RiseClassification(
        level=row["level"],
        action=row["action"],
        row=row["label"],
        row_index=index,
        interval=stepped_interval(row["lower"], row["upper"], RISE_RESOLUTION_K, "K"),
        **common,
    )


def _gap_around(value: float, rows: list[dict]) -> tuple[float | None, float | None]:
    """The limits of the stretch without a band that holds `value`."""
    ends = [row["upper"] for row in rows if row["upper"] is not None and row["upper"] <= value]
    starts = [row["lower"] for row in rows if row["lower"] > value]
    return max(ends, default=None), min(starts, default=None)


def _basis_table(table, basis: str) -> dict:
    if not isinstance(table, dict):
        raise ValueError("table must be a dict with 'rows' or a dict of tables by basis.")
    chosen = table if "rows" in table else table.get(basis)
    if not isinstance(chosen, dict) or not isinstance(chosen.get("rows"), list):
        raise ValueError(f"table has no rows for basis {basis!r}.")
    try:
        check_bands(chosen["rows"])
    except ValueError as error:
        raise ValueError(f"table: {error}") from None
    # The caller's order is kept, so that row_index points into the rows it holds.
    rows = [{"label": "", "upper": None} | row for row in chosen["rows"]]
    return {"name": str(chosen.get("name", "custom table")), "rows": rows}


def default_criteria() -> dict:
    """A deep copy of :data:`DEFAULT_CRITERIA`, safe to edit and store.

    Returns
    -------
    dict
        Basis → table (``key``, ``name``, ``source``, ``rows``).

    Examples
    --------
    >>> default_criteria()["ambient"]["rows"][-1]["level"]
    1
    """
    return copy.deepcopy(DEFAULT_CRITERIA)
