"""Judgement criteria held as data: survey conditions, finding categories, severity tables.

Each criterion carries its source and how sure we are of it, with the labels of
REFERENCES.md: ``memory`` (recalled, not confirmed against the published text),
``practice`` (common practice of the trade, no single source), ``source`` (confirmed in a
published text) and ``ours`` (a product default with no outside source; edit it to your
own practice).

Severity tables are lists of rows. Each row is a half-open band ``lower <= value < upper``
(``upper`` null for "and above") of one quantity, with a severity level (1 act now, 2 act
soon, 3 plan repair, 4 watch) and an action text. A value below the lowest band gives no
level: nothing to report under that table. The electrical tables live with the physics in
``survey.thermal.electrical.DEFAULT_CRITERIA``; the envelope and roof tables are here.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

CONFIDENCE_LABELS = {
    "source": "confirmed in a published text",
    "memory": "from memory, not confirmed against the published text",
    "practice": "common practice, no single source",
    "ours": "product default, no outside source",
}


@dataclass(frozen=True)
class Criterion:
    """One survey-conditions requirement on one field of survey.models.Conditions."""

    key: str
    label: str
    field: str
    test: str  # "min" (value >= limit), "max" (value <= limit), "true", "equals", "recorded"
    requirement: str
    source: str
    confidence: str
    limit: float | str | None = None
    unit: str = ""

    def evaluate(self, value) -> str:
        if value is None or value == "":
            return "not_recorded"
        if self.test == "min":
            ok = value >= self.limit
        elif self.test == "max":
            ok = value <= self.limit
        elif self.test == "true":
            ok = value is True
        elif self.test == "equals":
            ok = value == self.limit
        elif self.test == "recorded":
            ok = True
        else:  # a typo in the data must not pass silently as "met"
            raise ValueError(f"unknown criterion test {self.test!r}")
        return "met" if ok else "not_met"


_DELTA_T = Criterion(
    key="inside_outside_difference",
    label="Inside–outside air temperature difference",
    field="inside_outside_difference_c",
    test="min",
    limit=10.0,
    unit="K",
    requirement="at least 10 K",
    source="EN 13187 / ISO 6781 and ASTM C1060 ask for about 10 K",
    confidence="memory",
)
_DELTA_T_HELD = Criterion(
    key="difference_held",
    label="Difference held before the survey",
    field="delta_t_hours",
    test="min",
    limit=24.0,
    unit="h",
    requirement="at least 24 h (ASTM C1060 asks about 4 h)",
    source="EN 13187 / ISO 6781 about 24 h; ASTM C1060 about 4 h",
    confidence="memory",
)
_NO_SUN = Criterion(
    key="no_direct_sun",
    label="No direct sun on the surveyed surfaces before the survey",
    field="hours_since_sun",
    test="min",
    limit=12.0,
    unit="h",
    requirement="at least 12 h since direct sun (some practice accepts 2–3 h)",
    source="several national versions of EN 13187 about 12 h; some practice 2–3 h",
    confidence="memory",
)
_WIND = Criterion(
    key="wind",
    label="Wind speed",
    field="wind_m_s",
    test="max",
    limit=5.0,
    unit="m/s",
    requirement="at most about 5 m/s",
    source="secondary sources on EN 13187 / ISO 6781",
    confidence="memory",
)
_NO_PRECIPITATION = Criterion(
    key="no_precipitation",
    label="No precipitation",
    field="precipitation",
    test="equals",
    limit="none",
    requirement="none during the survey",
    source="wet surfaces cool by evaporation and hide patterns",
    confidence="practice",
)
_DRY = Criterion(
    key="surfaces_dry",
    label="Surveyed surfaces dry",
    field="surfaces_dry",
    test="true",
    requirement="dry",
    source="wet surfaces cool by evaporation and hide patterns",
    confidence="practice",
)

CONDITIONS_CRITERIA: dict[str, list[Criterion]] = {
    "envelope": [_DELTA_T, _DELTA_T_HELD, _NO_SUN, _WIND, _NO_PRECIPITATION, _DRY],
    "roof": [
        Criterion(
            key="sunny_day_before",
            label="Sunny day before the survey",
            field="sunny_day_before",
            test="true",
            requirement="a sunny day warmed the roof",
            source="ASTM C1153 (scope) and common practice",
            confidence="practice",
        ),
        Criterion(
            key="after_sunset",
            label="Surveyed in the evening, after the sun left the roof",
            field="hours_since_sun",
            test="min",
            limit=1.0,
            unit="h",
            requirement="at least 1 h since direct sun",
            source="ASTM C1153 (night survey); the hour is common practice",
            confidence="practice",
        ),
        Criterion(
            key="roof_dry",
            label="Roof surface dry, no standing water",
            field="surfaces_dry",
            test="true",
            requirement="dry",
            source="ASTM C1153 (scope)",
            confidence="memory",
        ),
        _NO_PRECIPITATION,
        Criterion(
            key="roof_wind",
            label="Wind speed",
            field="wind_m_s",
            test="max",
            limit=6.7,
            unit="m/s",
            requirement="below about 24 km/h (6.7 m/s)",
            source="ASTM C1153",
            confidence="memory",
        ),
    ],
    "electrical": [
        Criterion(
            key="load",
            label="Electrical load at the time of the survey",
            field="load_pct",
            test="min",
            limit=40.0,
            unit="% of rating",
            requirement="at least 40 % of rating",
            source="common practice; NFPA 70B asks for at least 40 % of normal load",
            confidence="practice",
        ),
        Criterion(
            key="covers_by_qualified",
            label="Enclosure covers opened only by qualified persons",
            field="covers_opened_by_qualified",
            test="true",
            requirement="yes, with the protective equipment the local rules require",
            source="NFPA 70E (general) and local electrical-safety rules",
            confidence="practice",
        ),
        Criterion(
            key="ambient_recorded",
            label="Ambient air temperature near the equipment",
            field="ambient_air_c",
            test="recorded",
            unit="°C",
            requirement="recorded (needed for rises over ambient)",
            source="ASTM E1934 report fields",
            confidence="memory",
        ),
    ],
    "mechanical": [
        Criterion(
            key="steady_state",
            label="Equipment running at steady state",
            field="equipment_steady",
            test="true",
            requirement="yes",
            source="common practice",
            confidence="practice",
        ),
        Criterion(
            key="ambient_recorded",
            label="Ambient air temperature near the equipment",
            field="ambient_air_c",
            test="recorded",
            unit="°C",
            requirement="recorded (needed for rises over ambient)",
            source="ASTM E1934 report fields",
            confidence="memory",
        ),
    ],
}


def _value_text(criterion: Criterion, value, conditions) -> str:
    if value is None or value == "":
        return "not recorded"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float | int):
        return f"{value:.1f} {criterion.unit}".strip()
    if criterion.field == "precipitation" and conditions is not None:
        return conditions.get_precipitation_display()
    return str(value)


def conditions_check(survey) -> list[dict]:
    """Check the survey's recorded conditions against the criteria of its kind.

    Returns one dict per criterion: ``criterion`` (label), ``status`` (``met``,
    ``not_met`` or ``not_recorded``), ``value`` (as recorded, or None), ``value_text``,
    ``requirement``, ``source``, ``confidence`` and ``key``.
    """
    from survey.models import Conditions

    try:
        conditions = survey.conditions
    except Conditions.DoesNotExist:
        conditions = None
    checks = []
    for criterion in CONDITIONS_CRITERIA.get(survey.kind, []):
        value = getattr(conditions, criterion.field, None) if conditions is not None else None
        checks.append(
            {
                "key": criterion.key,
                "criterion": criterion.label,
                "status": (status := criterion.evaluate(value)),
                "status_text": status.replace("_", " "),
                "value": value,
                "value_text": _value_text(criterion, value, conditions),
                "requirement": criterion.requirement,
                "source": criterion.source,
                "confidence": criterion.confidence,
                "confidence_text": CONFIDENCE_LABELS[criterion.confidence],
            }
        )
    return checks


def conditions_shortfall(checks: list[dict]) -> str | None:
    """One sentence for the report when the conditions fell short, None when all were met."""
    not_met = [c["criterion"].lower() for c in checks if c["status"] == "not_met"]
    missing = [c["criterion"].lower() for c in checks if c["status"] == "not_recorded"]
    parts = []
    if not_met:
        parts.append("not met: " + "; ".join(not_met))
    if missing:
        parts.append("not recorded: " + "; ".join(missing))
    if not parts:
        return None
    return (
        "The survey conditions fell short of the usual criteria ("
        + " — ".join(parts)
        + "). Findings may understate or overstate what a survey in good conditions would show."
    )


# --- finding categories per survey kind ---

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
    from survey.thermal import classify_rise

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
    if rows and "lower" in rows[0]:
        return lowest_bound(rows)
    threshold = None
    for row in rows:
        if row.get("level") is not None:
            break
        threshold = row.get("below_c", row.get("up_to_c"))
    return threshold


def band_limits(rows: list[dict]) -> list[float]:
    """Every numeric band limit of a table, either shape."""
    limits = []
    for row in rows:
        for name in ("lower", "upper", "below_c", "up_to_c"):
            value = row.get(name)
            if _is_number(value):
                limits.append(float(value))
    return sorted(set(limits))
