"""Pages of logged conditions: import a data logger's file into a survey, remove a log, and
the chart of the logs with the thermograms' capture times."""

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import ValidationError
from django.http import HttpRequest, HttpResponse
from django.shortcuts import redirect, render
from django.views.decorators.http import require_GET, require_POST

from survey.access import (
    get_condition_log_for_user,
    get_member,
    get_survey_for_user,
    require_editor,
)
from survey.forms.fields import add_service_error
from survey.forms.loggers import (
    LoggerColumnsForm,
    LoggerUploadForm,
    pack_upload,
    unpack_upload,
)
from survey.services import loggers


def _columns_form(survey, data=None, *, payload="", skip_rows=0, role="", text="", delimiter=""):
    columns = loggers.logger_file_columns(text=text, skip_rows=skip_rows, delimiter=delimiter)
    initial = {
        "payload": payload,
        "skip_rows": skip_rows,
        "role": role,
        "time_zone": loggers.survey_time_zone_name(survey),
        "temperature_unit": "C",
        "wind_unit": "m/s",
    }
    return LoggerColumnsForm(data, columns=columns, initial=initial)


def _step_two(request, survey, form, errors=()):
    context = {"survey": survey, "form": form, "row_errors": list(errors), "step": 2}
    return render(request, "survey/logger_import.html", context)


@login_required
def logger_import(request: HttpRequest, pk: int) -> HttpResponse:
    """Step 1 (file and role) → step 2 (columns and reading rules) → stored series."""
    member = get_member(request)
    survey = get_survey_for_user(request, pk)
    require_editor(member)
    if request.method == "POST" and "payload" in request.POST:
        return _import(request, survey)
    form = LoggerUploadForm(request.POST or None, request.FILES or None)
    if request.method == "POST" and form.is_valid():
        upload = form.cleaned_data["file"]
        data = upload.read()
        try:
            text = loggers.logger_file_text(data)
            columns_form = _columns_form(
                survey,
                payload=pack_upload(upload.name or "logger.csv", data),
                skip_rows=form.cleaned_data["skip_rows"],
                role=form.cleaned_data["role"],
                text=text,
            )
        except ValidationError as error:
            add_service_error(form, error)
        else:
            return _step_two(request, survey, columns_form)
    context = {
        "survey": survey,
        "form": form,
        "step": 1,
        "logs": loggers.survey_log_summary(survey),
    }
    return render(request, "survey/logger_import.html", context)


def _import(request: HttpRequest, survey) -> HttpResponse:
    try:
        name, data = unpack_upload(request.POST.get("payload", ""))
        skip_rows = max(0, min(100, int(request.POST.get("skip_rows") or 0)))
        text = loggers.logger_file_text(data)
        form = _columns_form(
            survey,
            request.POST,
            text=text,
            skip_rows=skip_rows,
            delimiter=request.POST.get("delimiter", ""),
        )
    except (ValidationError, ValueError) as error:
        messages.error(request, " ".join(getattr(error, "messages", [str(error)])))
        return redirect("survey:logger_import", pk=survey.pk)
    if not form.is_valid():
        return _step_two(request, survey, form)
    try:
        log = loggers.condition_log_import(
            survey=survey, user=request.user, **form.import_options()
        )
    except loggers.LoggerFileError as error:
        return _step_two(request, survey, form, error.errors)
    except ValidationError as error:
        add_service_error(form, error)
        return _step_two(request, survey, form)
    messages.success(
        request,
        f"{log.get_role_display()} log {log.original_name}: {log.row_count} readings imported.",
    )
    return redirect("survey:survey", pk=survey.pk)


@login_required
@require_POST
def condition_log_delete(request: HttpRequest, pk: int) -> HttpResponse:
    member = get_member(request)
    log = get_condition_log_for_user(request, pk)
    require_editor(member)
    loggers.condition_log_delete(log=log, user=request.user)
    messages.success(request, f"{log.get_role_display()} log {log.original_name} removed.")
    return redirect("survey:survey", pk=log.survey_id)


@login_required
@require_GET
def logger_chart(request: HttpRequest, pk: int) -> HttpResponse:
    """The survey's logs as an SVG picture, in the member's unit."""
    member = get_member(request)
    survey = get_survey_for_user(request, pk)
    svg = loggers.survey_logger_chart(survey, unit=member.temperature_unit) or (
        '<svg xmlns="http://www.w3.org/2000/svg" width="640" height="40" role="img">'
        "<title>No logger data</title></svg>"
    )
    response = HttpResponse(svg, content_type="image/svg+xml")
    response["Content-Disposition"] = 'inline; filename="logger.svg"'
    response["X-Content-Type-Options"] = "nosniff"
    response["Cache-Control"] = "private, no-cache"
    return response
