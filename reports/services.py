"""Report life cycle: create, draft, render, issue, share, download, export.

An issued version is frozen: its PDF is rendered once, stored with its sha256 and never
rendered or written again. A correction is a new version with its own number and a note.
"""

import csv
import datetime
import hashlib
import io
import logging
import secrets

from django.conf import settings
from django.contrib.auth.models import AbstractBaseUser
from django.core.exceptions import PermissionDenied, ValidationError
from django.core.files.base import ContentFile
from django.db import IntegrityError, transaction
from django.db.models import Max, Q
from django.utils import timezone

from reports.models import DownloadLog, Report, ReportVersion, ShareLink
from survey.models import Finding, Member, Survey
from survey.services.audit import audit_record

logger = logging.getLogger(__name__)

SHARE_DAYS_MIN, SHARE_DAYS_MAX = 1, 365


def _member_of(user: AbstractBaseUser, organization) -> Member:
    member = getattr(user, "membership", None)
    if member is None or member.organization_id != organization.pk:
        raise PermissionDenied("You are not a member of this organization.")
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
    member = _member_of(user, survey.organization)
    if not member.can_edit:
        raise PermissionDenied("Your role cannot create reports.")
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
    _member_of(user, report.organization)
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
    from reports.pdf import render_pdf

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


def report_retry(*, version: ReportVersion, user: AbstractBaseUser) -> ReportVersion:
    """Queue a failed draft again (a failed final version is retried by issuing again)."""
    _member_of(user, version.report.organization)
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


def _finding_dict(finding: Finding) -> dict:
    return {
        "id": finding.pk,
        "thermogram_id": finding.thermogram_id,
        "asset": finding.asset.name if finding.asset else None,
        "asset_tag": finding.asset.tag if finding.asset else None,
        "marks": sorted(mark.label for mark in finding.marks.all()),
        "category": finding.category,
        "location": finding.location,
        "description": finding.description,
        "basis": finding.basis,
        "level": finding.level,
        "level_name": finding.get_level_display() if finding.level else None,
        "suggested_level": finding.suggested_level,
        "override_reason": finding.override_reason,
        "criteria_table": finding.criteria_table.name if finding.criteria_table else None,
        "criteria_row": finding.criteria_row,
        "rise_c": finding.rise_c,
        "corrected_rise_c": finding.corrected_rise_c,
        "max_corrected_c": finding.max_corrected_c,
        "recommendation": finding.recommendation,
        "status": finding.status,
    }


def survey_results(survey: Survey, *, readings: dict[int, list[dict]] | None = None) -> dict:
    """The survey's results as plain data: marks with corrected values, findings, conditions.

    The same dictionary is what a report's content digest is computed from.
    """
    from reports.pdf import conditions_check_rows, json_safe, readings_by_thermogram

    thermograms = survey.thermograms.filter(status="ready").select_related("asset")
    if readings is None:
        thermograms = list(thermograms.prefetch_related("marks"))
        readings = readings_by_thermogram(survey, thermograms)
    conditions = getattr(survey, "conditions", None)
    conditions_data = {}
    if conditions is not None:
        for model_field in conditions._meta.concrete_fields:
            if model_field.name != "survey":
                conditions_data[model_field.name] = getattr(conditions, model_field.name)
    results = json_safe(
        {
            "format": "heatmark-survey-results",
            "format_version": 1,
            "temperature_unit": "°C",
            "survey": {
                "id": survey.pk,
                "kind": survey.kind,
                "title": str(survey),
                "date": survey.date.isoformat(),
                "client": survey.site.client.name,
                "site": survey.site.name,
                "instrument": survey.instrument,
                "thermographer": str(survey.thermographer) if survey.thermographer else None,
                "reviewer": str(survey.reviewer) if survey.reviewer else None,
            },
            "conditions": conditions_data,
            "conditions_check": conditions_check_rows(survey),
            "thermograms": [
                {
                    "id": t.pk,
                    "sequence": t.sequence,
                    "title": t.title,
                    "original_name": t.original_name,
                    "original_sha256": t.original_sha256,
                    "estimated": t.estimated,
                    "asset": t.asset.name if t.asset else None,
                    "emissivity": t.emissivity,
                    "reflected_c": t.reflected_c,
                    "transmittance": t.transmittance,
                    "distance_m": t.distance_m,
                }
                for t in thermograms
            ],
            "findings": [
                _finding_dict(f)
                for f in survey.findings.select_related("asset", "criteria_table")
                .prefetch_related("marks")
                .order_by("id")
            ],
            "heat_loss": [
                {"label": e.label, "inputs": e.inputs, "results": e.results}
                for e in survey.heat_loss_estimates.all()
            ],
        }
    )
    # The readings are JSON-safe already (readings_by_thermogram): not walked a second time.
    for thermogram in results["thermograms"]:
        thermogram["marks"] = readings.get(thermogram["id"], [])
    return results
