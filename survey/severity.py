"""Severity: the finding categories and judgement bases of each survey kind, the severity
tables held as data, and the one classifier that reads them.

Severity levels are ours: 1 act now, 2 act soon, 3 plan repair, 4 watch. Two row shapes
exist. Building tables (envelope, roof) are half-open bands ``lower <= value < upper``
(``upper`` null for "and above"); a value below the lowest band gives no level. Rise
tables (electrical and mechanical) keep the shape of
``survey.thermal.electrical.DEFAULT_CRITERIA``: rows read in order, ``below_c`` or
``up_to_c`` limits, a last row without a limit, and level null for "no finding".
:func:`classify` reads either shape, so callers never need to know which one they hold.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from survey.thermal import classify_rise

FINDING_CATEGORIES: dict[str, list[tuple[str, str]]] = {
    "envelope": [
        ("missing_insulation", "Missing or displaced insulation"),
        ("air_leakage", "Air leakage"),
        ("thermal_bridge", "Thermal bridge"),
        ("condensation_risk", "Condensation or mould risk"),
        ("moisture", "Moisture"),
        ("other", "Other"),
    ],
    "roof": [
        ("wet_insulation", "Wet insulation"),
        ("other", "Other"),
    ],
    "electrical": [
        ("connection", "Connection"),
        ("component", "Component"),
        ("overload_imbalance", "Overload or imbalance"),
        ("other", "Other"),
    ],
    "mechanical": [
        ("bearing", "Bearing"),
        ("coupling_alignment", "Coupling or alignment"),
        ("insulation_loss", "Insulation loss"),
        ("steam_trap", "Steam trap"),
        ("refractory", "Refractory or lining"),
        ("other", "Other"),
    ],
}


# The judgement basis offered per kind: rises for equipment, surface moisture for walls,
# wet area for roofs.
BASES: dict[str, list[tuple[str, str]]] = {
    "electrical": [
        ("similar", "Rise over a like component under like load"),
        ("ambient", "Rise over ambient air"),
    ],
    "mechanical": [
        ("similar", "Rise over a like component under like load"),
        ("ambient", "Rise over ambient air"),
    ],
    "envelope": [("envelope", "Surface humidity and temperature factor")],
    "roof": [("roof", "Wet-area estimate")],
}


def category_label(kind: str, category: str) -> str:
    return dict(FINDING_CATEGORIES.get(kind, [])).get(category, category)


# --- severity tables ---

# Surface relative humidity, % (ISO 13788 criteria: mould at 80 %, condensation at 100 %).
ENVELOPE_TABLE = {
    "key": "envelope-surface-rh",
    "name": "Building surfaces: humidity at the surface",
    "quantity": "surface_rh_pct",
    "unit": "%",
    "source": (
        "Bands at 80 % (mould) and 100 % (condensation) surface RH from ISO 13788 [source "
        "for the criteria]; the levels given to each band are ours."
    ),
    "confidence": "ours",
    "rows": [
        {
            "label": "mould risk",
            "lower": 80.0,
            "upper": 100.0,
            "level": 3,
            "action": "Plan repair: surface humidity high enough for mould growth.",
        },
        {
            "label": "condensation expected",
            "lower": 100.0,
            "upper": None,
            "level": 2,
            "action": "Act soon: surface at or below the dew point of the room air.",
        },
    ],
}


# Estimated wet area, m².
ROOF_TABLE = {
    "key": "roof-wet-area",
    "name": "Roofs: estimated wet area",
    "quantity": "wet_area_m2",
    "unit": "m²",
    "source": "Product default with no outside source; edit the bands to your own practice.",
    "confidence": "ours",
    "rows": [
        {
            "label": "wet area",
            "lower": 0.25,
            "upper": 10.0,
            "level": 3,
            "action": "Plan repair after confirming with cores or a moisture meter.",
        },
        {
            "label": "large wet area",
            "lower": 10.0,
            "upper": None,
            "level": 2,
            "action": "Act soon: confirm with cores; wet insulation spreads and loses value.",
        },
    ],
}


# Rise tables (shape of survey.thermal.electrical.DEFAULT_CRITERIA) by key → basis.
RISE_TABLE_KEYS = {"electrical-similar": "similar", "electrical-ambient": "ambient"}


# Which table judges which basis.
TABLE_KEY_FOR_BASIS = {
    "similar": "electrical-similar",
    "ambient": "electrical-ambient",
    "envelope": ENVELOPE_TABLE["key"],
    "roof": ROOF_TABLE["key"],
}


@dataclass(frozen=True)
class Band:
    """Where a value falls in a severity table."""

    level: int | None  # 1 (act now) to 4 (watch); None when no band applies
    action: str
    text: str  # the row as people read it, e.g. "80–100 %: mould risk" or "over 3 to 15 °C"


NO_BAND = Band(level=None, action="", text="")


def is_rise_table(rows: list[dict]) -> bool:
    """Whether `rows` are a rise table (read in order) rather than half-open bands."""
    return not (rows and "lower" in rows[0])


def classify(value: float, rows: list[dict], *, unit: str = "", basis: str = "similar") -> Band:
    """The band of a severity table that holds `value`, in either row shape.

    `basis` names what a rise table's rise is measured against (``similar`` or
    ``ambient``); `unit` is shown in the band text of a building table.
    """
    if is_rise_table(rows):
        found = classify_rise(value, basis, table={"name": "table", "rows": rows})
        return Band(level=found.level, action=found.action, text=found.row)
    row = classify_value(value, rows)
    if row is None:
        return NO_BAND
    return Band(level=row["level"], action=row["action"], text=row_text(row, unit))


def validate_rows(rows) -> list[dict]:
    """Check the shape of a severity table's rows; raise ValueError with a readable message.

    Rows are half-open bands ``lower <= value < upper``; ``upper`` null means no upper
    bound. Bands must not overlap, levels are 1–4, every row needs an action text.
    """
    if not isinstance(rows, list) or not rows:
        raise ValueError("A table needs a list of at least one row.")
    cleaned = []
    for number, row in enumerate(rows, start=1):
        if not isinstance(row, dict):
            raise ValueError(f"Row {number} must be an object with lower, upper, level, action.")
        unknown = set(row) - {"label", "lower", "upper", "level", "action"}
        if unknown:
            raise ValueError(f"Row {number} has unknown keys: {', '.join(sorted(unknown))}.")
        lower, upper, level = row.get("lower"), row.get("upper"), row.get("level")
        if not _is_number(lower):
            raise ValueError(f"Row {number}: 'lower' must be a number.")
        if upper is not None and (not _is_number(upper) or upper <= lower):
            raise ValueError(f"Row {number}: 'upper' must be empty or a number above 'lower'.")
        if isinstance(level, bool) or not isinstance(level, int) or not 1 <= level <= 4:
            raise ValueError(f"Row {number}: 'level' must be 1, 2, 3 or 4.")
        action = row.get("action")
        if not isinstance(action, str) or not action.strip():
            raise ValueError(f"Row {number}: 'action' must say what to do.")
        cleaned.append(
            {
                "label": str(row.get("label") or ""),
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


def _is_number(value) -> bool:
    return isinstance(value, int | float) and not isinstance(value, bool) and math.isfinite(value)


def classify_value(value: float, rows: list[dict]) -> dict | None:
    """The row whose half-open band holds `value`, or None when no band does."""
    if value is None or not math.isfinite(value):
        return None
    for row in rows:
        upper = row.get("upper")
        if value >= row["lower"] and (upper is None or value < upper):
            return row
    return None


def row_text(row: dict | None, unit: str = "") -> str:
    """A row as people read it, e.g. '4–15 K: probable deficiency'."""
    if row is None:
        return ""
    upper = row.get("upper")
    band = f"{row['lower']:g}–{upper:g}" if upper is not None else f"≥ {row['lower']:g}"
    label = row.get("label") or row.get("action", "")
    return f"{band} {unit}: {label}".replace("  ", " ")


def lowest_bound(rows: list[dict]) -> float | None:
    """The lower bound of the lowest band: below it a table gives no level."""
    bounds = [row["lower"] for row in rows if _is_number(row.get("lower"))]
    return min(bounds) if bounds else None


def validate_rise_rows(rows, basis: str) -> list[dict]:
    """Check a rise table in the shape of survey.thermal.electrical.DEFAULT_CRITERIA.

    Rows are read in order: ``below_c`` matches a rise below it, ``up_to_c`` a rise up to
    and including it, and the last row, with neither, everything above.
    """
    if not isinstance(rows, list) or not rows:
        raise ValueError("A table needs a list of at least one row.")
    for number, row in enumerate(rows, start=1):
        if not isinstance(row, dict):
            raise ValueError(f"Row {number} must be an object with label, level and action.")
        unknown = set(row) - {"label", "below_c", "up_to_c", "level", "action"}
        if unknown:
            raise ValueError(f"Row {number} has unknown keys: {', '.join(sorted(unknown))}.")
        if not isinstance(row.get("action"), str) or not isinstance(row.get("label"), str):
            raise ValueError(f"Row {number}: 'label' and 'action' must be text.")
        if isinstance(row.get("level"), bool):
            raise ValueError(f"Row {number}: level must be 1, 2, 3, 4 or null.")
        if "below_c" in row and "up_to_c" in row:
            raise ValueError(f"Row {number}: give either 'below_c' or 'up_to_c', not both.")
    if "below_c" in rows[-1] or "up_to_c" in rows[-1]:
        raise ValueError("The last row must have no limit: it takes every larger rise.")
    # The physics checks levels and rising limits, and reads the table end to end.
    classify_rise(1e6, basis, table={"name": "check", "rows": rows})
    return [dict(row) for row in rows]


def no_finding_below(rows: list[dict]) -> float | None:
    """The value below which a table gives no level (the start of its first band).

    Works for both shapes: half-open bands (``lower``) and rise tables read in order
    (``below_c`` / ``up_to_c`` with level null for "no finding").
    """
    if not is_rise_table(rows):
        return lowest_bound(rows)
    threshold = None
    for row in rows:
        if row.get("level") is not None:
            break
        threshold = row.get("below_c", row.get("up_to_c"))
    return threshold
