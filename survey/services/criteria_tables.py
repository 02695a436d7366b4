"""Severity tables an organization judges findings by: the product defaults, an
organization's own editable copies, and their checks.

The tables' contents and the classifier live in survey/severity.py.
"""

from django.core.exceptions import ValidationError
from django.db import transaction

from survey import severity
from survey.models import CriteriaTable, Organization
from survey.services.audit import audit_record
from survey.thermal import electrical


def default_tables() -> dict[str, dict]:
    """Every default severity table as data, by key: electrical ones from the physics."""
    tables = {table["key"]: table for table in electrical.default_criteria().values()}
    for table in (severity.ENVELOPE_TABLE, severity.ROOF_TABLE):
        tables[table["key"]] = {k: v for k, v in table.items()}
    return tables


def validate_table_rows(*, key: str, rows) -> list:
    """Check the rows of the table `key`; ValidationError with a readable message.

    Every table has the one row shape of survey.thermal.bands (half-open bands).
    """
    try:
        return severity.validate_rows(rows)
    except ValueError as error:
        raise ValidationError({"rows": str(error)}) from None


def _default_table_row(key: str) -> CriteriaTable:
    data = default_tables()[key]
    table, _ = CriteriaTable.objects.get_or_create(
        organization=None,
        key=key,
        defaults={"name": data["name"], "source": data["source"], "rows": data["rows"]},
    )
    return table


def criteria_table_for(*, organization: Organization, basis: str) -> CriteriaTable:
    """The table that judges `basis` for an organization: its own copy, else the default."""
    key = severity.TABLE_KEY_FOR_BASIS[basis]
    own = CriteriaTable.objects.filter(organization=organization, key=key).first()
    return own or _default_table_row(key)


@transaction.atomic
def criteria_table_copy_defaults(*, organization: Organization, user=None) -> list[CriteriaTable]:
    """Give an organization its own editable copy of every default table (idempotent)."""
    copies = []
    for key in default_tables():
        existing = CriteriaTable.objects.filter(organization=organization, key=key).first()
        if existing:
            copies.append(existing)
            continue
        default = _default_table_row(key)
        table = CriteriaTable(
            organization=organization,
            key=key,
            name=default.name,
            source=default.source,
            rows=[dict(row) for row in default.rows],
            copied_from=default,
        )
        table.full_clean()
        table.save()
        copies.append(table)
    audit_record(
        organization=organization,
        actor=user,
        action="criteria_copied",
        object_type="CriteriaTable",
        detail={"keys": [t.key for t in copies]},
    )
    return copies


def criteria_table_update(*, table: CriteriaTable, user, rows, source: str | None = None):
    """Replace an organization's table rows after checking their shape."""
    if table.organization_id is None:
        raise ValidationError("The product's default tables cannot be edited; copy them first.")
    table.rows = validate_table_rows(key=table.key, rows=rows)
    if source is not None:
        table.source = source
    table.full_clean()
    table.save()
    audit_record(
        organization=table.organization,
        actor=user,
        action="criteria_updated",
        obj=table,
        detail={"rows": table.rows},
    )
    return table
