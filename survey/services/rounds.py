"""Inspection rounds: which assets are due, a new visit of a site, and its round of assets.

Choices, documented once here:

- An asset's last inspection is the date of the latest live survey with a thermogram tied
  to the asset (or a finding on it). It falls due its inspection interval later (12 months
  by default: NFPA 70B, 2023 edition, asks for infrared inspection of electrical equipment
  at least every 12 months, from secondary sources; the interval is editable per asset).
  An asset never inspected is due at once. Retired assets are never due.
- Status on a day: ``overdue`` after the due date, ``due`` on it or within the next
  DUE_SOON_DAYS days (so a round can be planned), ``never`` when never inspected, else
  ``ok``.
- A new visit of a site copies from the site's latest survey what stays the same from one
  visit to the next (kind, crew, instrument, scope, conditions fields, emissivity and view
  defaults) and lists the assets due on its date in round order. A stop is visited once a
  thermogram of the survey is tied to its asset; one not visited is listed as skipped with
  the reason given.
"""

from __future__ import annotations

import calendar
import datetime
from dataclasses import dataclass
from typing import Any

from django.contrib.auth.models import AbstractBaseUser
from django.core.exceptions import ValidationError
from django.db import transaction
from django.db.models import Max, QuerySet

from survey.models import (
    Asset,
    Conditions,
    Finding,
    Organization,
    RoundStop,
    Site,
    Survey,
    Thermogram,
)
from survey.services.audit import audit_record
from survey.services.locks import thermogram_check_unlocked
from survey.services.surveys import CONDITIONS_FIELDS, check_same_org, survey_create

DUE_SOON_DAYS = 30
# What a new visit copies from the last one (the date, title and notes are the visit's own).
COPIED_SURVEY_FIELDS = (
    "kind",
    "crew",
    "thermographer",
    "reviewer",
    "camera",
    "instrument",
    "ifov_mrad",
    "camera_accuracy_c",
    "camera_accuracy_pct",
    "scope_examined",
    "scope_not_examined",
    "default_emissivity",
    "default_reflected_c",
    "default_palette",
    "default_span_rule",
    "time_zone",
)
STATUS_LABELS = {
    "overdue": "Overdue",
    "due": "Due",
    "never": "Never inspected",
    "ok": "Not due",
    "retired": "Retired",
}


def add_months(day: datetime.date, months: int) -> datetime.date:
    """`day` moved by whole calendar months, kept inside the month (31 Jan + 1 → 28/29 Feb).

    Examples
    --------
    >>> add_months(datetime.date(2025, 3, 14), 12)
    datetime.date(2026, 3, 14)
    >>> add_months(datetime.date(2024, 1, 31), 1)
    datetime.date(2024, 2, 29)
    """
    index = day.year * 12 + (day.month - 1) + months
    year, month = divmod(index, 12)
    last = calendar.monthrange(year, month + 1)[1]
    return datetime.date(year, month + 1, min(day.day, last))


@dataclass
class DueState:
    asset: Asset
    last_inspected: datetime.date | None
    due_on: datetime.date | None
    status: str

    @property
    def status_label(self) -> str:
        return STATUS_LABELS[self.status]

    @property
    def is_due(self) -> bool:
        return self.status in {"overdue", "due", "never"}


def due_state(asset: Asset, last_inspected: datetime.date | None, today: datetime.date) -> DueState:
    if asset.retired_at is not None:
        return DueState(asset, last_inspected, None, "retired")
    if last_inspected is None:
        return DueState(asset, None, None, "never")
    due_on = add_months(last_inspected, asset.inspection_interval_months)
    if due_on < today:
        status = "overdue"
    elif due_on <= today + datetime.timedelta(days=DUE_SOON_DAYS):
        status = "due"
    else:
        status = "ok"
    return DueState(asset, last_inspected, due_on, status)


def last_inspections(
    assets: QuerySet[Asset], before: datetime.date | None = None
) -> dict[int, datetime.date]:
    """Latest live survey date per asset with a thermogram of (or a finding on) it."""
    lookup = {"asset__in": assets, "survey__status": Survey.Status.ACTIVE}
    if before is not None:
        lookup["survey__date__lt"] = before
    latest: dict[int, datetime.date] = {}
    for model in (Thermogram, Finding):
        rows = model.objects.filter(**lookup).values("asset").annotate(last=Max("survey__date"))
        for row in rows:
            if row["asset"] not in latest or row["last"] > latest[row["asset"]]:
                latest[row["asset"]] = row["last"]
    return latest


def register_states(
    assets: QuerySet[Asset], today: datetime.date, *, before: datetime.date | None = None
) -> list[DueState]:
    """The due state of every asset given, in the order given."""
    last = last_inspections(assets, before=before)
    return [due_state(asset, last.get(asset.pk), today) for asset in assets]


def _due_order(state: DueState) -> tuple:
    rank = {"overdue": 0, "never": 1, "due": 2}[state.status]
    return (rank, state.due_on or datetime.date.min, state.asset.round_order, state.asset.name)


def assets_due(
    *,
    organization: Organization | None = None,
    site: Site | None = None,
    today: datetime.date,
) -> list[DueState]:
    """Assets overdue, never inspected or due within DUE_SOON_DAYS, most urgent first."""
    assets = Asset.objects.filter(retired_at__isnull=True, site__deleted_at__isnull=True)
    if site is not None:
        assets = assets.filter(site=site)
    if organization is not None:
        assets = assets.filter(organization=organization)
    assets = assets.select_related("site__client")
    return sorted((s for s in register_states(assets, today) if s.is_due), key=_due_order)


# --- a new visit ------------------------------------------------------------------------------


def last_survey(site: Site) -> Survey | None:
    return (
        Survey.objects.filter(site=site, status=Survey.Status.ACTIVE)
        .select_related("conditions")
        .order_by("-date", "-id")
        .first()
    )


def visit_defaults(site: Site) -> tuple[dict[str, Any], dict[str, Any], Survey | None]:
    """(survey fields, conditions fields, the survey they come from) for a new visit."""
    previous = last_survey(site)
    if previous is None:
        return {}, {}, None
    fields = {name: getattr(previous, name) for name in COPIED_SURVEY_FIELDS}
    conditions = {}
    try:
        source = previous.conditions
    except Conditions.DoesNotExist:
        source = None
    if source is not None:
        conditions = {name: getattr(source, name) for name in CONDITIONS_FIELDS if name != "notes"}
    return fields, conditions, previous


def _round_assets(site: Site, date: datetime.date) -> list[DueState]:
    """Assets of the site due on `date` (inspections before it count), in round order."""
    assets = Asset.objects.filter(site=site, retired_at__isnull=True).order_by(
        "round_order", "name", "id"
    )
    return [state for state in register_states(assets, date, before=date) if state.is_due]


@transaction.atomic
def round_start(
    *,
    organization: Organization,
    site: Site,
    user: AbstractBaseUser | None,
    date: datetime.date,
    conditions: dict[str, Any] | None = None,
    **fields: Any,
) -> Survey:
    """Create a survey of `site` with the assets due on its date listed as its round."""
    check_same_org(organization, site=site)
    fields.pop("site", None)
    survey = survey_create(
        organization=organization,
        user=user,
        site=site,
        date=date,
        conditions=conditions,
        **fields,
    )
    stops = [
        RoundStop(survey=survey, asset=state.asset, position=position, due_on=state.due_on)
        for position, state in enumerate(_round_assets(site, date), start=1)
    ]
    for stop in stops:
        stop.full_clean()
    RoundStop.objects.bulk_create(stops)
    audit_record(
        organization=organization,
        actor=user,
        action="round_start",
        obj=survey,
        detail={"assets_due": len(stops)},
    )
    return survey


@dataclass
class StopState:
    stop: RoundStop
    thermograms: list[Thermogram]

    @property
    def status(self) -> str:
        if self.thermograms:
            return "visited"
        return "skipped" if self.stop.skip_reason else "pending"


def round_progress(survey: Survey) -> list[StopState]:
    """The survey's round in order: each stop with the thermograms tied to its asset."""
    stops = list(survey.round_stops.select_related("asset").order_by("position", "id"))
    tied: dict[int, list[Thermogram]] = {}
    for thermogram in survey.thermograms.filter(asset__isnull=False).order_by("sequence", "id"):
        tied.setdefault(thermogram.asset_id, []).append(thermogram)
    return [StopState(stop, tied.get(stop.asset_id, [])) for stop in stops]


@transaction.atomic
def round_stop_skip(*, stop: RoundStop, user: AbstractBaseUser | None, reason: str) -> RoundStop:
    """Say why an asset of the round was not visited (an empty reason takes it back)."""
    reason = reason.strip()
    if len(reason) > 300:
        raise ValidationError({"reason": "Keep the reason under 300 characters."})
    stop.skip_reason = reason
    stop.full_clean()
    stop.save(update_fields=["skip_reason"])
    audit_record(
        organization=stop.survey.organization,
        actor=user,
        action="round_skip" if reason else "round_unskip",
        obj=stop,
        detail={"asset": stop.asset_id, "reason": reason},
    )
    return stop


# --- tying thermograms to assets ----------------------------------------------------------------


def suggested_ties(survey: Survey) -> dict[int, int]:
    """{thermogram id: asset id}: untied thermograms in upload order, paired with the
    round's assets still waiting, in round order (a crew shoots its round in order)."""
    waiting = [s.stop.asset_id for s in round_progress(survey) if s.status == "pending"]
    untied = survey.thermograms.filter(asset__isnull=True).order_by("sequence", "id")
    return {t.pk: asset_id for t, asset_id in zip(untied, waiting, strict=False)}


@transaction.atomic
def thermograms_tie_assets(
    *, survey: Survey, user: AbstractBaseUser | None, ties: dict[Thermogram, Asset | None]
) -> int:
    """Tie each thermogram to its asset (None unties) in one step; returns how many changed."""
    changed = []
    for thermogram, asset in ties.items():
        if thermogram.survey_id != survey.pk:
            raise ValidationError(f"{thermogram} is not a thermogram of this survey.")
        if asset is not None:
            check_same_org(survey.organization, asset=asset)
            if asset.site_id != survey.site_id:
                raise ValidationError(f"{asset} is not an asset of {survey.site}.")
        if thermogram.asset_id == (asset.pk if asset else None):
            continue
        thermogram_check_unlocked(thermogram)
        thermogram.asset = asset
        thermogram.save(update_fields=["asset"])
        changed.append([thermogram.pk, asset.pk if asset else None])
    if changed:
        audit_record(
            organization=survey.organization,
            actor=user,
            action="tie_assets",
            obj=survey,
            detail={"ties": changed},
        )
    return len(changed)
