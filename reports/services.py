"""Report life cycle: create, draft, issue, share, download, export.

An issued version is frozen: its PDF is rendered once, stored with its sha256 and never
rendered or written again. A correction is a new version with its own number and a note.
"""

import csv
import datetime
import io
import secrets

from django.contrib.auth.models import AbstractBaseUser
from django.core.exceptions import PermissionDenied, ValidationError
from django.db import IntegrityError, transaction
from django.db.models import Max
from django.utils import timezone

from reports.models import DownloadLog, Report, ReportVersion, ShareLink
from survey.models import Member, Survey
from survey.services.audit import audit_record
from survey.severity import category_label

SHARE_DAYS_MIN, SHARE_DAYS_MAX = 1, 365


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


def _enqueue_render(version: ReportVersion) -> None:
    from reports.tasks import render_report

    transaction.on_commit(lambda: render_report.delay(version.pk))


def report_request_draft(*, report: Report, user: AbstractBaseUser) -> ReportVersion:
    """Queue a watermarked draft; a draft already waiting is returned instead of a second one."""
    _require_editor(user, report.organization)
    pending = report.versions.filter(
        is_draft=True, status__in=[ReportVersion.Status.QUEUED, ReportVersion.Status.RENDERING]
    ).first()
    if pending is not None:
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
        if finals.filter(
            status__in=[ReportVersion.Status.QUEUED, ReportVersion.Status.RENDERING]
        ).exists():
            raise ValidationError("A version of this report is being issued already.")
        if finals.filter(status=ReportVersion.Status.ISSUED).exists() and not change_note:
            raise ValidationError("Say what this corrected version changes (the change note).")
        # A final render that failed left no file: issue again under the same number.
        version = finals.filter(status=ReportVersion.Status.FAILED, sha256="").first()
        if version is None:
            version = ReportVersion(report=report, version=next_final_version(report))
        version.is_draft = False
        version.status = ReportVersion.Status.QUEUED
        version.stage, version.progress_pct, version.error = "", 0, ""
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
    """Queue a failed draft again (a failed final version is retried by issuing again)."""
    _require_editor(user, version.report.organization)
    if not version.is_draft or version.status != ReportVersion.Status.FAILED:
        raise ValidationError("Only a failed draft can be tried again.")
    with transaction.atomic():
        ReportVersion.objects.filter(pk=version.pk, status=ReportVersion.Status.FAILED).update(
            status=ReportVersion.Status.QUEUED, stage="", progress_pct=0, error=""
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
    if not token or len(token) > 64:
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
    "category_label",
    "rise_method",
    "load_exponent",
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
                category_label(survey.kind, f.category),
                f.get_rise_method_display() if f.rise_method else "",
                f.load_exponent,
            ]
        )
    return buffer.getvalue()
