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
from survey.services.criteria_tables import unreviewed_criteria_tables
from survey.severity import category_label

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


def _units_of(member: Member) -> dict[str, str]:
    return {
        "temperature_unit": member.temperature_unit,
        "speed_unit": member.speed_unit,
        "length_unit": member.length_unit,
    }


def self_review_check(report: Report, member: Member) -> bool:
    """Whether issuing by `member` is an independent review; raise when it is refused.

    The survey's own thermographer may issue it only where the organization allows that
    (a one-person firm); such a report says it was not independently reviewed.
    """
    thermographer_id = report.survey.thermographer_id
    if thermographer_id is None or thermographer_id != member.pk:
        return True
    if not report.organization.allow_self_review:
        raise ValidationError(
            "You are the thermographer of this survey: another reviewer must issue its "
            "report. (An admin can allow self-review in the organization settings, for a "
            "one-person firm.)"
        )
    return False


def report_request_draft(*, report: Report, user: AbstractBaseUser) -> ReportVersion:
    """Queue a watermarked draft; a draft already waiting is returned instead of a second one
    (and sent again when the broker had been unreachable or its worker was lost)."""
    member = _require_editor(user, report.organization)
    pending = report.versions.filter(is_draft=True, status__in=UNFINISHED).first()
    if pending is not None:
        if version_needs_sending(pending):
            report_requeue_version(pending)
        return pending
    with transaction.atomic():
        version = ReportVersion(
            report=report,
            version=next_final_version(report),
            is_draft=True,
            requested_by=user,
            **_units_of(member),
        )
        version.full_clean()
        version.save()
        _enqueue_render(version)
    return version


def report_issue_check(*, report: Report, user: AbstractBaseUser, change_note: str = "") -> bool:
    """What issuing would refuse, checked before the reviewer confirms; nothing is written.

    Returns whether the issue would be an independent review.
    """
    member = _require_reviewer(user, report.organization)
    independent = self_review_check(report, member)
    finals = report.versions.filter(is_draft=False)
    unfinished = finals.filter(status__in=UNFINISHED).first()
    # One waiting for the broker is sent again by issuing; only a live one refuses.
    if unfinished is not None and not version_needs_sending(unfinished):
        raise ValidationError("A version of this report is being issued already.")
    if finals.filter(status=ReportVersion.Status.ISSUED).exists() and not change_note.strip():
        raise ValidationError("Say what this corrected version changes (the change note).")
    return independent


UNREVIEWED_CRITERIA_MESSAGE = (
    "The findings are judged on criteria tables your firm has not reviewed ({names}). Tick "
    "the box to accept them for this report, or review them first on the severity tables page."
)


def unreviewed_criteria_message(report: Report) -> str:
    """Why issuing needs the extra confirmation, or "" when every table is reviewed."""
    tables = unreviewed_criteria_tables(report.survey)
    if not tables:
        return ""
    return UNREVIEWED_CRITERIA_MESSAGE.format(names=", ".join(t.name for t in tables))


def report_issue(
    *,
    report: Report,
    user: AbstractBaseUser,
    change_note: str = "",
    accept_unreviewed_criteria: bool = False,
) -> ReportVersion:
    """Queue the final PDF of the next version; a reviewer's act, rendered exactly once.

    Refused to the survey's own thermographer unless the organization allows self-review,
    and, when a finding is judged on a criteria table the firm has not reviewed, unless the
    reviewer accepts those tables for this report (`accept_unreviewed_criteria`).
    """
    member = _require_reviewer(user, report.organization)
    independent = self_review_check(report, member)
    change_note = change_note.strip()
    unreviewed = unreviewed_criteria_message(report)
    if unreviewed and not accept_unreviewed_criteria:
        raise ValidationError(unreviewed)
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
        version.independently_reviewed = independent
        version.unreviewed_criteria_accepted_at = timezone.now() if unreviewed else None
        for name, value in _units_of(member).items():
            setattr(version, name, value)
        version.full_clean()
        version.save()
        audit_record(
            organization=report.organization,
            actor=user,
            action="report.issue",
            obj=version,
            detail={
                "number": report.number,
                "version": version.version,
                "independently_reviewed": independent,
                "unreviewed_criteria_accepted": bool(unreviewed),
            },
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


def thermogram_report_hold(thermogram) -> str | None:
    """Why a thermogram must stay as it is: a final version of its survey's report, issued
    or being issued, was made while the thermogram was in the survey."""
    finals = ReportVersion.objects.filter(
        report__survey_id=thermogram.survey_id,
        is_draft=False,
        status__in=[
            ReportVersion.Status.QUEUED,
            ReportVersion.Status.RENDERING,
            ReportVersion.Status.ISSUED,
        ],
    )
    made_after = finals.filter(created_at__gte=thermogram.created_at) | finals.filter(
        issued_at__gte=thermogram.created_at
    )
    version = made_after.select_related("report").order_by("report__number", "version").first()
    if version is None:
        return None
    return f"Report {version.report.number} version {version.version} shows this thermogram."


# --- the report state of each survey, for the survey list ------------------------------------

REPORT_STATES = [
    ("none", "No report"),
    ("draft", "Report not issued"),
    ("issued", "Issued"),
]


def _issued(surveys):
    return surveys.filter(reports__versions__status=ReportVersion.Status.ISSUED)


def surveys_with_report_state(surveys, state: str):
    issued_ids = _issued(Survey.objects.all()).values("pk")
    if state == "issued":
        return surveys.filter(pk__in=issued_ids)
    if state == "draft":
        return surveys.filter(reports__isnull=False).exclude(pk__in=issued_ids).distinct()
    if state == "none":
        return surveys.filter(reports__isnull=True)
    return surveys


def report_states(surveys: list[Survey]) -> dict[int, str]:
    """The report column of the survey list: number and last issued version, or its state."""
    states = {survey.pk: "—" for survey in surveys}
    reports = Report.objects.filter(survey__in=surveys).prefetch_related("versions")
    for report in reports:
        issued = [v.version for v in report.versions.all() if v.is_issued]
        if issued:
            states[report.survey_id] = f"{report.number} v{max(issued)} issued"
        else:
            states[report.survey_id] = f"{report.number} not issued"
    return states


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


SHARE_MESSAGE_LIMIT = 2000


def share_link_email(
    *,
    link: ShareLink,
    user: AbstractBaseUser,
    to: str,
    message: str,
    url: str,
) -> ShareLink:
    """E-mail a live share link to the client's contact, with the sender's short message.

    Sent through Django's mail framework (settings.EMAIL_*): the console on a laptop, SMTP in
    production. A delivery the mail server refuses raises ValidationError; nothing is
    recorded as sent then.
    """
    from django.conf import settings
    from django.core.mail import EmailMessage
    from django.core.validators import validate_email

    member = _require_reviewer(user, link.version.report.organization)
    if not link.is_active:
        raise ValidationError("This link is revoked or expired: create a new one to send.")
    to = (to or "").strip()
    try:
        validate_email(to)
    except ValidationError:
        raise ValidationError({"to": "Enter the client's e-mail address."}) from None
    message = (message or "").strip()
    if len(message) > SHARE_MESSAGE_LIMIT:
        raise ValidationError(
            {"message": f"Keep the message under {SHARE_MESSAGE_LIMIT} characters."}
        )
    version = link.version
    report = version.report
    survey = report.survey
    organization = report.organization
    subject = f"Thermal survey report {report.number}: {survey.site.name}"
    lines = [message, ""] if message else []
    lines += [
        f"{organization.name} has issued report {report.number} (version {version.version}) of "
        f"the {survey.get_kind_display().lower()} survey of {survey.site.name} on "
        f"{survey.date:%d %B %Y}.",
        "",
        "Read and download it here:",
        url,
        "",
        f"The link works until {link.expires_at:%d %B %Y}. The SHA-256 fingerprint of the "
        f"issued file is {version.sha256}.",
        "",
        f"{member.display_name}, {organization.name}",
    ]
    email = EmailMessage(
        subject=subject,
        body="\n".join(lines),
        from_email=settings.DEFAULT_FROM_EMAIL,
        to=[to],
        reply_to=[user.email] if getattr(user, "email", "") else None,
    )
    try:
        email.send(fail_silently=False)
    except Exception as error:  # smtplib and socket errors: the mail server said no
        raise ValidationError(f"The e-mail could not be sent: {error}") from None
    with transaction.atomic():
        ShareLink.objects.filter(pk=link.pk).update(last_sent_to=to, last_sent_at=timezone.now())
        link.refresh_from_db()
        audit_record(
            organization=organization,
            actor=user,
            action="share_link.email",
            obj=link,
            detail={"to": to},
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


def shared_findings(link: ShareLink):
    """The findings a share link shows the client: those of its survey when the version was
    issued (later ones belong to a later version), most urgent first."""
    from survey.models import Finding

    version = link.version
    findings = Finding.objects.filter(survey_id=version.report.survey_id)
    if version.issued_at is not None:
        findings = findings.filter(created_at__lte=version.issued_at)
    return (
        findings.select_related("asset")
        .prefetch_related("acknowledgements")
        .order_by("level", "created_at")
    )


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
