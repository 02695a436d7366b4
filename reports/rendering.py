"""The worker's side of a report: claim a queued version, render its PDF, store it once.

Called by reports.tasks.render_report. A claim is a conditional update, so a repeated or
duplicated task is harmless; an issued version never matches the claim again, so its file
is never rewritten.
"""

import datetime
import hashlib
import logging
import secrets

from django.conf import settings
from django.core.files.base import ContentFile
from django.db.models import F, Q
from django.utils import timezone

from reports.document import render_pdf
from reports.models import ReportVersion
from survey.services import heartbeat

logger = logging.getLogger(__name__)


def _progress(version_id: int):
    last = {"pct": -1}

    def tell(stage: str, pct: int) -> None:
        if pct - last["pct"] < 3 and pct < 100:
            return
        last["pct"] = pct
        ReportVersion.objects.filter(pk=version_id, status=ReportVersion.Status.RENDERING).update(
            stage=stage[:100], progress_pct=min(pct, 100), heartbeat_at=timezone.now()
        )

    return tell


def render_stalled_after() -> datetime.timedelta:
    """A render silent this long has lost its worker (REPORT_STALLED_AFTER_SECONDS)."""
    return datetime.timedelta(seconds=settings.REPORT_STALLED_AFTER_SECONDS)


def report_render_is_held(version_id: int) -> bool:
    """True while another delivery of this render may still be running."""
    return ReportVersion.objects.filter(
        pk=version_id, status=ReportVersion.Status.RENDERING, sha256=""
    ).exists()


def stalled_renders():
    """Renders whose worker has been silent for the stall time: it was lost."""
    stale = timezone.now() - render_stalled_after()
    return ReportVersion.objects.filter(
        Q(heartbeat_at__lt=stale) | Q(heartbeat_at__isnull=True),
        status=ReportVersion.Status.RENDERING,
        sha256="",
    )


def version_is_stalled(version: ReportVersion) -> bool:
    return (
        version.status == ReportVersion.Status.RENDERING
        and not version.sha256
        and (
            version.heartbeat_at is None
            or version.heartbeat_at < timezone.now() - render_stalled_after()
        )
    )


LOST_TOO_OFTEN = (
    "The render was interrupted several times (its worker stopped, for example when it ran "
    "out of memory). Try again, or tell your administrator."
)
FAILED_MESSAGE = (
    "The PDF could not be made because of an unexpected error; it has been logged for your "
    "administrator. Try again later."
)


def report_render(version_id: int, *, keep_alive: bool = False) -> bool:
    """Render a queued version; returns False when there was nothing to do.

    Claimed with a conditional update, so a repeated or duplicated task is harmless. An
    issued version never matches the claim again, so its file is never rewritten. With
    `keep_alive` (a real worker) a thread refreshes the heartbeat while it renders.
    """
    stale = timezone.now() - render_stalled_after()
    claimed = ReportVersion.objects.filter(
        Q(status=ReportVersion.Status.QUEUED)
        | Q(status=ReportVersion.Status.RENDERING, heartbeat_at__lt=stale),
        pk=version_id,
        sha256="",
    ).update(
        status=ReportVersion.Status.RENDERING,
        stage="Starting",
        progress_pct=1,
        heartbeat_at=timezone.now(),
        attempts=F("attempts") + 1,
        waiting_for_broker=False,
    )
    if not claimed:
        return False
    version = ReportVersion.objects.select_related("report__survey", "issued_by").get(pk=version_id)
    logger.info(
        "Rendering report version %s",
        version_id,
        extra={"organization_id": version.report.organization_id, "version_id": version_id},
    )
    if version.attempts > settings.TASK_MAX_ATTEMPTS:
        _fail(version_id, LOST_TOO_OFTEN)
        return False
    with heartbeat.keep_alive(
        ReportVersion, version_id, ReportVersion.Status.RENDERING, enabled=keep_alive
    ):
        try:
            rendered = render_pdf(version, progress=_progress(version_id))
        except Exception:  # noqa: BLE001 - any failure is recorded for the user to see
            logger.exception("Report version %s failed to render", version_id)
            _fail(version_id, FAILED_MESSAGE)
            return False
        return _store_pdf(version, rendered)


def _fail(version_id: int, message: str) -> None:
    ReportVersion.objects.filter(pk=version_id, status=ReportVersion.Status.RENDERING).update(
        status=ReportVersion.Status.FAILED,
        stage="Failed",
        error=message,
        finished_at=timezone.now(),
    )


def _store_pdf(version: ReportVersion, rendered) -> bool:
    report = version.report
    kind = "draft" if version.is_draft else "v"
    name = f"{report.number}-{kind}{version.version}-{secrets.token_hex(4)}.pdf"
    stored = version.pdf.storage.save(
        version.pdf.field.generate_filename(version, name), ContentFile(rendered.pdf)
    )
    now = timezone.now()
    final = not version.is_draft
    written = ReportVersion.objects.filter(
        pk=version.pk, status=ReportVersion.Status.RENDERING, sha256=""
    ).update(
        pdf=stored,
        sha256=hashlib.sha256(rendered.pdf).hexdigest(),
        content_sha256=rendered.content_sha256,
        page_count=rendered.page_count,
        notes=rendered.notes,
        status=ReportVersion.Status.ISSUED if final else ReportVersion.Status.READY,
        stage="Done",
        progress_pct=100,
        finished_at=now,
        issued_at=now if final else None,
    )
    if not written:
        version.pdf.storage.delete(stored)
        return False
    return True
