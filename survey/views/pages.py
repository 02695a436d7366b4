"""HTML pages: surveys list, clients, sites, survey create/edit/detail, upload, settings.

Each view fetches through survey/access.py, validates with a form and calls one service.
"""

import datetime

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import ValidationError
from django.core.paginator import Paginator
from django.db.models import Count, Min, OuterRef, Q, Subquery
from django.http import HttpRequest, HttpResponse, JsonResponse
from django.shortcuts import redirect, render
from django.urls import reverse
from django.utils import timezone
from django.views.decorators.http import require_GET, require_POST

from survey.access import (
    assets_for,
    clients_for,
    get_deleted_survey_for_user,
    get_member,
    get_survey_for_user,
    get_thermogram_for_user,
    instruments_for,
    members_for,
    require_editor,
    require_reviewer,
    sites_for,
    surveys_for,
)
from survey.conditions import conditions_check
from survey.dependents import survey_facets, thermogram_hold
from survey.forms.fields import add_service_error, form_errors_text, member_units, submitted
from survey.forms.register import AssetTiesForm, SurveyFilterForm, ViewDefaultsForm
from survey.forms.surveys import ClientForm, DeleteForm, PreferenceForm, SiteForm, SurveyForm
from survey.forms.thermograms import (
    SCALE_BAR_FIELDS,
    ReprocessForm,
    ThermogramSettingsForm,
    UploadForm,
)
from survey.models import Acknowledgement, Finding, Survey, Thermogram
from survey.services import ingest, instruments, loggers, members, processing, rounds, surveys
from survey.templatetags.units import temp


def _today() -> datetime.date:
    return timezone.localdate()


SURVEYS_PER_PAGE = 50


def _filtered_surveys(member, form):
    """The organization's surveys narrowed by the list's filters, in the chosen order."""
    surveys = surveys_for(member).select_related("site__client")
    if not form.is_valid():
        return surveys.order_by("-date", "-id")
    data = form.cleaned_data
    if data["q"]:
        text = data["q"]
        surveys = surveys.filter(
            Q(title__icontains=text)
            | Q(site__name__icontains=text)
            | Q(site__client__name__icontains=text)
            | Q(crew__icontains=text)
            | Q(instrument__icontains=text)
            | Q(notes__icontains=text)
            | Q(scope_examined__icontains=text)
        )
    if data["client"]:
        surveys = surveys.filter(site__client=data["client"])
    if data["site"]:
        surveys = surveys.filter(site=data["site"])
    if data["kind"]:
        surveys = surveys.filter(kind=data["kind"])
    open_findings = Finding.objects.filter(
        survey=OuterRef("pk"), status=Finding.Status.OPEN, level__isnull=False
    )
    surveys = surveys.annotate(
        worst_open=Subquery(open_findings.order_by("level").values("level")[:1])
    )
    if data["severity"] == "none":
        surveys = surveys.filter(worst_open__isnull=True)
    elif data["severity"]:
        surveys = surveys.filter(worst_open=int(data["severity"]))
    for facet in form.facets:
        if data.get(facet.key):
            surveys = facet.apply(surveys, data[facet.key])
    order = ("date", "id") if data["order"] == "oldest" else ("-date", "-id")
    return surveys.order_by(*order)


@login_required
def home(request: HttpRequest) -> HttpResponse:
    """The survey list: newest first, filtered, searched and paged by 50."""
    member = get_member(request)
    facets = survey_facets()
    form = SurveyFilterForm(
        request.GET or None,
        clients=clients_for(member),
        sites=sites_for(member).select_related("client"),
        facets=facets,
    )
    surveys = _filtered_surveys(member, form).annotate(
        thermogram_count=Count("thermograms", filter=Q(thermograms__deleted_at__isnull=True)),
        open_count=Count(
            "findings",
            filter=Q(findings__status=Finding.Status.OPEN, findings__deleted_at__isnull=True),
        ),
        worst_level=Min(
            "findings__level",
            filter=Q(findings__status=Finding.Status.OPEN, findings__deleted_at__isnull=True),
        ),
    )
    page = Paginator(surveys, SURVEYS_PER_PAGE).get_page(request.GET.get("page"))
    rows = list(page.object_list)
    columns = [(facet, facet.describe(rows)) for facet in facets]
    for survey in rows:
        survey.facet_values = [values.get(survey.pk, "") for _facet, values in columns]
    query = request.GET.copy()
    query.pop("page", None)
    context = {
        "surveys": rows,
        "page": page,
        "form": form,
        "facet_labels": [facet.label for facet, _values in columns],
        "query": query.urlencode(),
        "filtered": any(value for key, value in request.GET.items() if key != "page"),
        "due_count": len(rounds.assets_due(organization=member.organization, today=_today())),
    }
    return render(request, "survey/home.html", context)


@login_required
def preferences(request: HttpRequest) -> HttpResponse:
    member = get_member(request)
    initial = {
        "temperature_unit": member.temperature_unit,
        "speed_unit": member.speed_unit,
        "length_unit": member.length_unit,
    }
    form = PreferenceForm(submitted(request), initial=initial)
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
                messages.success(request, f"Client {client} added. Add its first site below.")
                return redirect("survey:client", pk=client.pk)
    clients = clients_for(member).annotate(
        site_count=Count("sites", filter=Q(sites__deleted_at__isnull=True))
    )
    return render(request, "survey/client_list.html", {"clients": clients, "form": form})


@login_required
def site_list(request: HttpRequest) -> HttpResponse:
    member = get_member(request)
    initial = {}
    if request.GET.get("client", "").isdigit():
        initial["client"] = int(request.GET["client"])
    form = SiteForm(submitted(request), clients=clients_for(member), initial=initial)
    if request.method == "POST":
        require_editor(member)
        if form.is_valid():
            try:
                site = surveys.site_create(user=request.user, **form.cleaned_data)
            except ValidationError as error:
                add_service_error(form, error)
            else:
                messages.success(request, f"Site {site} added.")
                return redirect("survey:site", pk=site.pk)
    sites = (
        sites_for(member)
        .select_related("client")
        .annotate(survey_count=Count("surveys", filter=Q(surveys__status=Survey.Status.ACTIVE)))
    )
    return render(request, "survey/site_list.html", {"sites": sites, "form": form})


def _survey_form(request: HttpRequest, member, **kwargs) -> SurveyForm:
    return SurveyForm(
        submitted(request),
        sites=sites_for(member).select_related("client"),
        members=members_for(member),
        instruments=instruments_for(member),
        **member_units(member),
        **kwargs,
    )


@login_required
def survey_create(request: HttpRequest) -> HttpResponse:
    member = get_member(request)
    require_editor(member)
    # Common practice: cameras are stated as ±2 °C or ±2 % of reading, whichever is greater.
    defaults = {"thermographer": member.pk, "date": datetime.date.today()}
    defaults |= {"camera_accuracy_c": 2.0, "camera_accuracy_pct": 2.0}
    if request.GET.get("site", "").isdigit():
        defaults["site"] = int(request.GET["site"])
    initial = SurveyForm.initial_in_unit(defaults, **member_units(member))
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
    initial = SurveyForm.initial_for(survey, **member_units(member))
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


THERMOGRAMS_PER_PAGE = 60


def _survey_thermograms(survey: Survey):
    return (
        survey.thermograms.select_related("asset")
        .annotate(mark_count=Count("marks"))
        .order_by("sequence", "id")
    )


@login_required
def survey_detail(request: HttpRequest, pk: int) -> HttpResponse:
    member = get_member(request)
    survey = get_survey_for_user(request, pk)
    survey = (
        surveys_for(member)
        .select_related(
            "site__client", "conditions", "thermographer__user", "reviewer__user", "camera"
        )
        .get(pk=survey.pk)
    )
    site_assets = assets_for(member).filter(site=survey.site_id)
    defaults = {"emissivity": survey.default_emissivity, "reflected_c": survey.default_reflected_c}
    upload_form = UploadForm(
        assets=site_assets.filter(retired_at__isnull=True),
        initial=UploadForm.initial_in_unit(defaults, **member_units(member)),
        **member_units(member),
    )
    # A day's import can be a thousand thermograms: the page shows them sixty at a time.
    page = Paginator(_survey_thermograms(survey), THERMOGRAMS_PER_PAGE).get_page(
        request.GET.get("page")
    )
    thermograms = list(page.object_list)
    logger_rows = loggers.survey_log_summary(survey)
    for thermogram in thermograms:
        thermogram.status_text = processing.thermogram_status_text(thermogram)
        thermogram.survey = survey
        thermogram.logged = (
            loggers.thermogram_logged_conditions(thermogram) if logger_rows else None
        )
        thermogram.taken = loggers.local_text(survey, thermogram.captured_at)
    ifov_mrad, ifov_source = instruments.survey_ifov(survey)
    context = {
        "survey": survey,
        "thermograms": thermograms,
        "page": page,
        "upload_form": upload_form,
        "conditions_checks": conditions_check(survey, **member_units(member)),
        "round": rounds.round_progress(survey),
        "ties_form": AssetTiesForm(
            thermograms=thermograms,
            assets=site_assets,
            suggested=rounds.suggested_ties(survey),
        )
        if site_assets.exists() and thermograms
        else None,
        "view_defaults_form": ViewDefaultsForm(
            initial={
                "palette": survey.default_palette or Thermogram._meta.get_field("palette").default,
                "span_rule": survey.default_span_rule,
            }
        ),
        "acknowledgements": Acknowledgement.objects.filter(finding__in=survey.findings.all())
        .select_related("finding")
        .order_by("-created_at"),
        "deleted_thermograms": Thermogram.all_objects.filter(
            survey=survey, deleted_at__isnull=False
        ).count(),
        "ifov_mrad": ifov_mrad,
        "ifov_source": ifov_source,
        "logger_rows": logger_rows,
        "logger_zone": loggers.survey_time_zone_name(survey),
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
        assets=assets_for(member).filter(site=survey.site_id),
        **member_units(member),
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
    """Status of every thermogram of the survey, polled by static/js/batch.js.

    Each row carries what the page shows of a thermogram once it is processed (thumbnail,
    workspace link, temperature range in the member's unit), so the page updates in place
    and a half-filled form on it is never lost to a reload.
    """
    member = get_member(request)
    survey = get_survey_for_user(request, pk)
    rows = []
    for thermogram in _survey_thermograms(survey):
        ready = thermogram.is_ready
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
                "workspace": reverse("survey:thermogram", args=[thermogram.pk]) if ready else None,
                "summary": f"{temp(thermogram.min_c, member)} … {temp(thermogram.max_c, member)}"
                f" · {thermogram.mark_count} mark{'s' if thermogram.mark_count != 1 else ''}"
                if ready
                else "",
            }
        )
    done = sum(row["status"] not in {"queued", "processing"} for row in rows)
    failed = sum(row["status"] in {"failed", "damaged"} for row in rows)
    return JsonResponse({"thermograms": rows, "done": done, "failed": failed, "total": len(rows)})


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
        assets=assets_for(member).filter(site=thermogram.survey.site_id),
        initial=ThermogramSettingsForm.initial_for(thermogram, **member_units(member))
        | {"captured_at": loggers.local_wall_clock(thermogram.survey, thermogram.captured_at)},
        **member_units(member),
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
    context = {
        "thermogram": thermogram,
        "form": form,
        "reprocess_form": reprocess_form,
        "locked": thermogram_hold(thermogram),
    }
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
