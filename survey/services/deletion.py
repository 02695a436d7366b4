"""Recoverable deletes of clients, sites, assets, thermograms and findings, and restores.

Deleting sets `deleted_at`: the row disappears from every list and page (the models' default
manager skips it) and can be restored until `manage.py purge_deleted` removes it for good
after the retention period, like a deleted survey. What goes with a row is deleted at the
same instant and comes back with it: a client takes its sites, a site its assets, a
thermogram its findings. A client or site with a live survey is not deleted (the survey
would lose its place); a thermogram shown in an issued report is kept exactly as it is.
"""

from __future__ import annotations

import datetime
import logging

from django.contrib.auth.models import AbstractBaseUser
from django.core.exceptions import ValidationError
from django.db import transaction
from django.db.models import Model
from django.utils import timezone

from survey.dependents import thermogram_hold
from survey.models import Asset, Client, Finding, Organization, Site, Survey, Thermogram
from survey.services.audit import audit_record
from survey.services.locks import thermogram_check_unlocked

logger = logging.getLogger(__name__)

KINDS: dict[str, type[Model]] = {
    "client": Client,
    "site": Site,
    "asset": Asset,
    "thermogram": Thermogram,
    "finding": Finding,
}


def _mark_deleted(queryset, when: datetime.datetime) -> int:
    return queryset.update(deleted_at=when)


def _record(obj, action: str, user, **detail) -> None:
    audit_record(
        organization=obj.organization, actor=user, action=action, obj=obj, detail=detail or None
    )


def _live_surveys(**lookup) -> int:
    return Survey.objects.filter(status=Survey.Status.ACTIVE, **lookup).count()


# --- clients and sites ------------------------------------------------------------------------


@transaction.atomic
def client_delete(*, client: Client, user: AbstractBaseUser | None) -> Client:
    """Delete a client with its sites and their assets; refused while it has live surveys."""
    surveys = _live_surveys(site__client=client)
    if surveys:
        raise ValidationError(
            f"{client} has {surveys} survey(s) at its sites: delete or move them first."
        )
    when = timezone.now()
    sites = Site.objects.filter(client=client)
    assets = _mark_deleted(Asset.objects.filter(site__in=sites), when)
    site_count = _mark_deleted(sites, when)
    client.deleted_at = when
    client.save(update_fields=["deleted_at"])
    _record(client, "delete", user, sites=site_count, assets=assets)
    return client


@transaction.atomic
def client_restore(*, client: Client, user: AbstractBaseUser | None) -> Client:
    """Bring a client back with the sites and assets deleted with it."""
    when = client.deleted_at
    if when is None:
        return client
    sites = Site.all_objects.filter(client=client, deleted_at=when)
    Asset.all_objects.filter(site__in=sites, deleted_at=when).update(deleted_at=None)
    sites.update(deleted_at=None)
    client.deleted_at = None
    client.save(update_fields=["deleted_at"])
    _record(client, "restore", user)
    return client


@transaction.atomic
def site_delete(*, site: Site, user: AbstractBaseUser | None) -> Site:
    """Delete a site with its assets; refused while it has live surveys."""
    surveys = _live_surveys(site=site)
    if surveys:
        raise ValidationError(f"{site} has {surveys} survey(s): delete or move them first.")
    when = timezone.now()
    assets = _mark_deleted(Asset.objects.filter(site=site), when)
    site.deleted_at = when
    site.save(update_fields=["deleted_at"])
    _record(site, "delete", user, assets=assets)
    return site


@transaction.atomic
def site_restore(*, site: Site, user: AbstractBaseUser | None) -> Site:
    """Bring a site back with the assets deleted with it (and its client, if deleted)."""
    client = Client.all_objects.get(pk=site.client_id)
    if client.deleted_at is not None:
        client.deleted_at = None
        client.save(update_fields=["deleted_at"])
        _record(client, "restore", user, with_site=site.pk)
    when = site.deleted_at
    if when is not None:
        Asset.all_objects.filter(site=site, deleted_at=when).update(deleted_at=None)
        site.deleted_at = None
        site.save(update_fields=["deleted_at"])
        _record(site, "restore", user)
    return site


# --- assets, thermograms, findings --------------------------------------------------------------


@transaction.atomic
def asset_delete(*, asset: Asset, user: AbstractBaseUser | None) -> Asset:
    """Delete an asset entered by mistake; its thermograms and findings keep their link."""
    asset.deleted_at = timezone.now()
    asset.save(update_fields=["deleted_at"])
    _record(asset, "delete", user)
    return asset


@transaction.atomic
def asset_restore(*, asset: Asset, user: AbstractBaseUser | None) -> Asset:
    site = Site.all_objects.get(pk=asset.site_id)
    if site.deleted_at is not None:
        site_restore(site=site, user=user)
    asset.deleted_at = None
    asset.save(update_fields=["deleted_at"])
    _record(asset, "restore", user)
    return asset


@transaction.atomic
def thermogram_delete(*, thermogram: Thermogram, user: AbstractBaseUser | None) -> Thermogram:
    """Delete an upload made by mistake, with its findings; refused once a report shows it."""
    thermogram_check_unlocked(thermogram)
    when = timezone.now()
    findings = _mark_deleted(Finding.objects.filter(thermogram=thermogram), when)
    thermogram.deleted_at = when
    thermogram.save(update_fields=["deleted_at"])
    _record(thermogram, "delete", user, name=thermogram.original_name, findings=findings)
    return thermogram


@transaction.atomic
def thermogram_restore(*, thermogram: Thermogram, user: AbstractBaseUser | None) -> Thermogram:
    """Bring a thermogram back with the findings deleted with it."""
    twin = Thermogram.objects.filter(
        survey_id=thermogram.survey_id, original_sha256=thermogram.original_sha256
    ).first()
    if twin is not None:
        raise ValidationError(
            f"The survey holds the same file again as {twin.original_name}: delete that one "
            "first, or keep it."
        )
    when = thermogram.deleted_at
    if when is not None:
        Finding.all_objects.filter(thermogram=thermogram, deleted_at=when).update(deleted_at=None)
    thermogram.deleted_at = None
    thermogram.save(update_fields=["deleted_at"])
    _record(thermogram, "restore", user, name=thermogram.original_name)
    if thermogram.status == Thermogram.Status.QUEUED:
        # Deleted before a worker took it: the worker skipped it, so queue it again.
        transaction.on_commit(lambda: _publish_processing(thermogram.pk))
    return thermogram


def _publish_processing(thermogram_id: int) -> None:
    from survey.tasks import process_thermogram

    try:
        process_thermogram.apply_async(args=[thermogram_id], retry=False)
    except Exception as error:  # kombu/redis raise several connection error types
        logger.warning(
            "Could not queue thermogram %s (%s); requeue_thermograms will.", thermogram_id, error
        )


@transaction.atomic
def finding_delete(*, finding: Finding, user: AbstractBaseUser | None) -> Finding:
    finding.deleted_at = timezone.now()
    finding.save(update_fields=["deleted_at"])
    _record(finding, "delete", user, category=finding.category)
    return finding


@transaction.atomic
def finding_restore(*, finding: Finding, user: AbstractBaseUser | None) -> Finding:
    if finding.thermogram_id is not None:
        thermogram = Thermogram.all_objects.get(pk=finding.thermogram_id)
        if thermogram.deleted_at is not None:
            raise ValidationError(
                f"Its thermogram {thermogram} is deleted: restore the thermogram instead."
            )
    finding.deleted_at = None
    finding.save(update_fields=["deleted_at"])
    _record(finding, "restore", user, category=finding.category)
    return finding


RESTORERS = {
    "client": client_restore,
    "site": site_restore,
    "asset": asset_restore,
    "thermogram": thermogram_restore,
    "finding": finding_restore,
}


def item_restore(*, kind: str, item: Model, user: AbstractBaseUser | None) -> Model:
    """Restore a deleted row of `kind` (one of KINDS)."""
    return RESTORERS[kind](**{kind: item, "user": user})


def deleted_items(organization: Organization) -> dict[str, list]:
    """Every deleted client, site, asset, thermogram and finding of live surveys, newest first.

    Rows deleted together with another (a site's assets with the site) are listed under the
    one that was deleted: restoring that brings them back.
    """
    sites = Site.all_objects.filter(organization=organization, deleted_at__isnull=False)
    clients = Client.all_objects.filter(organization=organization, deleted_at__isnull=False)
    items = {
        "client": list(clients.order_by("-deleted_at")),
        "site": [
            site
            for site in sites.select_related("client").order_by("-deleted_at")
            if site.client.deleted_at != site.deleted_at
        ],
        "asset": [
            asset
            for asset in Asset.all_objects.filter(
                organization=organization, deleted_at__isnull=False
            )
            .select_related("site")
            .order_by("-deleted_at")
            if asset.site.deleted_at != asset.deleted_at
        ],
        "thermogram": list(
            Thermogram.all_objects.filter(
                organization=organization,
                deleted_at__isnull=False,
                survey__status=Survey.Status.ACTIVE,
            )
            .select_related("survey")
            .order_by("-deleted_at")
        ),
    }
    findings = Finding.all_objects.filter(
        organization=organization, deleted_at__isnull=False, survey__status=Survey.Status.ACTIVE
    ).select_related("survey", "thermogram")
    items["finding"] = [
        finding
        for finding in findings.order_by("-deleted_at")
        if finding.thermogram is None or finding.thermogram.deleted_at != finding.deleted_at
    ]
    return items


# --- purge after the retention period ---------------------------------------------------------


def items_purge(*, days: int, dry_run: bool = False) -> dict[str, int]:
    """Remove for good what was deleted more than `days` days ago; counts per kind.

    Files of purged thermograms are removed once the rows are gone. A site or client that
    still has surveys (or sites) is kept until those go.
    """
    from survey.services.retention import THERMOGRAM_FILES, remove_files_on_commit

    if days < 0:
        raise ValueError("days must be zero or more")
    cutoff = timezone.now() - datetime.timedelta(days=days)
    counts = {}
    with transaction.atomic():
        findings = Finding.all_objects.filter(deleted_at__lt=cutoff)
        counts["finding"] = findings.count()
        thermograms = list(Thermogram.all_objects.filter(deleted_at__lt=cutoff))
        thermograms = [t for t in thermograms if not thermogram_hold(t)]
        counts["thermogram"] = len(thermograms)
        assets = Asset.all_objects.filter(deleted_at__lt=cutoff)
        counts["asset"] = assets.count()
        sites = Site.all_objects.filter(deleted_at__lt=cutoff, surveys__isnull=True)
        clients = Client.all_objects.filter(deleted_at__lt=cutoff)
        if dry_run:
            counts["site"] = sites.distinct().count()
            counts["client"] = clients.count()
            return counts
        for finding in findings:
            _record(finding, "purge", None)
        findings.delete()
        paths = []
        for thermogram in thermograms:
            paths += [getattr(thermogram, name).name for name in THERMOGRAM_FILES]
            _record(thermogram, "purge", None, name=thermogram.original_name)
            thermogram.delete()
        for asset in assets:
            _record(asset, "purge", None, name=asset.name)
        assets.delete()
        counts["site"] = 0
        for site in sites.distinct():
            if not Asset.all_objects.filter(site=site).exists():
                _record(site, "purge", None, name=site.name)
                site.delete()
                counts["site"] += 1
        counts["client"] = 0
        for client in clients:
            if not Site.all_objects.filter(client=client).exists():
                _record(client, "purge", None, name=client.name)
                client.delete()
                counts["client"] += 1
        remove_files_on_commit([path for path in paths if path])
    return counts
