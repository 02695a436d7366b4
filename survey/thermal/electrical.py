"""Ranking electrical findings: load-corrected temperature rise and a severity table as data.

Severity levels are ours: 1 act now, 2 act soon, 3 plan repair, 4 watch.
"""

import copy
from dataclasses import dataclass

import numpy as np

from survey.thermal import _checks

#: Below this load a rise does not rank reliably: inspect at 40 % of normal load or more
#: [NFPA70B].
MIN_RELIABLE_LOAD_PCT = 40.0

#: Loads accepted by :func:`load_corrected_rise`, %: above 0 and up to 150 % of rating.
MAX_LOAD_PCT = 150.0

BASES = ("similar", "ambient")

#: The default severity tables, one per basis, as plain data an organization can copy and
#: edit (the shape of ``CriteriaTable.rows``). RECALLED FROM MEMORY of the thermographic
#: survey table of the NETA Maintenance Testing Specifications [NETA-MTS]: check it against
#: your copy of the specification before relying on it.
#:
#: Reading the rows: they are taken in order; a row with ``below_c`` matches a rise below
#: that value; a row with ``up_to_c`` matches a rise up to and including that value (and
#: above the previous row's limit); the last row, with neither, matches everything above.
#: The integer bands of the specification become the intervals (−∞, 1), [1, 3], (3, 15],
#: (15, ∞) for ``similar`` and (−∞, 1), [1, 10], (10, 20], (20, 40], (40, ∞) for
#: ``ambient``, in K.
DEFAULT_CRITERIA = {
    "similar": {
        "key": "electrical-similar",
        "name": "NETA MTS thermographic table, similar components (from memory)",
        "source": (
            "ANSI/NETA Maintenance Testing Specifications, thermographic survey table, "
            "rise over a similar component under similar load; recalled from memory, "
            "check against your copy."
        ),
        "rows": [
            {"label": "below 1 °C", "below_c": 1.0, "level": None, "action": "No finding."},
            {
                "label": "1 to 3 °C",
                "up_to_c": 3.0,
                "level": 4,
                "action": "Possible deficiency; investigate.",
            },
            {
                "label": "over 3 to 15 °C",
                "up_to_c": 15.0,
                "level": 3,
                "action": "Probable deficiency; repair as time permits.",
            },
            {
                "label": "over 15 °C",
                "level": 1,
                "action": "Major discrepancy; repair immediately.",
            },
        ],
    },
    "ambient": {
        "key": "electrical-ambient",
        "name": "NETA MTS thermographic table, rise over ambient air (from memory)",
        "source": (
            "ANSI/NETA Maintenance Testing Specifications, thermographic survey table, "
            "rise over ambient air temperature; recalled from memory, check against "
            "your copy."
        ),
        "rows": [
            {"label": "below 1 °C", "below_c": 1.0, "level": None, "action": "No finding."},
            {
                "label": "1 to 10 °C",
                "up_to_c": 10.0,
                "level": 4,
                "action": "Possible deficiency; investigate.",
            },
            {
                "label": "over 10 to 20 °C",
                "up_to_c": 20.0,
                "level": 3,
                "action": "Probable deficiency; repair as time permits.",
            },
            {
                "label": "over 20 to 40 °C",
                "up_to_c": 40.0,
                "level": 2,
                "action": "Monitor until corrective measures can be accomplished.",
            },
            {
                "label": "over 40 °C",
                "level": 1,
                "action": "Major discrepancy; repair immediately.",
            },
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
        The row's label, e.g. ``"over 3 to 15 °C"``.
    basis : str
        ``"similar"`` or ``"ambient"``.
    table : str
        Name of the table that was read.
    """

    level: int | None
    action: str
    row: str
    basis: str
    table: str


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
        Exponent n, in [1, 3]; 2 (I²R heating) by default, some practice uses 1.6.

    Returns
    -------
    float or ndarray
        Rise expected at full load, K.

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
        needed.
    basis : {"similar", "ambient"}
        What the rise is measured against.
    table : dict, optional
        Either a mapping of basis to table in the shape of :data:`DEFAULT_CRITERIA`, or a
        single table (a dict with ``"name"`` and ``"rows"``, as stored in a
        ``CriteriaTable``). Defaults to :data:`DEFAULT_CRITERIA`.

    Returns
    -------
    RiseClassification
        level (1–4 or None), action, row label, basis and table name.

    Notes
    -----
    Rows are read in order as documented at :data:`DEFAULT_CRITERIA`; the default bands
    are recalled from memory of the NETA thermographic survey table [NETA-MTS].

    Examples
    --------
    >>> result = classify_rise(16.0, "similar")
    >>> result.level, result.action
    (1, 'Major discrepancy; repair immediately.')
    >>> classify_rise(3.0, "similar").row
    '1 to 3 °C'
    """
    rise = _checks.as_array(rise_c, "rise_c")
    if rise.ndim != 0:
        raise ValueError("rise_c must be a single number.")
    basis = _checks.choice(basis, "basis", BASES)
    chosen = _basis_table(DEFAULT_CRITERIA if table is None else table, basis)
    for row in chosen["rows"]:
        if "below_c" in row:
            matches = rise < row["below_c"]
        elif "up_to_c" in row:
            matches = rise <= row["up_to_c"]
        else:
            matches = True
        if matches:
            return RiseClassification(
                level=row["level"],
                action=row["action"],
                row=row["label"],
                basis=basis,
                table=chosen["name"],
            )
    raise ValueError("table must end with a row without a limit (it matched no row).")


def _basis_table(table, basis: str) -> dict:
    if not isinstance(table, dict):
        raise ValueError("table must be a dict with 'rows' or a dict of tables by basis.")
    chosen = table if "rows" in table else table.get(basis)
    if not isinstance(chosen, dict) or not isinstance(chosen.get("rows"), list):
        raise ValueError(f"table has no rows for basis {basis!r}.")
    previous = -np.inf
    for number, row in enumerate(chosen["rows"], start=1):
        if not isinstance(row, dict) or not {"label", "level", "action"} <= row.keys():
            raise ValueError(f"table row {number} needs 'label', 'level' and 'action'.")
        if row["level"] not in (None, 1, 2, 3, 4):
            raise ValueError(f"table row {number}: level must be 1, 2, 3, 4 or None.")
        limit = row.get("below_c", row.get("up_to_c"))
        if limit is not None:
            if not isinstance(limit, int | float) or not limit > previous:
                raise ValueError(f"table row {number}: limits must be numbers that rise.")
            previous = limit
    return {"name": str(chosen.get("name", "custom table")), "rows": chosen["rows"]}


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
