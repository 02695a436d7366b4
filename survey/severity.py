"""Severity: the finding categories and judgement bases of each survey kind, the severity
tables held as data, and the one classifier that reads them.

Severity levels are ours: 1 act now, 2 act soon, 3 plan repair, 4 watch. Every table,
building (envelope, roof) and equipment (electrical and mechanical rises) alike, has one
row shape: half-open bands ``lower <= value < upper`` (``upper`` null for "and above"),
documented and looked up in :mod:`survey.thermal.bands`; a value in no band gives no
level. Rises are compared at the 0.1 K they are printed at (see
``survey.thermal.electrical.DEFAULT_CRITERIA``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from survey.thermal import classify_rise
from survey.thermal.bands import NO_LOWER_LIMIT, band_index, check_bands

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
        "Limits of surface relative humidity from ISO 13788: 80 % for mould growth, "
        "100 % for condensation."
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
    "source": "Bands of common practice: no published standard sets limits for wet roof areas.",
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


def classify(value: float, rows: list[dict], *, unit: str = "", basis: str | None = None) -> Band:
    """The band of a severity table that holds `value`.

    For a rise table give `basis` (``similar`` or ``ambient``): the rise is then rounded to
    the 0.1 K it is printed at and the band text is the row's label ("over 3 to 15 °C").
    Otherwise `unit` is shown in the band text ("80–100 % RH: mould risk").
    """
    if basis is not None:
        found = classify_rise(value, basis, table={"name": "table", "rows": rows})
        return Band(level=found.level, action=found.action, text=found.row)
    row = classify_value(value, rows)
    if row is None:
        return NO_BAND
    return Band(level=row["level"], action=row["action"], text=row_text(row, unit))


def validate_rows(rows) -> list[dict]:
    """Check the rows of a severity table; raise ValueError with a readable message.

    The rules are those of :func:`survey.thermal.bands.check_bands`: bands that do not
    overlap, levels 1–4, an action text in every row. The rows come back sorted.
    """
    return check_bands(rows)


def classify_value(value: float, rows: list[dict]) -> dict | None:
    """The row whose half-open band holds `value`, or None when no band does."""
    index = band_index(value, rows)
    return None if index is None else rows[index]


def row_text(row: dict | None, unit: str = "") -> str:
    """A row as people read it, e.g. '80–100 % RH: mould risk'."""
    if row is None:
        return ""
    upper = row.get("upper")
    band = f"{row['lower']:g}–{upper:g}" if upper is not None else f"≥ {row['lower']:g}"
    label = row.get("label") or row.get("action", "")
    return f"{band} {unit}: {label}".replace("  ", " ")


def no_finding_below(rows: list[dict]) -> float | None:
    """The lower bound of the lowest band: below it a table gives no level.

    None when the table has no band or its lowest band takes every value
    (``lower`` at or below survey.thermal.bands.NO_LOWER_LIMIT).
    """
    bounds = [row["lower"] for row in rows if _is_number(row.get("lower"))]
    if not bounds or min(bounds) <= NO_LOWER_LIMIT:
        return None
    return min(bounds)


def _is_number(value) -> bool:
    return isinstance(value, int | float) and not isinstance(value, bool) and math.isfinite(value)
