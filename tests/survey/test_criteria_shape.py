"""One row shape for every criteria table: the shipped tables and converted old rows judge
exactly as the old rise tables did, and the texts that reach a client are ours and clean.

Source of every band: the NETA MTS thermographic survey bands as recalled in
docs/references.md § Electrical and mechanical ranking [memory], read at 0.1 K; the old
reading rule (rows in order, ``below_c`` / ``up_to_c``) is written out here in exact
decimal arithmetic, independently of the app's lookup.
"""

import importlib
from decimal import ROUND_HALF_UP, Decimal

import pytest
from django.apps import apps

from survey import severity
from survey.models import CriteriaTable
from survey.services.criteria_tables import default_tables
from survey.thermal.bands import NO_LOWER_LIMIT
from survey.thermal.electrical import DEFAULT_CRITERIA, classify_rise

migration = importlib.import_module("survey.migrations.0016_criteria_tables_one_row_shape")

OLD_WATCH = "A fault may be starting: look into it at the next planned visit."
OLD_PLAN = "A fault is likely: plan the repair for the next convenient outage."
OLD_SOON = "Keep it under watch and correct it at the first outage that allows."
OLD_NOW = "Serious fault: arrange the repair at once."
OLD_SOURCE = (
    "Temperature bands of the thermographic survey table of the ANSI/NETA Maintenance "
    "Testing Specifications; suggested actions in our own words."
)
NONE = {"level": None, "action": "No finding."}
# The shipped rise tables as they were before the one row shape (commit a7eb229).
OLD_RISE_ROWS = {
    "similar": [
        {"label": "below 1 °C", "below_c": 1.0} | NONE,
        {"label": "1 to 3 °C", "up_to_c": 3.0, "level": 4, "action": OLD_WATCH},
        {"label": "over 3 to 15 °C", "up_to_c": 15.0, "level": 3, "action": OLD_PLAN},
        {"label": "over 15 °C", "level": 1, "action": OLD_NOW},
    ],
    "ambient": [
        {"label": "below 1 °C", "below_c": 1.0} | NONE,
        {"label": "1 to 10 °C", "up_to_c": 10.0, "level": 4, "action": OLD_WATCH},
        {"label": "over 10 to 20 °C", "up_to_c": 20.0, "level": 3, "action": OLD_PLAN},
        {"label": "over 20 to 40 °C", "up_to_c": 40.0, "level": 2, "action": OLD_SOON},
        {"label": "over 40 °C", "level": 1, "action": OLD_NOW},
    ],
}
# An invented firm's old table: a first band with a level (it took negative rises too), a
# stretch of no finding in the middle, a limit between tenths and a last row of no finding.
ODD_OLD_ROWS = [
    {"label": "up to 2", "up_to_c": 2.0, "level": 4, "action": "Watch it."},
    {"label": "quiet", "below_c": 5.0} | NONE,
    {"label": "to 8.05", "up_to_c": 8.05, "level": 3, "action": "Plan it."},
    {"label": "to 12", "up_to_c": 12.0, "level": 1, "action": "Now."},
    {"label": "beyond"} | NONE,
]
# Rises of one-decimal readings from −5.0 to 60.0 K, every tenth (the printed values).
TENTHS = [Decimal(n) / 10 for n in range(-50, 601)]


def old_level(rows: list[dict], rise: Decimal):
    """Level by the old rule: rows in order, ``below_c`` < limit, ``up_to_c`` ≤ limit."""
    shown = rise.quantize(Decimal("0.1"), rounding=ROUND_HALF_UP)
    for row in rows:
        if "below_c" in row and shown < Decimal(str(row["below_c"])):
            return row["level"], row["action"]
        if "up_to_c" in row and shown <= Decimal(str(row["up_to_c"])):
            return row["level"], row["action"]
        if "below_c" not in row and "up_to_c" not in row:
            return row["level"], row["action"]
    raise AssertionError("an old table always ends with a row without a limit")


def new_level(rows: list[dict], rise: Decimal, basis: str = "similar"):
    found = classify_rise(float(rise), basis, table={"name": "t", "rows": rows})
    return found.level, found.action


@pytest.mark.parametrize("basis", ["similar", "ambient"])
def test_shipped_rise_tables_give_the_old_levels_at_every_printed_rise(basis):
    """Every printed rise from −5 to 60 K gets the level the old shipped table gave it."""
    for rise in TENTHS:
        old = old_level(OLD_RISE_ROWS[basis], rise)[0]
        assert classify_rise(float(rise), basis).level == old, rise
        assert severity.classify(
            float(rise), DEFAULT_CRITERIA[basis]["rows"], basis=basis
        ).level == (old)


@pytest.mark.parametrize("basis", ["similar", "ambient"])
def test_the_migration_turns_the_old_shipped_rows_into_the_shipped_bands(basis):
    """Old shipped rows, converted and given the new texts, are the new shipped rows."""
    converted = migration.bands_from_rise_rows(OLD_RISE_ROWS[basis])
    renamed = [row | {"action": migration.NEW_ACTIONS[row["action"]]} for row in converted]
    assert renamed == DEFAULT_CRITERIA[basis]["rows"]


@pytest.mark.parametrize("rows", [ODD_OLD_ROWS, *OLD_RISE_ROWS.values()])
def test_converted_old_rows_classify_as_before_and_convert_back(rows):
    """An old-shape table, converted, judges every printed rise as before, and back again."""
    bands = severity.validate_rows(migration.bands_from_rise_rows(rows))
    back = migration.rise_rows_from_bands(bands)
    for rise in TENTHS:
        before = old_level(rows, rise)
        assert (new_level(bands, rise)[0], old_level(back, rise)[0]) == (before[0], before[0])
        if before[0] is not None:
            assert new_level(bands, rise)[1] == before[1]


def test_converted_odd_rows_keep_the_limit_between_tenths():
    """A limit "up to 8.05" takes 8.0 but not 8.1: the band ends below 8.1."""
    bands = migration.bands_from_rise_rows(ODD_OLD_ROWS)
    assert [(b["lower"], b["upper"], b["level"]) for b in bands] == [
        (migration.FLOOR, 2.1, 4),
        (5.0, 8.1, 3),
        (8.1, 12.1, 1),
    ]
    # Its first band takes every rise: no "no finding below" line on the trend chart.
    assert migration.FLOOR == NO_LOWER_LIMIT
    assert severity.no_finding_below(bands) is None
    assert severity.no_finding_below(DEFAULT_CRITERIA["similar"]["rows"]) == 1.0


@pytest.mark.parametrize("table", [severity.ENVELOPE_TABLE, severity.ROOF_TABLE])
def test_building_tables_keep_their_bands(table):
    """The building tables were already bands: same limits and levels (ISO 13788 80/100 %)."""
    assert severity.validate_rows(table["rows"]) == table["rows"]
    limits = [(row["lower"], row["upper"], row["level"]) for row in table["rows"]]
    assert limits in ([(80.0, 100.0, 3), (100.0, None, 2)], [(0.25, 10.0, 3), (10.0, None, 2)])


def test_every_shipped_table_passes_the_one_check():
    """Every default table, electrical and building, has the one row shape."""
    for table in default_tables().values():
        assert severity.validate_rows(table["rows"]) == table["rows"], table["key"]


INTERNAL = (
    "from memory",
    "memory",
    "check against",
    "your copy",
    "are ours",
    "[source",
    "secondary source",
    "product default",
    "placeholder",
)
# The wording of the published table's actions as recalled (docs/references.md §
# Electrical and mechanical ranking): none of it may come back.
PUBLISHED = (
    "possible deficiency",
    "probable deficiency",
    "major discrepancy",
    "repair as time permits",
    "corrective measures",
    "repair immediately",
    "warrants investigation",
    "monitor until",
)


def test_shipped_texts_that_reach_a_client_carry_no_internal_note():
    """Names, sources, labels and actions of every default table are fit for a client."""
    for table in default_tables().values():
        shown = [table["name"], table["source"]]
        shown += [text for row in table["rows"] for text in (row["label"], row["action"])]
        for text in shown:
            assert not any(note in text.lower() for note in INTERNAL), text


def test_electrical_actions_are_new_and_in_our_own_words():
    """Every action differs from the old near-verbatim ones and repeats no published wording;
    each says what to do and by when; the source names NETA MTS Table 100.18."""
    old = {OLD_WATCH, OLD_PLAN, OLD_SOON, OLD_NOW}
    for table in DEFAULT_CRITERIA.values():
        assert "NETA MTS" in table["source"] and "Table 100.18" in table["source"]
        for row in table["rows"]:
            assert row["action"] not in old
            assert not any(phrase in row["action"].lower() for phrase in PUBLISHED)
    actions = {row["level"]: row["action"] for row in DEFAULT_CRITERIA["ambient"]["rows"]}
    assert "today" in actions[1] and "weeks" in actions[2]
    assert "next planned shutdown" in actions[3] and "next routine inspection" in actions[4]


def test_the_migration_converts_stored_tables_and_keeps_a_firms_own_words(org):
    """Stored old rows: the product default becomes the shipped table; a firm's copy keeps
    its own texts and bands, and loses the old shipped actions and internal source."""
    default = CriteriaTable.objects.create(
        key="electrical-similar", name="x", source=OLD_SOURCE, rows=OLD_RISE_ROWS["similar"]
    )
    own = ODD_OLD_ROWS[:3] + [{"label": "top", "level": 1, "action": OLD_NOW}]
    copy = CriteriaTable.objects.create(
        organization=org, key="electrical-similar", name="Ours", source="Our note.", rows=own
    )
    envelope = CriteriaTable.objects.create(
        key="envelope-surface-rh",
        name="y",
        source=migration.OLD_SOURCES["envelope-surface-rh"],
        rows=severity.ENVELOPE_TABLE["rows"],
    )
    migration.forwards(apps, None)
    for table in (default, copy, envelope):
        table.refresh_from_db()
    assert default.rows == DEFAULT_CRITERIA["similar"]["rows"]
    assert default.source == DEFAULT_CRITERIA["similar"]["source"]
    assert copy.source == "Our note."
    assert [row["action"] for row in copy.rows] == [
        "Watch it.",
        "Plan it.",
        DEFAULT_CRITERIA["similar"]["rows"][-1]["action"],
    ]
    assert severity.validate_rows(copy.rows)
    assert envelope.source == severity.ENVELOPE_TABLE["source"]
    assert envelope.rows == severity.ENVELOPE_TABLE["rows"]
    migration.backwards(apps, None)
    default.refresh_from_db()
    for rise in TENTHS:
        assert old_level(default.rows, rise)[0] == old_level(OLD_RISE_ROWS["similar"], rise)[0]
