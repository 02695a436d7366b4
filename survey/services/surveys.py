"""Writes of the survey domain's records: clients, sites, assets, surveys and conditions,
and the settings of a thermogram.

Uploads are in survey/services/ingest.py, the worker's decoding in
survey/services/processing.py.
"""

import datetime
from typing import Any

from django.contrib.auth.models import AbstractBaseUser
from django.core.exceptions import ValidationError
from django.db import transaction
from django.utils import timezone

from survey import thermal
from survey.dependents import survey_hold
from survey.models import (
    Asset,
    Client,
    Conditions,
    Organization,
    Site,
    SpanRule,
    Survey,
    Thermogram,
)
from survey.services.arrays import thermogram_temperatures
from survey.services.audit import audit_record
from survey.services.locks import thermogram_check_unlocked
from survey.services.loggers import local_to_aware
from survey.services.processing import write_images

SURVEY_FIELDS = (
    "site",
    "kind",
    "title",
    "date",
    "crew",
    "thermographer",
    "reviewer",
    "instrument",
    "camera",
    "start_time",
    "end_time",
    "ifov_mrad",
    "camera_accuracy_c",
    "camera_accuracy_pct",
    "scope_examined",
    "scope_not_examined",
    "deviations",
    "notes",
    "building_description",
    "roof_membrane",
    "roof_insulation",
    "time_zone",
    "default_emissivity",
    "default_reflected_c",
    "default_palette",
    "default_span_rule",
)


CONDITIONS_FIELDS = tuple(f.name for f in Conditions._meta.concrete_fields if f.name != "survey")


THERMOGRAM_SETTINGS = (
    "emissivity",
    "reflected_c",
    "distance_m",
    "palette",
    "span_low_c",
    "span_high_c",
    "span_rule",
    "asset",
    "title",
    "note",
    "captured_at",
    "emissivity_method",
    "reflected_method",
    "load_l1_a",
    "load_l2_a",
    "load_l3_a",
    "load_method",
)


# --- clients, sites, assets ---------------------------------------------------------------


def client_create(
    *, organization: Organization, user: AbstractBaseUser | None, name: str, **fields: Any
) -> Client:
    client = Client(organization=organization, name=name, **fields)
    client.full_clean()
    client.save()
    audit_record(organization=organization, actor=user, action="create", obj=client)
    return client


def site_create(
    *, client: Client, user: AbstractBaseUser | None, name: str, address: str = ""
) -> Site:
    site = Site(organization=client.organization, client=client, name=name, address=address)
    site.full_clean()
    site.save()
    audit_record(organization=client.organization, actor=user, action="create", obj=site)
    return site


def client_update(*, client: Client, user: AbstractBaseUser | None, **changes: Any) -> Client:
    unknown = set(changes) - {"name", "contact_name", "email", "address"}
    if unknown:
        raise TypeError(f"client_update() got unknown fields: {sorted(unknown)}")
    apply_changes(client, changes, user=user)
    return client


def site_update(*, site: Site, user: AbstractBaseUser | None, **changes: Any) -> Site:
    """Rename a site, change its address, or move it to another client of the organization."""
    unknown = set(changes) - {"name", "address", "client"}
    if unknown:
        raise TypeError(f"site_update() got unknown fields: {sorted(unknown)}")
    check_same_org(site.organization, client=changes.get("client"))
    apply_changes(site, changes, user=user)
    return site


def asset_create(*, site: Site, user: AbstractBaseUser | None, name: str, **fields: Any) -> Asset:
    if fields.get("rating") is not None and not fields.get("rating_unit"):
        raise ValidationError({"rating_unit": "Say whether the rating is in A or kW."})
    asset = Asset(organization=site.organization, site=site, name=name, **fields)
    asset.full_clean()
    asset.save()
    audit_record(organization=site.organization, actor=user, action="create", obj=asset)
    return asset


# --- surveys --------------------------------------------------------------------------------


def check_same_org(organization: Organization, **rows: Any) -> None:
    for name, row in rows.items():
        if row is not None and row.organization_id != organization.pk:
            raise ValidationError({name: "Choose one of your organization's records."})


def _check_palette(name: str, palette: str | None) -> None:
    if palette and palette not in thermal.PALETTES:
        raise ValidationError({name: f"Unknown palette {palette!r}."})


@transaction.atomic
def survey_create(
    *,
    organization: Organization,
    user: AbstractBaseUser | None,
    site: Site,
    kind: str,
    date: datetime.date,
    conditions: dict[str, Any] | None = None,
    **fields: Any,
) -> Survey:
    """Create a survey and its Conditions row (empty fields where nothing was recorded)."""
    unknown = set(fields) - set(SURVEY_FIELDS)
    if unknown:
        raise TypeError(f"survey_create() got unknown fields: {sorted(unknown)}")
    check_same_org(
        organization,
        site=site,
        thermographer=fields.get("thermographer"),
        reviewer=fields.get("reviewer"),
        camera=fields.get("camera"),
    )
    _camera_accuracy(fields)
    _check_palette("default_palette", fields.get("default_palette"))
    survey = Survey(
        organization=organization, site=site, kind=kind, date=date, created_by=user, **fields
    )
    survey.full_clean()
    survey.save()
    _conditions_save(Conditions(survey=survey), conditions or {})
    audit_record(organization=organization, actor=user, action="create", obj=survey)
    return survey


@transaction.atomic
def survey_update(
    *,
    survey: Survey,
    user: AbstractBaseUser | None,
    conditions: dict[str, Any] | None = None,
    **changes: Any,
) -> Survey:
    """Change a survey, and its conditions when given, in one transaction."""
    unknown = set(changes) - set(SURVEY_FIELDS)
    if unknown:
        raise TypeError(f"survey_update() got unknown fields: {sorted(unknown)}")
    check_same_org(
        survey.organization,
        site=changes.get("site"),
        thermographer=changes.get("thermographer"),
        reviewer=changes.get("reviewer"),
        camera=changes.get("camera"),
    )
    _camera_accuracy(changes)
    _check_palette("default_palette", changes.get("default_palette"))
    apply_changes(survey, changes, user=user)
    if conditions is not None:
        conditions_update(survey=survey, user=user, **conditions)
    return survey


def _camera_accuracy(fields: dict[str, Any]) -> None:
    """A survey with a camera record takes its stated accuracy from it."""
    camera = fields.get("camera")
    if camera is not None:
        fields["camera_accuracy_c"] = camera.accuracy_c
        fields["camera_accuracy_pct"] = camera.accuracy_pct


def apply_changes(instance, changes: dict[str, Any], *, user: AbstractBaseUser | None) -> None:
    """Set the changed fields, validate, save and write the audit line of an update."""
    for name, value in changes.items():
        setattr(instance, name, value)
    instance.full_clean()
    instance.save()
    audit_record(
        organization=instance.organization,
        actor=user,
        action="update",
        obj=instance,
        detail={"fields": sorted(changes)},
    )


def _conditions_save(conditions: Conditions, values: dict[str, Any]) -> Conditions:
    unknown = set(values) - set(CONDITIONS_FIELDS)
    if unknown:
        raise TypeError(f"unknown conditions fields: {sorted(unknown)}")
    for name, value in values.items():
        setattr(conditions, name, value)
    conditions.full_clean()
    conditions.save()
    return conditions


@transaction.atomic
def conditions_update(
    *, survey: Survey, user: AbstractBaseUser | None, **values: Any
) -> Conditions:
    conditions, _ = Conditions.objects.get_or_create(survey=survey)
    _conditions_save(conditions, values)
    audit_record(
        organization=survey.organization,
        actor=user,
        action="update",
        obj=conditions,
        detail={"fields": sorted(values)},
    )
    return conditions


@transaction.atomic
def survey_soft_delete(*, survey: Survey, user: AbstractBaseUser | None) -> Survey:
    """Hide a survey (recoverable); refused while an app keeps it (an issued report)."""
    reason = survey_hold(survey)
    if reason:
        raise ValidationError(f"{reason} It cannot be deleted.")
    survey.status = Survey.Status.DELETED
    survey.deleted_at = timezone.now()
    survey.save(update_fields=["status", "deleted_at", "updated_at"])
    audit_record(organization=survey.organization, actor=user, action="delete", obj=survey)
    return survey


@transaction.atomic
def survey_restore(*, survey: Survey, user: AbstractBaseUser | None) -> Survey:
    """Bring a survey back; its site (and client) come back too if they were deleted since."""
    site = Site.all_objects.get(pk=survey.site_id)
    if site.deleted_at is not None or Client.all_objects.get(pk=site.client_id).deleted_at:
        from survey.services.deletion import site_restore

        site_restore(site=site, user=user)
    survey.status = Survey.Status.ACTIVE
    survey.deleted_at = None
    survey.save(update_fields=["status", "deleted_at", "updated_at"])
    audit_record(organization=survey.organization, actor=user, action="restore", obj=survey)
    return survey


# --- thermogram settings ----------------------------------------------------------------------


@transaction.atomic
def thermogram_update_settings(
    *, thermogram: Thermogram, user: AbstractBaseUser | None, **changes: Any
) -> Thermogram:
    """Change capture and display settings; the preview is re-rendered when it changes."""
    unknown = set(changes) - set(THERMOGRAM_SETTINGS)
    if unknown:
        raise TypeError(f"thermogram_update_settings() got unknown fields: {sorted(unknown)}")
    check_same_org(thermogram.organization, asset=changes.get("asset"))
    if changes.get("captured_at") is not None:
        changes["captured_at"] = local_to_aware(thermogram.survey, changes["captured_at"])
    thermogram_check_unlocked(thermogram)
    low = changes.get("span_low_c", thermogram.span_low_c)
    high = changes.get("span_high_c", thermogram.span_high_c)
    if (low is None) != (high is None):
        raise ValidationError("Give both ends of the span, or neither for an automatic span.")
    if low is not None and not low < high:
        raise ValidationError("The top of the span must be warmer than the bottom.")
    if "palette" in changes:
        if changes["palette"] not in thermal.PALETTES:
            raise ValidationError({"palette": f"Unknown palette {changes['palette']!r}."})
    display_changed = any(
        changes.get(name, getattr(thermogram, name)) != getattr(thermogram, name)
        for name in ("palette", "span_low_c", "span_high_c", "span_rule")
    )
    apply_changes(thermogram, changes, user=user)
    if display_changed and thermogram.is_ready:
        write_images(thermogram, thermogram_temperatures(thermogram))
        thermogram.save(update_fields=["preview", "thumbnail"])
    return thermogram


# --- survey-wide view defaults -------------------------------------------------------------------


@transaction.atomic
def survey_set_view_defaults(
    *,
    survey: Survey,
    user: AbstractBaseUser | None,
    palette: str,
    span_rule: str,
    apply_to_all: bool = False,
) -> dict[str, Any]:
    """Set how the survey's new thermograms are shown; with `apply_to_all`, show every
    thermogram so now (its own fixed span cleared) and redraw the previews.

    Returns ``applied`` (how many thermograms changed) and ``kept`` (those an issued report
    holds, left as they are).
    """
    from survey.services.display import previews_enqueue

    _check_palette("palette", palette)
    if span_rule not in SpanRule.values:
        raise ValidationError({"span_rule": "Choose how the span is set."})
    survey.default_palette = palette
    survey.default_span_rule = span_rule
    survey.full_clean()
    survey.save(update_fields=["default_palette", "default_span_rule", "updated_at"])
    applied, kept = 0, []
    if apply_to_all:
        for thermogram in survey.thermograms.all():
            try:
                thermogram_check_unlocked(thermogram)
            except ValidationError:
                kept.append(str(thermogram))
                continue
            thermogram.palette = palette or thermogram.palette
            thermogram.span_rule = span_rule
            thermogram.span_low_c = thermogram.span_high_c = None
            thermogram.save(update_fields=["palette", "span_rule", "span_low_c", "span_high_c"])
            if thermogram.is_ready:
                previews_enqueue(thermogram.pk)
            applied += 1
    audit_record(
        organization=survey.organization,
        actor=user,
        action="view_defaults",
        obj=survey,
        detail={"palette": palette, "span_rule": span_rule, "applied": applied, "kept": kept},
    )
    return {"applied": applied, "kept": kept}
