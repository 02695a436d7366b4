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
from django.db.models import Q
from django.utils import timezone

from reports.document import render_pdf
from reports.models import ReportVersion

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


def report_render(version_id: int) -> bool:
    """Render a queued version; returns False when there was nothing to do.

    Claimed with a conditional update, so a repeated or duplicated task is harmless. An
    issued version never matches the claim again, so its file is never rewritten.
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
    )
    if not claimed:
        return False
    version = ReportVersion.objects.select_related("report__survey", "issued_by").get(pk=version_id)
    logger.info(
        "Rendering report version %s",
        version_id,
        extra={"organization_id": version.report.organization_id, "version_id": version_id},
    )
    try:
        rendered = render_pdf(version, progress=_progress(version_id))
    except Exception as exc:  # noqa: BLE001 - any failure is recorded for the user to see
        logger.exception("Report version %s failed to render", version_id)
        ReportVersion.objects.filter(pk=version_id).update(
            status=ReportVersion.Status.FAILED,
            stage="Failed",
            error=f"The PDF could not be made: {exc}"[:2000],
            finished_at=timezone.now(),
        )
        return False
    return _store_pdf(version, rendered)


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
