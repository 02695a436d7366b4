"""Every criteria table in one row shape: half-open bands ``lower <= x < upper``.

Rise tables (electrical-similar, electrical-ambient) were rows read in order with
``below_c`` / ``up_to_c`` limits and level null for "no finding". Rises are compared at
the 0.1 K they are printed at, so "up to and including U" is "below the next tenth above
U" and "below B" stays "below B"; rows with level null become gaps (no band, no level).
Action texts and sources still equal to the old shipped ones (the actions were near-verbatim
from a published table, the sources held internal notes) are replaced by the new shipped
ones, in the product's default rows and in organizations' copies alike; texts a firm wrote
itself are kept.

Backwards, bands become ``below_c`` rows (exactly the same reading for 0.1 K rises), with
a null-level row for every gap.
"""

import math

from django.db import migrations

RISE_KEYS = ("electrical-similar", "electrical-ambient")

#: The first row of an old rise table took every smaller rise, negative ones included: as
#: a band it starts below any rise a reading can give (survey.thermal.bands.NO_LOWER_LIMIT,
#: frozen here).
FLOOR = -1000.0

# The shipped texts as of this migration (frozen here: later edits to the code's defaults
# must not change what this migration writes).
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
_NETA = (
    "Temperature bands of Table 100.18 (thermographic survey) of the ANSI/NETA "
    "Maintenance Testing Specifications (NETA MTS)."
)
NEW_SOURCES = {
    "electrical-similar": _NETA,
    "electrical-ambient": _NETA,
    "envelope-surface-rh": (
        "Limits of surface relative humidity from ISO 13788: 80 % for mould growth, "
        "100 % for condensation."
    ),
    "roof-wet-area": (
        "Bands of common practice: no published standard sets limits for wet roof areas."
    ),
}
OLD_SOURCES = {
    "electrical-similar": (
        "Temperature bands of the thermographic survey table of the ANSI/NETA Maintenance "
        "Testing Specifications; suggested actions in our own words."
    ),
    "envelope-surface-rh": (
        "Bands at 80 % (mould) and 100 % (condensation) surface RH from ISO 13788 [source "
        "for the criteria]; the levels given to each band are ours."
    ),
    "roof-wet-area": (
        "Product default with no outside source; edit the bands to your own practice."
    ),
}
OLD_SOURCES["electrical-ambient"] = OLD_SOURCES["electrical-similar"]
#: Old shipped action text → new one (the old ones were near-verbatim from the table).
NEW_ACTIONS = {
    "A fault may be starting: look into it at the next planned visit.": _WATCH,
    "A fault is likely: plan the repair for the next convenient outage.": _PLAN,
    "Keep it under watch and correct it at the first outage that allows.": _SOON,
    "Serious fault: arrange the repair at once.": _NOW,
}


def next_tenth_above(limit: float) -> float:
    """The smallest multiple of 0.1 above `limit`: x <= limit is x < this for 0.1 K rises."""
    return (math.floor(round(limit * 10, 6)) + 1) / 10


def bands_from_rise_rows(rows: list[dict]) -> list[dict]:
    """Rows read in order (below_c / up_to_c / no limit) as half-open bands."""
    bands, lower = [], FLOOR
    for row in rows:
        if "below_c" in row:
            upper = float(row["below_c"])
        elif "up_to_c" in row:
            upper = next_tenth_above(float(row["up_to_c"]))
        else:
            upper = None
        if row.get("level") is not None and (upper is None or upper > lower):
            bands.append(
                {
                    "label": row.get("label") or "",
                    "lower": lower,
                    "upper": upper,
                    "level": row["level"],
                    "action": row["action"],
                }
            )
        if upper is None:
            break
        lower = max(lower, upper)
    return bands


def rise_rows_from_bands(bands: list[dict]) -> list[dict]:
    """Half-open bands as rows read in order; gaps become rows without a level."""
    rows, reached = [], FLOOR
    for band in sorted(bands, key=lambda b: b["lower"]):
        if band["lower"] > reached:
            gap = {"label": f"below {band['lower']:g} °C", "below_c": band["lower"]}
            rows.append(gap | {"level": None, "action": "No finding."})
        row = {"label": band["label"], "level": band["level"], "action": band["action"]}
        if band["upper"] is not None:
            row["below_c"] = band["upper"]
        rows.append(row)
        reached = band["upper"]
        if reached is None:
            return rows
    rows.append({"label": "no finding", "level": None, "action": "No finding."})
    return rows


def forwards(apps, schema_editor):
    CriteriaTable = apps.get_model("survey", "CriteriaTable")
    for table in CriteriaTable.objects.all():
        rows = table.rows or []
        if table.key in RISE_KEYS and rows and "lower" not in rows[0]:
            rows = bands_from_rise_rows(rows)
        table.rows = [
            row | {"action": NEW_ACTIONS.get(row.get("action"), row.get("action"))} for row in rows
        ]
        if table.key in OLD_SOURCES and table.source == OLD_SOURCES[table.key]:
            table.source = NEW_SOURCES[table.key]
        table.save(update_fields=["rows", "source"])


def backwards(apps, schema_editor):
    CriteriaTable = apps.get_model("survey", "CriteriaTable")
    for table in CriteriaTable.objects.filter(key__in=RISE_KEYS):
        rows = table.rows or []
        if rows and "lower" in rows[0]:
            table.rows = rise_rows_from_bands(rows)
            table.save(update_fields=["rows"])


class Migration(migrations.Migration):
    dependencies = [
        ("survey", "0015_mark_version"),
    ]

    operations = [migrations.RunPython(forwards, backwards)]
