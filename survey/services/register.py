"""A site's asset register: edit, retire and reinstate assets, and CSV import and export.

An import is checked whole before anything is written: every bad cell is reported with its
row (as a spreadsheet numbers it: the header is row 1), its column and what is wrong, and a
file with any error saves nothing. A row whose tag (or, without a tag, whose name) matches a
live asset of the site updates that asset; any other row adds one.
"""

from __future__ import annotations

import csv
import datetime
import io
from dataclasses import dataclass, field
from typing import Any

from django.contrib.auth.models import AbstractBaseUser
from django.core.exceptions import ValidationError
from django.db import transaction
from django.utils import timezone

from survey.models import Asset, Site
from survey.services.audit import audit_record
from survey.services.surveys import apply_changes

EDITABLE_FIELDS = (
    "name",
    "kind",
    "tag",
    "location",
    "rating",
    "rating_unit",
    "criticality",
    "inspection_interval_months",
    "round_order",
    "notes",
)

CSV_COLUMNS = [
    "name",
    "tag",
    "kind",
    "location",
    "rating",
    "rating_unit",
    "criticality",
    "inspection_interval_months",
    "round_order",
    "retired_on",
    "notes",
]
MAX_IMPORT_BYTES = 2 * 1024 * 1024
MAX_IMPORT_ROWS = 5000
MAX_ERRORS_SHOWN = 200


def _check_rating(rating, rating_unit: str) -> None:
    if rating is not None and not rating_unit:
        raise ValidationError({"rating_unit": "Say whether the rating is in A or kW."})


@transaction.atomic
def asset_update(*, asset: Asset, user: AbstractBaseUser | None, **changes: Any) -> Asset:
    """Change what the register says of an asset."""
    unknown = set(changes) - set(EDITABLE_FIELDS)
    if unknown:
        raise TypeError(f"asset_update() got unknown fields: {sorted(unknown)}")
    _check_rating(
        changes.get("rating", asset.rating), changes.get("rating_unit", asset.rating_unit)
    )
    apply_changes(asset, changes, user=user)
    return asset


@transaction.atomic
def asset_retire(*, asset: Asset, user: AbstractBaseUser | None) -> Asset:
    """Take an asset out of service: it stays in the register for its history, never due."""
    if asset.retired_at is None:
        asset.retired_at = timezone.now()
        asset.save(update_fields=["retired_at"])
        audit_record(organization=asset.organization, actor=user, action="retire", obj=asset)
    return asset


@transaction.atomic
def asset_reinstate(*, asset: Asset, user: AbstractBaseUser | None) -> Asset:
    if asset.retired_at is not None:
        asset.retired_at = None
        asset.save(update_fields=["retired_at"])
        audit_record(organization=asset.organization, actor=user, action="reinstate", obj=asset)
    return asset


# --- CSV export ------------------------------------------------------------------------------


def _cell(value) -> object:
    """Spreadsheets run cells that start with = + - @ as formulas: quote such text."""
    if isinstance(value, str) and value[:1] in {"=", "+", "-", "@", "\t", "\r"}:
        return "'" + value
    return "" if value is None else value


def assets_csv(site: Site) -> str:
    """The site's register (retired assets included) as CSV, in the columns import reads."""
    buffer = io.StringIO()
    writer = csv.writer(buffer)
    writer.writerow(CSV_COLUMNS)
    for asset in Asset.objects.filter(site=site).order_by("round_order", "name", "id"):
        writer.writerow(
            _cell(value)
            for value in (
                asset.name,
                asset.tag,
                asset.kind,
                asset.location,
                f"{asset.rating:g}" if asset.rating is not None else "",
                asset.rating_unit,
                asset.criticality,
                asset.inspection_interval_months,
                asset.round_order,
                asset.retired_at.date().isoformat() if asset.retired_at else "",
                asset.notes,
            )
        )
    return buffer.getvalue()


# --- CSV import ------------------------------------------------------------------------------


@dataclass(frozen=True)
class RowError:
    row: int
    column: str
    message: str


@dataclass
class ImportResult:
    created: int = 0
    updated: int = 0
    errors: list[RowError] = field(default_factory=list)

    @property
    def ok(self) -> bool:
        return not self.errors


class ImportRefused(ValidationError):
    """The file had errors; nothing was saved. `result.errors` lists them."""

    def __init__(self, result: ImportResult):
        self.result = result
        count = len(result.errors)
        super().__init__(f"The file has {count} error(s); nothing was saved.")


def _choice(value: str, choices, column: str) -> str:
    wanted = value.strip().casefold()
    for key, label in choices:
        if wanted in (key.casefold(), str(label).casefold()):
            return key
    allowed = ", ".join(key for key, _ in choices)
    raise ValueError(f"“{value}” is not one of: {allowed}.")


def _number(value: str) -> float:
    text = value.strip().replace(" ", "")
    if "," in text and "." not in text:
        text = text.replace(",", ".")  # a decimal comma
    try:
        number = float(text)
    except ValueError:
        raise ValueError(f"“{value}” is not a number.") from None
    if number != number or number in (float("inf"), float("-inf")):
        raise ValueError(f"“{value}” is not a number.")
    return number


def _whole(value: str, low: int, high: int) -> int:
    number = _number(value)
    if number != int(number):
        raise ValueError(f"“{value}” is not a whole number.")
    if not low <= number <= high:
        raise ValueError(f"{int(number)} is outside {low}–{high}.")
    return int(number)


def _date(value: str) -> datetime.date:
    try:
        return datetime.date.fromisoformat(value.strip())
    except ValueError:
        raise ValueError(f"“{value}” is not a date written as YYYY-MM-DD.") from None


def _text(value: str, limit: int) -> str:
    value = value.strip()
    if len(value) > limit:
        raise ValueError(f"At most {limit} characters ({len(value)} given).")
    return value


def _row_values(row: dict[str, str]) -> tuple[dict, dict[str, str]]:
    """The model values of one CSV row, and the error message of each bad column."""
    values: dict[str, Any] = {}
    errors: dict[str, str] = {}
    readers = {
        "name": lambda v: _text(v, 200),
        "tag": lambda v: _text(v, 100),
        "kind": lambda v: _choice(v, Asset.Kind.choices, "kind") if v.strip() else "other",
        "location": lambda v: _text(v, 200),
        "rating": lambda v: _number(v) if v.strip() else None,
        "rating_unit": lambda v: (
            _choice(v, Asset.RatingUnit.choices, "rating_unit") if v.strip() else ""
        ),
        "criticality": lambda v: (
            _choice(v, Asset.Criticality.choices, "criticality") if v.strip() else "medium"
        ),
        "inspection_interval_months": lambda v: _whole(v, 1, 120) if v.strip() else 12,
        "round_order": lambda v: _whole(v, 0, 1_000_000) if v.strip() else 0,
        "retired_on": lambda v: _date(v) if v.strip() else None,
        "notes": lambda v: _text(v, 20_000),
    }
    for column, read in readers.items():
        if column not in row:
            continue
        try:
            values[column] = read(row[column] or "")
        except ValueError as error:
            errors[column] = str(error)
    if "name" in values and not values["name"]:
        errors["name"] = "Every asset needs a name."
    rating = values.get("rating")
    if rating is not None and "rating" not in errors:
        if not 0 < rating <= 1_000_000:
            errors["rating"] = f"{rating:g} is outside 0–1,000,000."
        elif not values.get("rating_unit") and "rating_unit" not in errors:
            errors["rating_unit"] = "Say whether the rating is in A or kW."
    return values, errors


def _read_rows(data: bytes, result: ImportResult) -> list[tuple[int, dict[str, str]]]:
    if len(data) > MAX_IMPORT_BYTES:
        result.errors.append(
            RowError(1, "", f"The file is larger than {MAX_IMPORT_BYTES // 1024 // 1024} MB.")
        )
        return []
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError:
        result.errors.append(RowError(1, "", "The file is not UTF-8 text: save it as CSV UTF-8."))
        return []
    if not text.strip():
        result.errors.append(RowError(1, "", "The file is empty."))
        return []
    first_line = text.splitlines()[0]
    delimiter = ";" if first_line.count(";") > first_line.count(",") else ","
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delimiter)
    try:
        header = [name.strip().lower() for name in next(reader)]
    except csv.Error as error:
        result.errors.append(RowError(1, "", f"Not a readable CSV file: {error}."))
        return []
    unknown = [name for name in header if name and name not in CSV_COLUMNS]
    for name in unknown:
        result.errors.append(
            RowError(1, name, f"Unknown column; the columns are: {', '.join(CSV_COLUMNS)}.")
        )
    if "name" not in header:
        result.errors.append(RowError(1, "name", "The header has no name column."))
    if len(set(header)) != len(header):
        result.errors.append(RowError(1, "", "A column appears twice in the header."))
    if result.errors:
        return []
    rows = []
    try:
        for number, cells in enumerate(reader, start=2):
            if not any(cell.strip() for cell in cells):
                continue
            if len(cells) > len(header):
                result.errors.append(
                    RowError(number, "", f"{len(cells)} cells for {len(header)} columns.")
                )
                continue
            rows.append((number, dict(zip(header, cells, strict=False))))
            if len(rows) > MAX_IMPORT_ROWS:
                result.errors.append(
                    RowError(number, "", f"More than {MAX_IMPORT_ROWS} assets in one file.")
                )
                return []
    except csv.Error as error:
        result.errors.append(RowError(reader.line_num, "", f"Not readable as CSV: {error}."))
    return rows


def _existing(site: Site) -> tuple[dict[str, Asset], dict[str, Asset]]:
    by_tag, by_name = {}, {}
    for asset in Asset.objects.filter(site=site):
        if asset.tag:
            by_tag[asset.tag.casefold()] = asset
        by_name.setdefault(asset.name.casefold(), asset)
    return by_tag, by_name


def _model_errors(error: ValidationError) -> dict[str, str]:
    return {
        name: " ".join(messages)
        for name, messages in getattr(error, "message_dict", {"": error.messages}).items()
    }


def assets_import(*, site: Site, user: AbstractBaseUser | None, data: bytes) -> ImportResult:
    """Add or update the site's assets from a CSV file; all rows or none.

    Raises ImportRefused (its `result.errors` lists row, column and message) when any row
    is wrong; nothing is saved then.
    """
    result = ImportResult()
    rows = _read_rows(data, result)
    by_tag, by_name = _existing(site)
    seen_tags: dict[str, int] = {}
    planned: list[tuple[Asset, bool]] = []
    now = timezone.now()
    for number, row in rows:
        values, errors = _row_values(row)
        tag = values.get("tag") or ""
        if tag and "tag" not in errors:
            first = seen_tags.setdefault(tag.casefold(), number)
            if first != number:
                errors["tag"] = f"Tag {tag} is already used on row {first}."
        for column, message in errors.items():
            result.errors.append(RowError(number, column, message))
        if errors:
            continue
        asset = by_tag.get(tag.casefold()) if tag else by_name.get(values["name"].casefold())
        is_new = asset is None
        if is_new:
            asset = Asset(organization=site.organization, site=site)
        retired_on = values.pop("retired_on", "absent")
        for name, value in values.items():
            setattr(asset, name, value)
        if retired_on != "absent":
            if retired_on is None:
                asset.retired_at = None
            elif asset.retired_at is None or asset.retired_at.date() != retired_on:
                asset.retired_at = datetime.datetime.combine(
                    retired_on, datetime.time(12), tzinfo=now.tzinfo
                )
        try:
            asset.full_clean()
        except ValidationError as error:
            for column, message in _model_errors(error).items():
                result.errors.append(
                    RowError(number, column if column != "__all__" else "", message)
                )
            continue
        planned.append((asset, is_new))
    if not rows and not result.errors:
        result.errors.append(RowError(2, "", "The file has a header but no asset rows."))
    if result.errors:
        result.errors.sort(
            key=lambda e: (e.row, CSV_COLUMNS.index(e.column) if e.column in CSV_COLUMNS else -1)
        )
        raise ImportRefused(result)
    with transaction.atomic():
        for asset, is_new in planned:
            asset.save()
            if is_new:
                result.created += 1
            else:
                result.updated += 1
        audit_record(
            organization=site.organization,
            actor=user,
            action="assets_import",
            obj=site,
            detail={"created": result.created, "updated": result.updated},
        )
    return result
