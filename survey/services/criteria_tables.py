"""Severity tables an organization judges findings by: the product defaults, an
organization's own editable copies, and their checks.

The tables' contents and the classifier live in survey/severity.py.
"""

from django.core.exceptions import ValidationError
from django.db import transaction
from django.utils import timezone

from survey import severity
from survey.models import CriteriaTable, Member, Organization, Survey
from survey.services.audit import audit_record
from survey.thermal import electrical

# The basis printed for each shipped default table until a firm writes its own: the
# standard the bands rest on, by name only (the wording of the rows is the product's).
DEFAULT_BASIS = {
    "electrical-similar": (
        "ANSI/NETA Maintenance Testing Specifications, thermographic survey: temperature "
        "difference between similar components under similar load"
    ),
    "electrical-ambient": (
        "ANSI/NETA Maintenance Testing Specifications, thermographic survey: temperature "
        "difference over the ambient air"
    ),
    "envelope-surface-rh": (
        "ISO 13788: surface relative humidity of 80 % (mould growth) and 100 % (condensation)"
    ),
    "roof-wet-area": "ASTM C1153 locates wet insulation; the area bands are the firm's practice",
}
UNREVIEWED_TEXT = "defaults, not yet reviewed by your firm"


def table_basis(table: CriteriaTable) -> str:
    """The basis a report prints for `table`: the firm's own, else the shipped default's."""
    return table.basis or DEFAULT_BASIS.get(table.key, "")


def survey_criteria_tables(survey: Survey) -> list[CriteriaTable]:
    """The criteria tables the survey's findings were judged by, in key order.

    A finding judged by a product default stands for the firm's own copy of that table
    when the copy holds the same rows: the firm's review of those bands covers it.
    """
    tables = {
        finding.criteria_table_id: finding.criteria_table
        for finding in survey.findings.select_related("criteria_table").exclude(criteria_table=None)
    }
    own = {
        table.key: table
        for table in CriteriaTable.objects.filter(
            organization=survey.organization_id, key__in=[t.key for t in tables.values()]
        ).select_related("reviewed_by__user")
    }
    used = {}
    for table in tables.values():
        copy = own.get(table.key)
        if table.organization_id is None and copy is not None and copy.rows == table.rows:
            table = copy
        elif copy is not None and copy.pk == table.pk:
            table = copy  # the same row, with its reviewer loaded
        used[table.pk] = table
    return sorted(used.values(), key=lambda table: (table.key, table.pk))


def unreviewed_criteria_tables(survey: Survey) -> list[CriteriaTable]:
    """The tables behind the survey's findings that no member of the firm has reviewed."""
    return [table for table in survey_criteria_tables(survey) if not table.is_reviewed]


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
        defaults={
            "name": data["name"],
            "source": data["source"],
            "basis": DEFAULT_BASIS.get(key, ""),
            "rows": data["rows"],
        },
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
            basis=table_basis(default),
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
    rows = validate_table_rows(key=table.key, rows=rows)
    if rows != table.rows:  # a review covers the rows it saw
        table.reviewed_by, table.reviewed_at = None, None
    table.rows = rows
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


@transaction.atomic
def criteria_table_review(
    *, organization: Organization, table: CriteriaTable, member: Member, basis: str
) -> CriteriaTable:
    """Record that `member` (a reviewer or admin of the firm) reviewed the table and the
    standard and clause it rests on. A product default is first copied into the firm's own
    tables: the review belongs to the firm's copy."""
    if not member.can_review or member.organization_id != organization.pk:
        raise ValidationError("Only a reviewer or an admin of your firm can review a table.")
    basis = (basis or "").strip()
    if not basis:
        raise ValidationError({"basis": "Name the standard and clause the bands rest on."})
    if table.organization_id is None:
        own = CriteriaTable.objects.filter(organization=organization, key=table.key).first()
        if own is None:
            own = CriteriaTable(
                organization=organization,
                key=table.key,
                name=table.name,
                basis=table_basis(table),
                rows=[dict(row) for row in table.rows],
                copied_from=table,
            )
        table = own
    elif table.organization_id != organization.pk:
        raise ValidationError("This table belongs to another organization.")
    table.basis = basis
    table.reviewed_by = member
    table.reviewed_at = timezone.now()
    table.full_clean()
    table.save()
    audit_record(
        organization=organization,
        actor=member.user,
        action="criteria_reviewed",
        obj=table,
        detail={"key": table.key, "basis": basis, "rows": table.rows},
    )
    return table
