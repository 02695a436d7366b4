"""Report pages: one page per survey, downloads, issuing, share links and exports.

Every view fetches through survey/access.py, so another organization's report answers 404.
The public share page answers 404 with the same generic body for any link that is not live.
"""

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import PermissionDenied, ValidationError
from django.http import Http404, HttpRequest, HttpResponse, JsonResponse
from django.shortcuts import redirect, render
from django.template.loader import render_to_string
from django.urls import reverse
from django.utils import timezone
from django.utils.http import content_disposition_header
from django.views.decorators.http import require_GET, require_POST

from reports import services
from reports.access import (
    get_report_for_user,
    get_report_version_for_user,
    get_share_link_for_user,
)
from reports.forms import (
    AcknowledgeForm,
    IssueConfirmForm,
    IssueForm,
    RevokeForm,
    ShareEmailForm,
    ShareLinkForm,
)
from reports.models import ReportVersion
from reports.rendering import version_is_stalled
from reports.results import results_file, results_file_name, survey_results
from survey.access import get_member, get_survey_for_user
from survey.files import serve_file
from survey.forms.fields import add_service_error
from survey.middleware import NO_STORE
from survey.net import client_address
from survey.services.acknowledgements import finding_acknowledge
from survey.services.letterhead import qualification_warnings


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
def report_issue(request: HttpRequest, report_id: int) -> HttpResponse:
    """Issuing is confirmed on its own page: what will be issued, by whom, and its warnings."""
    report = get_report_for_user(request, report_id)
    member = get_member(request)
    if not member.can_review:
        raise PermissionDenied("Only reviewers can issue a report.")
    data = request.POST if request.method == "POST" else None
    form = IssueConfirmForm(data, initial={"change_note": request.GET.get("change_note", "")})
    note = (data or {}).get("change_note", "")
    try:
        independent = services.report_issue_check(
            report=report, user=request.user, change_note=note
        )
    except ValidationError as error:
        if data is not None:
            _fail(request, error)
            return redirect(_survey_page(report.survey_id))
        independent, problem = None, error
    else:
        problem = None
    unreviewed = services.unreviewed_criteria_message(report)
    if data is not None and form.is_valid() and unreviewed:
        if not form.cleaned_data["accept_criteria"]:
            form.add_error("accept_criteria", unreviewed)
    if data is not None and form.is_valid():
        try:
            version = services.report_issue(
                report=report,
                user=request.user,
                change_note=form.cleaned_data["change_note"],
                accept_unreviewed_criteria=form.cleaned_data["accept_criteria"],
            )
        except ValidationError as error:
            _fail(request, error)
        else:
            _queued(request, version, f"Version {version.version} is being issued.")
        return redirect(_survey_page(report.survey_id))
    if data is not None and "confirm" not in data:
        form = IssueConfirmForm(initial={"change_note": note})
    context = {
        "report": report,
        "survey": report.survey,
        "form": form,
        "independent": independent,
        "problem": problem,
        "unreviewed_criteria": unreviewed,
        "issued_before": report.versions.filter(status=ReportVersion.Status.ISSUED).exists(),
        "findings": report.survey.findings.count(),
        "thermograms": report.survey.thermograms.count(),
        "qualification_warnings": qualification_warnings(
            [report.survey.thermographer, member], timezone.localdate()
        ),
    }
    return render(request, "reports/issue_confirm.html", context)


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
def share_link_revoke(request: HttpRequest, link_id: int) -> HttpResponse:
    """Revoking asks for confirmation first."""
    link = get_share_link_for_user(request, link_id)
    if not get_member(request).can_review:
        raise PermissionDenied("Only reviewers can revoke a link.")
    form = RevokeForm(request.POST if request.method == "POST" else None)
    if request.method == "POST" and form.is_valid():
        services.share_link_revoke(link=link, user=request.user)
        messages.success(request, "Share link revoked; it no longer opens the report.")
        return redirect(_survey_page(link.version.report.survey_id))
    context = {"link": link, "form": form, "url": _share_url(request, link)}
    return render(request, "reports/share_revoke.html", context)


def _share_url(request: HttpRequest, link) -> str:
    return request.build_absolute_uri(reverse("reports:share", args=[link.token]))


def _default_message(link) -> str:
    report = link.version.report
    contact = report.survey.site.client.contact_name
    greeting = f"Dear {contact}," if contact else "Hello,"
    return (
        f"{greeting}\n\nplease find below the link to our thermal survey report "
        f"{report.number}. Thank you for your time on site."
    )


@login_required
def share_link_email(request: HttpRequest, link_id: int) -> HttpResponse:
    """E-mail a share link to the client's contact, with a short message."""
    link = get_share_link_for_user(request, link_id)
    if not get_member(request).can_review:
        raise PermissionDenied("Only reviewers can send a report.")
    client = link.version.report.survey.site.client
    initial = {"to": client.email, "message": _default_message(link)}
    form = ShareEmailForm(request.POST if request.method == "POST" else None, initial=initial)
    if request.method == "POST" and form.is_valid():
        try:
            services.share_link_email(
                link=link, user=request.user, url=_share_url(request, link), **form.cleaned_data
            )
        except ValidationError as error:
            add_service_error(form, error)
        else:
            messages.success(request, f"Report link e-mailed to {form.cleaned_data['to']}.")
            return redirect(_survey_page(link.version.report.survey_id))
    context = {"link": link, "form": form, "client": client, "url": _share_url(request, link)}
    return render(request, "reports/share_email.html", context)


def _not_found() -> HttpResponse:
    response = HttpResponse(render_to_string("reports/share_missing.html"), status=404)
    response["Cache-Control"] = NO_STORE
    return response


def _share_response(request: HttpRequest, link, forms_by_finding=None) -> HttpResponse:
    findings = list(services.shared_findings(link))
    forms_by_finding = forms_by_finding or {}
    for finding in findings:
        finding.ack_form = forms_by_finding.get(finding.pk) or AcknowledgeForm(
            prefix=f"f{finding.pk}"
        )
        finding.latest_ack = next(iter(finding.acknowledgements.all()), None)
    context = {"link": link, "version": link.version, "findings": findings}
    status = 400 if forms_by_finding else 200
    response = render(request, "reports/share.html", context, status=status)
    # The token never leaves for another site in a Referer header. "no-referrer" would also
    # make browsers send "Origin: null" with the page's own acknowledgement forms, which
    # Django's CSRF check refuses: "same-origin" keeps both.
    response["Referrer-Policy"] = "same-origin"
    response["X-Robots-Tag"] = "noindex, nofollow"
    # A revoked link must stop working at once, also for a browser or proxy cache.
    response["Cache-Control"] = NO_STORE
    return response


@require_GET
def share_page(request: HttpRequest, token: str) -> HttpResponse:
    link = services.share_link_active(token)
    if link is None:
        return _not_found()
    return _share_response(request, link)


@require_POST
def share_acknowledge(request: HttpRequest, token: str, finding_id: int) -> HttpResponse:
    """The client says when a finding's repair is scheduled; no account, only the live link."""
    link = services.share_link_active(token)
    if link is None:
        return _not_found()
    finding = services.shared_findings(link).filter(pk=finding_id).first()
    if finding is None:
        return _not_found()
    form = AcknowledgeForm(request.POST, prefix=f"f{finding.pk}")
    if form.is_valid():
        try:
            finding_acknowledge(finding=finding, share_link_id=link.pk, **form.cleaned_data)
        except ValidationError as error:
            add_service_error(form, error)
        else:
            messages.success(request, "Thank you: your answer was sent to the inspection firm.")
            url = reverse("reports:share", args=[link.token])
            return redirect(f"{url}#finding-{finding.pk}")
    return _share_response(request, link, {finding.pk: form})


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
    # The same bytes as the file attached to a report made from the same data, whose
    # SHA-256 the report prints.
    response = HttpResponse(
        results_file(survey_results(survey)), content_type="application/json; charset=utf-8"
    )
    name = results_file_name(survey.pk)
    response["Content-Disposition"] = content_disposition_header(True, name)
    return response
