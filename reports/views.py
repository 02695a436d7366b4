"""Report pages: one page per survey, downloads, issuing, share links and exports.

Every view fetches through survey/access.py, so another organization's report answers 404.
The public share page answers 404 with the same generic body for any link that is not live.
"""

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import ValidationError
from django.http import Http404, HttpRequest, HttpResponse, JsonResponse
from django.shortcuts import redirect, render
from django.template.loader import render_to_string
from django.urls import reverse
from django.utils.http import content_disposition_header
from django.views.decorators.http import require_GET, require_POST

from reports import services
from reports.access import (
    get_report_for_user,
    get_report_version_for_user,
    get_share_link_for_user,
)
from reports.forms import IssueForm, ShareLinkForm
from reports.models import ReportVersion
from reports.rendering import version_is_stalled
from reports.results import content_digest, survey_results
from survey.access import get_member, get_survey_for_user
from survey.files import serve_file
from survey.middleware import NO_STORE
from survey.net import client_address


def _fail(request: HttpRequest, error: ValidationError) -> None:
    messages.error(request, " ".join(error.messages))


def _survey_page(survey_id: int) -> str:
    return reverse("reports:survey", args=[survey_id])


def _client_ip(request: HttpRequest) -> str | None:
    address = client_address(request)
    return None if address == "unknown" else address


@login_required
@require_GET
def survey_reports(request: HttpRequest, survey_id: int) -> HttpResponse:
    survey = get_survey_for_user(request, survey_id)
    reports = survey.reports.prefetch_related("versions__share_links")
    context = {
        "survey": survey,
        "reports": reports,
        "member": get_member(request),
        "issue_form": IssueForm(),
        "share_form": ShareLinkForm(),
    }
    return render(request, "reports/survey_reports.html", context)


@login_required
@require_POST
def report_create(request: HttpRequest, survey_id: int) -> HttpResponse:
    survey = get_survey_for_user(request, survey_id)
    try:
        report = services.report_create(survey=survey, user=request.user)
    except ValidationError as error:
        _fail(request, error)
    else:
        messages.success(request, f"Report {report.number} created. Request a draft to see it.")
    return redirect(_survey_page(survey.pk))


WAITING_MESSAGE = (
    "The render queue cannot be reached just now. The request is kept and the PDF will be "
    "made when the queue is back; nothing needs to be done again."
)


def _queued(request: HttpRequest, version: ReportVersion, message: str) -> None:
    """Say that the version is queued, or that it waits for the broker (decided on commit)."""
    version.refresh_from_db(fields=["waiting_for_broker"])
    if version.waiting_for_broker:
        messages.warning(request, WAITING_MESSAGE)
    else:
        messages.success(request, message)


@login_required
@require_POST
def draft_request(request: HttpRequest, report_id: int) -> HttpResponse:
    report = get_report_for_user(request, report_id)
    version = services.report_request_draft(report=report, user=request.user)
    _queued(request, version, "Draft requested; this page shows its progress.")
    return redirect(_survey_page(report.survey_id))


@login_required
@require_POST
def version_retry(request: HttpRequest, version_id: int) -> HttpResponse:
    version = get_report_version_for_user(request, version_id)
    try:
        services.report_retry(version=version, user=request.user)
    except ValidationError as error:
        _fail(request, error)
    else:
        _queued(request, version, "Queued again; this page shows its progress.")
    return redirect(_survey_page(version.report.survey_id))


@login_required
@require_POST
def report_issue(request: HttpRequest, report_id: int) -> HttpResponse:
    report = get_report_for_user(request, report_id)
    form = IssueForm(request.POST)
    if not form.is_valid():
        messages.error(request, "The change note is too long (at most 4000 characters).")
        return redirect(_survey_page(report.survey_id))
    try:
        version = services.report_issue(
            report=report, user=request.user, change_note=form.cleaned_data["change_note"]
        )
    except ValidationError as error:
        _fail(request, error)
    else:
        _queued(request, version, f"Version {version.version} is being issued.")
    return redirect(_survey_page(report.survey_id))


@login_required
@require_GET
def version_progress(request: HttpRequest, version_id: int) -> JsonResponse:
    version = get_report_version_for_user(request, version_id)
    done = version.status in {ReportVersion.Status.READY, ReportVersion.Status.ISSUED}
    stage = version.stage
    if version_is_stalled(version):
        stage = "Stalled: its worker was lost; it is being queued again"
    return JsonResponse(
        {
            "status": version.status,
            "status_label": version.get_status_display(),
            "stage": stage,
            "waiting_for_broker": version.waiting_for_broker,
            "progress_pct": version.progress_pct,
            "done": done,
            "failed": version.status == ReportVersion.Status.FAILED,
            "error": version.error,
            "download_url": reverse("reports:download", args=[version.pk]) if done else None,
        }
    )


def _pdf_response(version: ReportVersion) -> HttpResponse:
    kind = "DRAFT" if version.is_draft else f"v{version.version}"
    name = f"{version.report.number}-{kind}.pdf"
    return serve_file(
        version.pdf, download_name=name, attachment=True, content_type="application/pdf"
    )


@login_required
@require_GET
def version_download(request: HttpRequest, version_id: int) -> HttpResponse:
    version = get_report_version_for_user(request, version_id)
    if not version.pdf:
        raise Http404("This version has no PDF yet.")
    services.download_record(
        version=version,
        user=request.user,
        ip_address=_client_ip(request),
        user_agent=request.META.get("HTTP_USER_AGENT", ""),
    )
    return _pdf_response(version)


@login_required
@require_POST
def share_link_create(request: HttpRequest, version_id: int) -> HttpResponse:
    version = get_report_version_for_user(request, version_id)
    form = ShareLinkForm(request.POST)
    if not form.is_valid():
        messages.error(request, " ".join(e for errors in form.errors.values() for e in errors))
        return redirect(_survey_page(version.report.survey_id))
    try:
        link = services.share_link_create(
            version=version, user=request.user, days=form.cleaned_data["days"]
        )
    except ValidationError as error:
        _fail(request, error)
    else:
        url = request.build_absolute_uri(reverse("reports:share", args=[link.token]))
        messages.success(
            request, f"Share link created, valid until {link.expires_at:%d %b %Y}: {url}"
        )
    return redirect(_survey_page(version.report.survey_id))


@login_required
@require_POST
def share_link_revoke(request: HttpRequest, link_id: int) -> HttpResponse:
    link = get_share_link_for_user(request, link_id)
    services.share_link_revoke(link=link, user=request.user)
    messages.success(request, "Share link revoked; it no longer opens the report.")
    return redirect(_survey_page(link.version.report.survey_id))


def _not_found() -> HttpResponse:
    response = HttpResponse(render_to_string("reports/share_missing.html"), status=404)
    response["Cache-Control"] = NO_STORE
    return response


@require_GET
def share_page(request: HttpRequest, token: str) -> HttpResponse:
    link = services.share_link_active(token)
    if link is None:
        return _not_found()
    response = render(request, "reports/share.html", {"link": link, "version": link.version})
    response["Referrer-Policy"] = "no-referrer"
    response["X-Robots-Tag"] = "noindex, nofollow"
    # A revoked link must stop working at once, also for a browser or proxy cache.
    response["Cache-Control"] = NO_STORE
    return response


@require_GET
def share_download(request: HttpRequest, token: str) -> HttpResponse:
    link = services.share_link_active(token)
    if link is None or not link.version.pdf:
        return _not_found()
    services.download_record(
        version=link.version,
        share_link=link,
        ip_address=_client_ip(request),
        user_agent=request.META.get("HTTP_USER_AGENT", ""),
    )
    response = _pdf_response(link.version)
    response["Cache-Control"] = NO_STORE
    return response


@login_required
@require_GET
def findings_csv(request: HttpRequest, survey_id: int) -> HttpResponse:
    survey = get_survey_for_user(request, survey_id)
    response = HttpResponse(services.findings_csv(survey), content_type="text/csv; charset=utf-8")
    name = f"survey-{survey.pk}-findings.csv"
    response["Content-Disposition"] = content_disposition_header(True, name)
    return response


@login_required
@require_GET
def results_json(request: HttpRequest, survey_id: int) -> HttpResponse:
    survey = get_survey_for_user(request, survey_id)
    results = survey_results(survey)
    # The digest of everything else, as printed in reports made from the same data.
    results["content_sha256"] = content_digest(results)
    response = JsonResponse(results, json_dumps_params={"ensure_ascii": False, "indent": 1})
    name = f"survey-{survey.pk}-results.json"
    response["Content-Disposition"] = content_disposition_header(True, name)
    return response
