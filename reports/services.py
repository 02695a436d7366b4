"""Report life cycle: create, draft, issue, share, download, export.

An issued version is frozen: its PDF is rendered once, stored with its sha256 and never
rendered or written again. A correction is a new version with its own number and a note.
"""

import csv
import datetime
import io
import logging
import secrets
from dataclasses import dataclass

from django.contrib.auth.models import AbstractBaseUser
from django.core.exceptions import PermissionDenied, ValidationError
from django.db import IntegrityError, transaction
from django.db.models import Max
from django.utils import timezone

from reports.models import DownloadLog, Report, ReportVersion, ShareLink
from survey.models import Member, Survey
from survey.services.audit import audit_record

logger = logging.getLogger(__name__)

SHARE_DAYS_MIN, SHARE_DAYS_MAX = 1, 365


@dataclass
class RequeueResult:
    sent: int = 0
    failed: int = 0


def _member_of(user: AbstractBaseUser, organization) -> Member:
    member = getattr(user, "membership", None)
    if member is None or member.organization_id != organization.pk:
        raise PermissionDenied("You are not a member of this organization.")
    return member


def _require_editor(user: AbstractBaseUser, organization) -> Member:
    member = _member_of(user, organization)
    if not member.can_edit:
        raise PermissionDenied("Your role cannot create or change reports.")
    return member


def _require_reviewer(user: AbstractBaseUser, organization) -> Member:
    member = _member_of(user, organization)
    if not member.can_review:
        raise PermissionDenied("Only reviewers can do this.")
    return member


# --- reports and versions ------------------------------------------------------------------


def next_report_number(organization, year: int) -> str:
    """R<year>-<n>: numbered per organization and year, in the order reports were created."""
    prefix = f"R{year}-"
    numbers = Report.objects.filter(organization=organization, number__startswith=prefix)
    highest = 0
    for number in numbers.values_list("number", flat=True):
        tail = number.removeprefix(prefix)
        highest = max(highest, int(tail) if tail.isdigit() else 0)
    return f"{prefix}{highest + 1:03d}"


def report_create(*, survey: Survey, user: AbstractBaseUser) -> Report:
    _require_editor(user, survey.organization)
    if survey.reports.exists():
        raise ValidationError(f"This survey already has report {survey.reports.first().number}.")
    # Two people may create reports at the same moment: retry on a taken number.
    for _attempt in range(5):
        report = Report(
            organization=survey.organization,
            survey=survey,
            number=next_report_number(survey.organization, timezone.localdate().year),
        )
        report.full_clean(validate_constraints=False)
        try:
            with transaction.atomic():
                report.save()
                audit_record(
                    organization=survey.organization, actor=user, action="report.create", obj=report
                )
            return report
        except IntegrityError:
            continue
    raise ValidationError("Could not number the report; please try again.")


def next_final_version(report: Report) -> int:
    highest = report.versions.filter(is_draft=False).aggregate(n=Max("version"))["n"]
    return (highest or 0) + 1


WAITING_FOR_BROKER_STAGE = "Waiting for the render queue, which cannot be reached just now"
REQUEUED_STAGE = "Stalled, re-queued"
UNFINISHED = [ReportVersion.Status.QUEUED, ReportVersion.Status.RENDERING]


def _enqueue_render(version: ReportVersion) -> None:
    transaction.on_commit(lambda: report_publish(version.pk))


def report_publish(version_id: int) -> bool:
    """Hand the render to the broker; when it is down, mark the version as waiting for it.

    The re-queue job (reports.jobs.requeue_reports, every minute), the next draft, issue or
    retry request, or `manage.py requeue_reports` sends it once the broker answers.
    """
    from reports.tasks import render_report

    rows = ReportVersion.objects.filter(pk=version_id)
    try:
        render_report.apply_async(args=[version_id], retry=False)
    except Exception as error:  # kombu/redis raise several connection error types
        logger.warning("Could not queue report version %s (%s)", version_id, error)
        rows.filter(status=ReportVersion.Status.QUEUED).update(
            waiting_for_broker=True, stage=WAITING_FOR_BROKER_STAGE
        )
        return False
    rows.filter(waiting_for_broker=True).update(waiting_for_broker=False, stage="")
    return True


def version_needs_sending(version: ReportVersion) -> bool:
    """Unfinished, and either never handed to a worker or lost by its worker."""
    from reports.rendering import version_is_stalled

    return version.status in UNFINISHED and (
        version.waiting_for_broker or version_is_stalled(version)
    )


def report_requeue_version(version: ReportVersion) -> bool:
    """Send one waiting or stalled version again; True when the broker took it.

    A stalled render goes back to `queued` first, so that the task's claim takes it.
    """
    from reports.rendering import stalled_renders

    stalled_renders().filter(pk=version.pk).update(
        status=ReportVersion.Status.QUEUED, stage=REQUEUED_STAGE, progress_pct=0
    )
    sent = report_publish(version.pk)
    version.refresh_from_db()
    return sent


def reports_requeue(*, report_id: int | None = None, every_queued: bool = False) -> RequeueResult:
    """Send again the renders waiting for the broker and those whose worker was lost.

    `every_queued` also re-sends queued renders the broker had accepted (after Redis lost
    its data); a duplicate task is harmless, the claim lets one through. Idempotent.
    """
    from reports.rendering import stalled_renders

    waiting = ReportVersion.objects.filter(status=ReportVersion.Status.QUEUED)
    if not every_queued:
        waiting = waiting.filter(waiting_for_broker=True)
    ids = set(waiting.values_list("pk", flat=True)) | set(
        stalled_renders().values_list("pk", flat=True)
    )
    if report_id is not None:
        ids &= set(ReportVersion.objects.filter(report_id=report_id).values_list("pk", flat=True))
    result = RequeueResult()
    for version in ReportVersion.objects.filter(pk__in=ids).order_by("pk"):
        if report_requeue_version(version):
            result.sent += 1
        else:
            result.failed += 1
    return result


def report_request_draft(*, report: Report, user: AbstractBaseUser) -> ReportVersion:
    """Queue a watermarked draft; a draft already waiting is returned instead of a second one
    (and sent again when the broker had been unreachable or its worker was lost)."""
    _require_editor(user, report.organization)
    pending = report.versions.filter(is_draft=True, status__in=UNFINISHED).first()
    if pending is not None:
        if version_needs_sending(pending):
            report_requeue_version(pending)
        return pending
    with transaction.atomic():
        version = ReportVersion(
            report=report, version=next_final_version(report), is_draft=True, requested_by=user
        )
        version.full_clean()
        version.save()
        _enqueue_render(version)
    return version


def report_issue(*, report: Report, user: AbstractBaseUser, change_note: str = "") -> ReportVersion:
    """Queue the final PDF of the next version; a reviewer's act, rendered exactly once."""
    _require_reviewer(user, report.organization)
    change_note = change_note.strip()
    with transaction.atomic():
        Report.objects.select_for_update().filter(pk=report.pk).first()
        finals = report.versions.filter(is_draft=False)
        unfinished = finals.filter(status__in=UNFINISHED).first()
        if unfinished is not None:
            if not version_needs_sending(unfinished):
                raise ValidationError("A version of this report is being issued already.")
            transaction.on_commit(lambda: report_requeue_version(unfinished))
            return unfinished
        if finals.filter(status=ReportVersion.Status.ISSUED).exists() and not change_note:
            raise ValidationError("Say what this corrected version changes (the change note).")
        # A final render that failed left no file: issue again under the same number.
        version = finals.filter(status=ReportVersion.Status.FAILED, sha256="").first()
        if version is None:
            version = ReportVersion(report=report, version=next_final_version(report))
        version.is_draft = False
        version.status = ReportVersion.Status.QUEUED
        version.stage, version.progress_pct, version.error = "", 0, ""
        version.attempts, version.waiting_for_broker = 0, False
        version.change_note = change_note
        version.requested_by = version.issued_by = user
        version.full_clean()
        version.save()
        audit_record(
            organization=report.organization,
            actor=user,
            action="report.issue",
            obj=version,
            detail={"number": report.number, "version": version.version},
        )
        _enqueue_render(version)
    return version


def report_retry(*, version: ReportVersion, user: AbstractBaseUser) -> ReportVersion:
    """Queue a failed draft again, or send again a version waiting for the broker or lost by
    its worker (a failed final version is retried by issuing again)."""
    _require_editor(user, version.report.organization)
    if version_needs_sending(version):
        report_requeue_version(version)
        return version
    if not version.is_draft or version.status != ReportVersion.Status.FAILED:
        raise ValidationError(
            "Only a failed draft, or a version waiting for the render queue, can be tried again."
        )
    with transaction.atomic():
        ReportVersion.objects.filter(pk=version.pk, status=ReportVersion.Status.FAILED).update(
            status=ReportVersion.Status.QUEUED,
            stage="",
            progress_pct=0,
            error="",
            notes="",
            attempts=0,
            waiting_for_broker=False,
        )
        _enqueue_render(version)
    return version


# --- what the reports app keeps of a survey (registered in ReportsConfig.ready) -----------


def survey_report_hold(survey: Survey) -> str | None:
    """Why a survey must stay: an issued report the client holds, or None."""
    issued = ReportVersion.objects.filter(report__survey=survey, status=ReportVersion.Status.ISSUED)
    if issued.exists():
        return (
            "This survey has an issued report: the client holds a copy that must stay "
            "traceable to its data."
        )
    return None


def survey_reports_release(survey: Survey) -> list[str]:
    """Delete the reports of a survey being purged; the PDF paths to remove afterwards."""
    versions = ReportVersion.objects.filter(report__survey=survey)
    paths = [path for path in versions.values_list("pdf", flat=True) if path]
    survey.reports.all().delete()
    return paths


# --- sharing and downloads -----------------------------------------------------------------


def share_link_create(
    *, version: ReportVersion, user: AbstractBaseUser, days: int = 30
) -> ShareLink:
    _require_reviewer(user, version.report.organization)
    if not version.is_issued:
        raise ValidationError("Only an issued version can be shared with the client.")
    if not SHARE_DAYS_MIN <= days <= SHARE_DAYS_MAX:
        raise ValidationError(f"A link can last from {SHARE_DAYS_MIN} to {SHARE_DAYS_MAX} days.")
    with transaction.atomic():
        link = ShareLink(
            version=version,
            token=secrets.token_urlsafe(32),
            expires_at=timezone.now() + datetime.timedelta(days=days),
            created_by=user,
        )
        link.full_clean()
        link.save()
        audit_record(
            organization=version.report.organization,
            actor=user,
            action="share_link.create",
            obj=link,
            detail={"version": version.pk, "expires_at": link.expires_at.isoformat()},
        )
    return link


def share_link_revoke(*, link: ShareLink, user: AbstractBaseUser) -> ShareLink:
    _require_reviewer(user, link.version.report.organization)
    with transaction.atomic():
        ShareLink.objects.filter(pk=link.pk, revoked_at__isnull=True).update(
            revoked_at=timezone.now()
        )
        link.refresh_from_db()
        audit_record(
            organization=link.version.report.organization,
            actor=user,
            action="share_link.revoke",
            obj=link,
        )
    return link


def share_link_active(token: str) -> ShareLink | None:
    """The live link for `token`, or None when unknown, expired, revoked or not issued."""
    if not token or len(token) > 64 or "\x00" in token:
        return None
    return (
        ShareLink.objects.select_related("version__report__survey__site__client")
        .filter(
            token=token,
            revoked_at__isnull=True,
            expires_at__gt=timezone.now(),
            version__status=ReportVersion.Status.ISSUED,
            version__report__survey__status=Survey.Status.ACTIVE,
        )
        .first()
    )


def download_record(
    *,
    version: ReportVersion,
    user: AbstractBaseUser | None = None,
    share_link: ShareLink | None = None,
    ip_address: str | None = None,
    user_agent: str = "",
) -> DownloadLog:
    with transaction.atomic():
        log = DownloadLog(
            version=version,
            share_link=share_link,
            user=user if user is not None and user.is_authenticated else None,
            ip_address=ip_address or None,
            user_agent=user_agent[:300],
        )
        log.full_clean()
        log.save()
        audit_record(
            organization=version.report.organization,
            actor=log.user,
            action="report.download",
            obj=version,
            detail={"share_link": share_link.pk if share_link else None},
        )
    return log


# --- exports -------------------------------------------------------------------------------

FINDING_COLUMNS = [
    "finding_id",
    "survey_date",
    "client",
    "site",
    "asset",
    "asset_tag",
    "location",
    "category",
    "level",
    "level_name",
    "status",
    "max_corrected_c",
    "rise_c",
    "corrected_rise_c",
    "basis",
    "criteria_row",
    "description",
    "recommendation",
    "thermogram",
]


def _cell(value) -> object:
    """Spreadsheets run cells that start with = + - @ as formulas: quote such text."""
    if isinstance(value, str) and value[:1] in {"=", "+", "-", "@", "\t", "\r"}:
        return "'" + value
    return "" if value is None else value


def findings_csv(survey: Survey) -> str:
    buffer = io.StringIO()
    writer = csv.writer(buffer)
    writer.writerow(FINDING_COLUMNS)
    for f in survey.findings.select_related("asset", "thermogram").order_by("level", "id"):
        writer.writerow(
            _cell(value)
            for value in [
                f.pk,
                survey.date.isoformat(),
                survey.site.client.name,
                survey.site.name,
                f.asset.name if f.asset else "",
                f.asset.tag if f.asset else "",
                f.location,
                f.category,
                f.level,
                f.get_level_display() if f.level else "",
                f.status,
                f.max_corrected_c,
                f.rise_c,
                f.corrected_rise_c,
                f.basis,
                f.criteria_row,
                f.description,
                f.recommendation,
                str(f.thermogram) if f.thermogram else "",
            ]
        )
    return buffer.getvalue()
