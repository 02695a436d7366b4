"""HTML pages: surveys list, clients, sites, survey create/edit/detail, upload, settings.

Each view fetches through survey/access.py, validates with a form and calls one service.
"""

import datetime

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import ValidationError
from django.db.models import Count, Prefetch
from django.http import HttpRequest, HttpResponse, JsonResponse
from django.shortcuts import redirect, render
from django.urls import reverse
from django.views.decorators.http import require_GET, require_POST

from survey.access import (
    assets_for,
    clients_for,
    deleted_surveys_for,
    get_deleted_survey_for_user,
    get_member,
    get_survey_for_user,
    get_thermogram_for_user,
    members_for,
    require_editor,
    require_reviewer,
    sites_for,
    surveys_for,
)
from survey.conditions import conditions_check
from survey.forms.fields import add_service_error, form_errors_text, submitted
from survey.forms.surveys import ClientForm, DeleteForm, PreferenceForm, SiteForm, SurveyForm
from survey.forms.thermograms import (
    SCALE_BAR_FIELDS,
    ReprocessForm,
    ThermogramSettingsForm,
    UploadForm,
)
from survey.models import Survey, Thermogram
from survey.services import ingest, members, processing, surveys


@login_required
def home(request: HttpRequest) -> HttpResponse:
    member = get_member(request)
    surveys = (
        surveys_for(member)
        .select_related("site__client")
        .annotate(thermogram_count=Count("thermograms"))[:200]
    )
    return render(request, "survey/home.html", {"surveys": surveys})


@login_required
def preferences(request: HttpRequest) -> HttpResponse:
    member = get_member(request)
    form = PreferenceForm(submitted(request), initial={"temperature_unit": member.temperature_unit})
    if request.method == "POST" and form.is_valid():
        members.member_update_preferences(member=member, **form.cleaned_data)
        messages.success(request, "Preferences saved.")
        return redirect("survey:preferences")
    return render(request, "survey/preferences.html", {"form": form})


@login_required
def client_list(request: HttpRequest) -> HttpResponse:
    member = get_member(request)
    form = ClientForm(submitted(request))
    if request.method == "POST":
        require_editor(member)
        if form.is_valid():
            try:
                client = surveys.client_create(
                    organization=member.organization, user=request.user, **form.cleaned_data
                )
            except ValidationError as error:
                add_service_error(form, error)
            else:
                messages.success(request, f"Client {client} added.")
                return redirect("survey:clients")
    clients = clients_for(member).annotate(site_count=Count("sites"))
    return render(request, "survey/client_list.html", {"clients": clients, "form": form})


@login_required
def site_list(request: HttpRequest) -> HttpResponse:
    member = get_member(request)
    form = SiteForm(submitted(request), clients=clients_for(member))
    if request.method == "POST":
        require_editor(member)
        if form.is_valid():
            try:
                site = surveys.site_create(user=request.user, **form.cleaned_data)
            except ValidationError as error:
                add_service_error(form, error)
            else:
                messages.success(request, f"Site {site} added.")
                return redirect("survey:sites")
    sites = sites_for(member).select_related("client").annotate(survey_count=Count("surveys"))
    return render(request, "survey/site_list.html", {"sites": sites, "form": form})


def _survey_form(request: HttpRequest, member, **kwargs) -> SurveyForm:
    return SurveyForm(
        submitted(request),
        unit=member.temperature_unit,
        sites=sites_for(member).select_related("client"),
        members=members_for(member),
        **kwargs,
    )


@login_required
def survey_create(request: HttpRequest) -> HttpResponse:
    member = get_member(request)
    require_editor(member)
    # Common practice: cameras are stated as ±2 °C or ±2 % of reading, whichever is greater.
    defaults = {"thermographer": member.pk, "date": datetime.date.today()}
    defaults |= {"camera_accuracy_c": 2.0, "camera_accuracy_pct": 2.0}
    initial = SurveyForm.initial_in_unit(defaults, member.temperature_unit)
    form = _survey_form(request, member, initial=initial)
    if request.method == "POST" and form.is_valid():
        try:
            survey = surveys.survey_create(
                organization=member.organization,
                user=request.user,
                conditions=form.conditions_values(),
                **form.survey_values(),
            )
        except ValidationError as error:
            add_service_error(form, error)
        else:
            messages.success(request, "Survey created. Upload its thermograms below.")
            return redirect("survey:survey", pk=survey.pk)
    return render(request, "survey/survey_form.html", {"form": form, "survey": None})


@login_required
def survey_edit(request: HttpRequest, pk: int) -> HttpResponse:
    member = get_member(request)
    survey = get_survey_for_user(request, pk)
    require_editor(member)
    initial = SurveyForm.initial_for(survey, member.temperature_unit)
    form = _survey_form(request, member, initial=initial)
    if request.method == "POST" and form.is_valid():
        try:
            surveys.survey_update(
                survey=survey,
                user=request.user,
                conditions=form.conditions_values(),
                **form.survey_values(),
            )
        except ValidationError as error:
            add_service_error(form, error)
        else:
            messages.success(request, "Survey saved.")
            return redirect("survey:survey", pk=survey.pk)
    return render(request, "survey/survey_form.html", {"form": form, "survey": survey})


def _survey_thermograms(survey: Survey):
    return survey.thermograms.select_related("asset").annotate(mark_count=Count("marks"))


@login_required
def survey_detail(request: HttpRequest, pk: int) -> HttpResponse:
    member = get_member(request)
    survey = get_survey_for_user(request, pk)
    survey = (
        surveys_for(member)
        .select_related("site__client", "conditions", "thermographer__user", "reviewer__user")
        .prefetch_related(Prefetch("thermograms", queryset=_survey_thermograms(survey)))
        .get(pk=survey.pk)
    )
    upload_form = UploadForm(
        unit=member.temperature_unit, assets=assets_for(member).filter(site=survey.site_id)
    )
    thermograms = list(survey.thermograms.all())
    for thermogram in thermograms:
        thermogram.status_text = processing.thermogram_status_text(thermogram)
    context = {
        "survey": survey,
        "thermograms": thermograms,
        "upload_form": upload_form,
        "conditions_checks": conditions_check(survey),
    }
    return render(request, "survey/survey_detail.html", context)


@login_required
@require_POST
def survey_upload(request: HttpRequest, pk: int) -> HttpResponse:
    member = get_member(request)
    survey = get_survey_for_user(request, pk)
    require_editor(member)
    form = UploadForm(
        request.POST,
        request.FILES,
        unit=member.temperature_unit,
        assets=assets_for(member).filter(site=survey.site_id),
    )
    if not form.is_valid():
        messages.error(request, f"Nothing was uploaded. {form_errors_text(form)}")
        return redirect("survey:survey", pk=survey.pk)
    result = ingest.thermograms_ingest_batch(
        survey=survey,
        files=form.cleaned_data["files"],
        photos=form.cleaned_data["photos"],
        user=request.user,
        **form.ingest_defaults(),
    )
    if result.waiting_for_broker:
        messages.warning(
            request,
            f"Stored {len(result.created)} file(s). The processing queue cannot be reached just "
            "now: they will be processed automatically when it is back.",
        )
    elif result.created:
        messages.success(request, f"Stored {len(result.created)} file(s); processing has started.")
    for name, reason in result.rejected:
        messages.error(request, f"{name} was not stored: {reason}")
    return redirect("survey:survey", pk=survey.pk)


@login_required
@require_GET
def survey_status(request: HttpRequest, pk: int) -> JsonResponse:
    """Status of every thermogram of the survey, polled by static/js/survey.js."""
    survey = get_survey_for_user(request, pk)
    rows = []
    for thermogram in survey.thermograms.all():
        rows.append(
            {
                "id": thermogram.pk,
                "status": thermogram.status,
                "status_display": processing.thermogram_status_text(thermogram),
                "stalled": processing.thermogram_is_stalled(thermogram),
                "error": thermogram.error,
                "thumbnail": reverse("survey:thermogram_thumbnail", args=[thermogram.pk])
                if thermogram.thumbnail
                else None,
            }
        )
    done = sum(row["status"] not in {"queued", "processing"} for row in rows)
    return JsonResponse({"thermograms": rows, "done": done, "total": len(rows)})


@login_required
def survey_delete(request: HttpRequest, pk: int) -> HttpResponse:
    member = get_member(request)
    survey = get_survey_for_user(request, pk)
    require_reviewer(member)
    form = DeleteForm(submitted(request))
    if request.method == "POST" and form.is_valid():
        try:
            surveys.survey_soft_delete(survey=survey, user=request.user)
        except ValidationError as error:
            messages.error(request, " ".join(error.messages))
            return redirect("survey:survey", pk=survey.pk)
        messages.success(request, f"{survey} deleted. It can be restored from Deleted surveys.")
        return redirect("survey:home")
    return render(request, "survey/survey_delete.html", {"survey": survey, "form": form})


@login_required
def deleted_surveys(request: HttpRequest) -> HttpResponse:
    member = get_member(request)
    surveys = deleted_surveys_for(member).select_related("site__client")
    return render(request, "survey/deleted_surveys.html", {"surveys": surveys})


@login_required
@require_POST
def survey_restore(request: HttpRequest, pk: int) -> HttpResponse:
    member = get_member(request)
    survey = get_deleted_survey_for_user(request, pk)
    require_reviewer(member)
    surveys.survey_restore(survey=survey, user=request.user)
    messages.success(request, f"{survey} restored.")
    return redirect("survey:survey", pk=survey.pk)


@login_required
def thermogram_settings(request: HttpRequest, pk: int) -> HttpResponse:
    member = get_member(request)
    thermogram = get_thermogram_for_user(request, pk)
    require_editor(member)
    form = ThermogramSettingsForm(
        submitted(request),
        unit=member.temperature_unit,
        assets=assets_for(member).filter(site=thermogram.survey.site_id),
        initial=ThermogramSettingsForm.initial_for(thermogram, member.temperature_unit),
    )
    if request.method == "POST" and form.is_valid():
        try:
            surveys.thermogram_update_settings(
                thermogram=thermogram, user=request.user, **form.cleaned_data
            )
        except ValidationError as error:
            add_service_error(form, error)
        else:
            messages.success(request, f"Settings of {thermogram} saved.")
            return redirect("survey:survey", pk=thermogram.survey_id)
    reprocess_form = ReprocessForm(
        unit=member.temperature_unit,
        initial=_reprocess_initial(thermogram, member.temperature_unit),
    )
    context = {"thermogram": thermogram, "form": form, "reprocess_form": reprocess_form}
    return render(request, "survey/thermogram_settings.html", context)


def _reprocess_initial(thermogram: Thermogram, unit: str) -> dict:
    settings = thermogram.decode_settings or {}
    false_colour = settings.get("false_colour") or {}
    values = {
        "source_unit": settings.get("unit", "C"),
        "scale": settings.get("scale"),
        "offset": settings.get("offset"),
        "false_colour_palette": false_colour.get("palette") or "",
        "scale_low": false_colour.get("low_c"),
        "scale_high": false_colour.get("high_c"),
        **dict(zip(SCALE_BAR_FIELDS, false_colour.get("scale_bar_box") or (), strict=False)),
    }
    return ReprocessForm.initial_in_unit(values, unit)


@login_required
@require_POST
def thermogram_reprocess(request: HttpRequest, pk: int) -> HttpResponse:
    member = get_member(request)
    thermogram = get_thermogram_for_user(request, pk)
    require_editor(member)
    form = ReprocessForm(request.POST, unit=member.temperature_unit)
    if not form.is_valid():
        messages.error(request, f"Not re-processed. {form_errors_text(form)}")
        return redirect("survey:thermogram_settings", pk=thermogram.pk)
    try:
        ingest.thermogram_reprocess(
            thermogram=thermogram,
            user=request.user,
            unit=form.cleaned_data["source_unit"],
            scale=form.cleaned_data.get("scale"),
            offset=form.cleaned_data.get("offset"),
            palette_source=form.false_colour(),
        )
    except ValidationError as error:
        messages.error(request, " ".join(error.messages))
        return redirect("survey:thermogram_settings", pk=thermogram.pk)
    thermogram.refresh_from_db(fields=["waiting_for_broker"])
    if thermogram.waiting_for_broker:
        messages.warning(
            request,
            f"{thermogram} will be processed again when the processing queue, which cannot be "
            "reached just now, is back.",
        )
    else:
        messages.success(request, f"{thermogram} queued for processing from its original.")
    return redirect("survey:survey", pk=thermogram.survey_id)
