"""Severity bands: the one row shape of every criteria table and the one lookup that reads it.

A table's rows are plain data, the same for building surfaces, roofs and equipment::

    {"label": "over 3 to 15 °C", "lower": 3.1, "upper": 15.1, "level": 3, "action": "…"}

A row holds the values ``lower <= x < upper`` (``upper`` None: no upper limit). Bands do
not overlap; a value below the lowest band or in a gap between two bands gives no level.
Levels are ours: 1 act now, 2 act soon, 3 plan repair, 4 watch.

Temperature rises are rounded to the 0.1 K they are printed at before the lookup
(:func:`survey.thermal.electrical.round_rise_c`), so a band written for printed rises ends
one step above its last printed value: "over 3 to 15 K" is ``lower`` 3.1, ``upper`` 15.1.
"""

import math

ROW_KEYS = ("label", "lower", "upper", "level", "action")
LEVELS = (1, 2, 3, 4)

#: A band whose ``lower`` is at or below this takes every value a reading can give (JSON
#: has no −∞); tables converted from rows read in order start their first band here.
NO_LOWER_LIMIT = -1000.0


def band_index(value, rows) -> int | None:
    """Position of the row whose band ``lower <= value < upper`` holds `value`.

    Parameters
    ----------
    value : float
        The quantity the table judges, in the table's unit (already rounded to its printed
        resolution where the table asks for it, as rises are).
    rows : list of dict
        Rows in the shape documented above (checked by :func:`check_bands`).

    Returns
    -------
    int or None
        Index into `rows`, or None when no band holds the value (NaN included).

    Examples
    --------
    >>> rows = [{"lower": 80.0, "upper": 100.0}, {"lower": 100.0, "upper": None}]
    >>> band_index(79.9, rows), band_index(80.0, rows), band_index(100.0, rows)
    (None, 0, 1)
    """
    if value is None or not math.isfinite(value):
        return None
    for index, row in enumerate(rows):
        upper = row.get("upper")
        if value >= row["lower"] and (upper is None or value < upper):
            return index
    return None


def check_bands(rows) -> list[dict]:
    """The rows of a table, checked and sorted by ``lower``; ValueError says what is wrong.

    Every row needs a numeric ``lower``, an ``upper`` that is empty or above ``lower``, a
    level 1–4 and an action text; the label is optional. Bands must not overlap.

    Examples
    --------
    >>> check_bands([{"lower": 1, "upper": None, "level": 4, "action": " Watch. "}])
    [{'label': '', 'lower': 1.0, 'upper': None, 'level': 4, 'action': 'Watch.'}]
    """
    if not isinstance(rows, list) or not rows:
        raise ValueError("A table needs a list of at least one row.")
    cleaned = []
    for number, row in enumerate(rows, start=1):
        if not isinstance(row, dict):
            raise ValueError(f"Row {number} must be an object with lower, upper, level, action.")
        unknown = set(row) - set(ROW_KEYS)
        if unknown:
            raise ValueError(f"Row {number} has unknown keys: {', '.join(sorted(unknown))}.")
        lower, upper, level = row.get("lower"), row.get("upper"), row.get("level")
        if not _is_number(lower):
            raise ValueError(f"Row {number}: 'lower' must be a number.")
        if upper is not None and (not _is_number(upper) or upper <= lower):
            raise ValueError(f"Row {number}: 'upper' must be empty or a number above 'lower'.")
        if isinstance(level, bool) or level not in LEVELS:
            raise ValueError(f"Row {number}: 'level' must be 1, 2, 3 or 4.")
        action = row.get("action")
        if not isinstance(action, str) or not action.strip():
            raise ValueError(f"Row {number}: 'action' must say what to do.")
        label = row.get("label")
        if label is not None and not isinstance(label, str):
            raise ValueError(f"Row {number}: 'label' must be text.")
        cleaned.append(
            {
                "label": label or "",
                "lower": float(lower),
                "upper": None if upper is None else float(upper),
                "level": level,
                "action": action.strip(),
            }
        )
    cleaned.sort(key=lambda r: r["lower"])
    for before, after in zip(cleaned, cleaned[1:], strict=False):
        if before["upper"] is None or before["upper"] > after["lower"]:
            raise ValueError(
                f"Bands overlap: the band from {before['lower']:g} reaches past {after['lower']:g}."
            )
    return cleaned


def stepped_interval(lower, upper, step: float, unit: str) -> str:
    """The band ``lower <= x < upper`` of values printed at `step`, in words.

    Parameters
    ----------
    lower, upper : float or None
        The band's limits (None: open on that side).
    step : float
        Resolution the values are printed and compared at, e.g. 0.1 K.
    unit : str
        Unit shown after the numbers.

    Returns
    -------
    str
        "1 to 3 K", "over 3 to 15 K", "over 15 K", "below 1 K": a limit one step above a
        whole number is read as "over" that number, as integer tables are written.

    Examples
    --------
    >>> stepped_interval(3.1, 15.1, 0.1, "K"), stepped_interval(1.0, 3.1, 0.1, "K")
    ('over 3 to 15 K', '1 to 3 K')
    >>> stepped_interval(None, 1.0, 0.1, "K"), stepped_interval(15.1, None, 0.1, "K")
    ('below 1 K', 'over 15 K')
    """
    last = None if upper is None else _snap(upper - step)
    if lower is None:
        return f"below {upper:g} {unit}" if upper is not None else "any value"
    before = _snap(lower - step)
    start = f"over {before:g}" if before == round(before) else f"{lower:g}"
    if last is None:
        return f"{start} {unit}" if start.startswith("over") else f"{start} {unit} and above"
    return f"{start} to {last:g} {unit}"


def _snap(value: float) -> float:
    # Limits are written in tenths; 3.1 − 0.1 is 3.0000000000000004 in binary.
    return round(value, 6) + 0.0


def _is_number(value) -> bool:
    return isinstance(value, int | float) and not isinstance(value, bool) and math.isfinite(value)
