"""Pages of clients, sites and the asset register: details, edits, CSV, rounds and due lists.

Each view fetches through survey/access.py, validates with a form and calls one service.
"""

import datetime

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import ValidationError
from django.db.models import Count, Q
from django.http import HttpRequest, HttpResponse
from django.shortcuts import redirect, render
from django.urls import reverse
from django.utils import timezone
from django.utils.http import content_disposition_header
from django.views.decorators.http import require_GET, require_POST

from survey.access import (
    assets_for,
    clients_for,
    get_asset_for_user,
    get_client_for_user,
    get_member,
    get_round_stop_for_user,
    get_site_for_user,
    get_survey_for_user,
    instruments_for,
    members_for,
    require_editor,
    sites_for,
    surveys_for,
)
from survey.forms.fields import add_service_error, form_errors_text, member_units, submitted
from survey.forms.register import (
    AssetForm,
    AssetImportForm,
    AssetTiesForm,
    SkipForm,
    ViewDefaultsForm,
)
from survey.forms.surveys import ClientForm, SiteForm, SurveyForm
from survey.services import register, rounds, surveys


def _today() -> datetime.date:
    return timezone.localdate()


def _survey_url(pk: int) -> str:
    return reverse("survey:survey", args=[pk])


# --- clients ---------------------------------------------------------------------------------


@login_required
def client_detail(request: HttpRequest, pk: int) -> HttpResponse:
    client = get_client_for_user(request, pk)
    member = get_member(request)
    sites = (
        sites_for(member)
        .filter(client=client)
        .annotate(survey_count=Count("surveys", filter=Q(surveys__status="active")))
    )
    recent = surveys_for(member).filter(site__client=client).select_related("site")[:20]
    context = {"client": client, "sites": sites, "surveys": recent}
    return render(request, "survey/register/client_detail.html", context)


@login_required
def client_edit(request: HttpRequest, pk: int) -> HttpResponse:
    client = get_client_for_user(request, pk)
    require_editor(get_member(request))
    initial = {name: getattr(client, name) for name in ClientForm.base_fields}
    form = ClientForm(submitted(request), initial=initial)
    if request.method == "POST" and form.is_valid():
        try:
            surveys.client_update(client=client, user=request.user, **form.cleaned_data)
        except ValidationError as error:
            add_service_error(form, error)
        else:
            messages.success(request, f"Client {client} saved.")
            return redirect("survey:client", pk=client.pk)
    context = {"form": form, "title": f"Edit {client}", "back": reverse("survey:client", args=[pk])}
    return render(request, "survey/register/edit.html", context)


# --- sites -----------------------------------------------------------------------------------


def _site_page(request: HttpRequest, site, asset_form: AssetForm, status: int = 200):
    member = get_member(request)
    assets = assets_for(member).filter(site=site).order_by("round_order", "name", "id")
    states = rounds.register_states(assets, _today())
    context = {
        "site": site,
        "states": states,
        "due_count": sum(state.is_due for state in states),
        "surveys": surveys_for(member).filter(site=site)[:20],
        "last_survey": rounds.last_survey(site),
        "asset_form": asset_form,
    }
    return render(request, "survey/register/site_detail.html", context, status=status)


@login_required
def site_detail(request: HttpRequest, pk: int) -> HttpResponse:
    return _site_page(request, get_site_for_user(request, pk), AssetForm())


@login_required
def site_edit(request: HttpRequest, pk: int) -> HttpResponse:
    site = get_site_for_user(request, pk)
    member = get_member(request)
    require_editor(member)
    initial = {"client": site.client_id, "name": site.name, "address": site.address}
    form = SiteForm(submitted(request), clients=clients_for(member), initial=initial)
    if request.method == "POST" and form.is_valid():
        try:
            surveys.site_update(site=site, user=request.user, **form.cleaned_data)
        except ValidationError as error:
            add_service_error(form, error)
        else:
            messages.success(request, f"Site {site} saved.")
            return redirect("survey:site", pk=site.pk)
    context = {"form": form, "title": f"Edit {site}", "back": reverse("survey:site", args=[pk])}
    return render(request, "survey/register/edit.html", context)


@login_required
def site_visit(request: HttpRequest, pk: int) -> HttpResponse:
    """A new visit of the site: the survey form filled from the last visit, and its round."""
    site = get_site_for_user(request, pk)
    member = get_member(request)
    require_editor(member)
    fields, conditions, previous = rounds.visit_defaults(site)
    today = _today()
    initial = SurveyForm.initial_from_values(
        fields | {"date": today, "site": site.pk}, conditions, **member_units(member)
    )
    if previous is None:
        initial |= {"thermographer": member.pk, "camera_accuracy_c": 2.0}
        initial |= {"camera_accuracy_pct": 2.0}
    form = SurveyForm(
        submitted(request),
        sites=sites_for(member).filter(pk=site.pk),
        members=members_for(member),
        instruments=instruments_for(member),
        initial=initial,
        **member_units(member),
    )
    if request.method == "POST" and form.is_valid():
        values = form.survey_values() | {
            "default_palette": fields.get("default_palette", ""),
            "default_span_rule": fields.get("default_span_rule", "auto"),
        }
        try:
            survey = rounds.round_start(
                organization=member.organization,
                user=request.user,
                conditions=form.conditions_values(),
                **values,
            )
        except ValidationError as error:
            add_service_error(form, error)
        else:
            stops = survey.round_stops.count()
            messages.success(
                request,
                f"Visit created with {stops} asset(s) due on its round. Upload the "
                "thermograms and tie each to its asset below.",
            )
            return redirect("survey:survey", pk=survey.pk)
    date = form.cleaned_data.get("date") if form.is_bound and form.is_valid() else today
    due = rounds.assets_due(site=site, today=date or today)
    context = {"form": form, "site": site, "previous": previous, "due": due}
    return render(request, "survey/register/site_visit.html", context)


# --- assets ----------------------------------------------------------------------------------


@login_required
@require_POST
def asset_create(request: HttpRequest, pk: int) -> HttpResponse:
    """Register an asset from the site page; a refused one comes back with its fields."""
    site = get_site_for_user(request, pk)
    require_editor(get_member(request))
    form = AssetForm(request.POST)
    if form.is_valid():
        try:
            asset = surveys.asset_create(site=site, user=request.user, **form.cleaned_data)
        except ValidationError as error:
            add_service_error(form, error)
        else:
            messages.success(request, f"Asset {asset} registered.")
            return redirect("survey:site", pk=site.pk)
    messages.error(request, "The asset was not registered: see the marked fields below.")
    return _site_page(request, site, form)


@login_required
def asset_edit(request: HttpRequest, pk: int) -> HttpResponse:
    asset = get_asset_for_user(request, pk)
    require_editor(get_member(request))
    form = AssetForm(submitted(request), initial=AssetForm.initial_for(asset))
    if request.method == "POST" and form.is_valid():
        try:
            register.asset_update(asset=asset, user=request.user, **form.cleaned_data)
        except ValidationError as error:
            add_service_error(form, error)
        else:
            messages.success(request, f"Asset {asset} saved.")
            return redirect("survey:asset", pk=asset.pk)
    context = {"form": form, "title": f"Edit {asset}", "back": reverse("survey:asset", args=[pk])}
    return render(request, "survey/register/edit.html", context)


@login_required
@require_POST
def asset_retire(request: HttpRequest, pk: int) -> HttpResponse:
    """Retire an asset (kept for its history), or reinstate a retired one."""
    asset = get_asset_for_user(request, pk)
    require_editor(get_member(request))
    if asset.is_retired:
        register.asset_reinstate(asset=asset, user=request.user)
        messages.success(request, f"{asset} is back in service and counts for due dates.")
    else:
        register.asset_retire(asset=asset, user=request.user)
        messages.success(request, f"{asset} retired: kept with its history, never due.")
    return redirect("survey:asset", pk=asset.pk)


@login_required
@require_GET
def assets_export(request: HttpRequest, pk: int) -> HttpResponse:
    site = get_site_for_user(request, pk)
    response = HttpResponse(register.assets_csv(site), content_type="text/csv; charset=utf-8")
    response["Content-Disposition"] = content_disposition_header(True, f"assets-site-{site.pk}.csv")
    return response


@login_required
def assets_import(request: HttpRequest, pk: int) -> HttpResponse:
    site = get_site_for_user(request, pk)
    require_editor(get_member(request))
    form = AssetImportForm(submitted(request), request.FILES or None)
    errors = []
    if request.method == "POST" and form.is_valid():
        upload = form.cleaned_data["file"]
        data = upload.read(register.MAX_IMPORT_BYTES + 1)
        try:
            result = register.assets_import(site=site, user=request.user, data=data)
        except register.ImportRefused as refused:
            errors = refused.result.errors
            form.add_error("file", refused.messages[0])
        else:
            messages.success(
                request,
                f"Imported the register: {result.created} asset(s) added, "
                f"{result.updated} updated.",
            )
            return redirect("survey:site", pk=site.pk)
    context = {
        "form": form,
        "site": site,
        "errors": errors[: register.MAX_ERRORS_SHOWN],
        "more_errors": max(0, len(errors) - register.MAX_ERRORS_SHOWN),
        "columns": register.CSV_COLUMNS,
    }
    return render(request, "survey/register/assets_import.html", context)


@login_required
@require_GET
def assets_due(request: HttpRequest) -> HttpResponse:
    member = get_member(request)
    due = rounds.assets_due(organization=member.organization, today=_today())
    context = {"due": due, "soon_days": rounds.DUE_SOON_DAYS}
    return render(request, "survey/register/assets_due.html", context)


# --- a survey's round, asset ties and view defaults -------------------------------------------


@login_required
@require_POST
def round_stop_skip(request: HttpRequest, pk: int) -> HttpResponse:
    stop = get_round_stop_for_user(request, pk)
    require_editor(get_member(request))
    form = SkipForm(request.POST)
    if not form.is_valid():
        messages.error(request, f"Not saved. {form_errors_text(form)}")
    else:
        try:
            rounds.round_stop_skip(stop=stop, user=request.user, **form.cleaned_data)
        except ValidationError as error:
            messages.error(request, " ".join(error.messages))
        else:
            reason = form.cleaned_data["reason"]
            text = f"skipped: {reason}" if reason else "waiting for its thermograms again"
            messages.success(request, f"{stop.asset} {text}.")
    return redirect(f"{_survey_url(stop.survey_id)}#round")


@login_required
@require_POST
def survey_tie_assets(request: HttpRequest, pk: int) -> HttpResponse:
    """Tie every thermogram of the survey to its asset in one step."""
    survey = get_survey_for_user(request, pk)
    member = get_member(request)
    require_editor(member)
    form = AssetTiesForm(
        request.POST,
        thermograms=survey.thermograms.order_by("sequence", "id"),
        assets=assets_for(member).filter(site=survey.site_id),
    )
    if not form.is_valid():
        messages.error(request, f"Nothing was tied. {form_errors_text(form)}")
    else:
        try:
            changed = rounds.thermograms_tie_assets(
                survey=survey, user=request.user, ties=form.ties()
            )
        except ValidationError as error:
            messages.error(request, f"Nothing was tied. {' '.join(error.messages)}")
        else:
            messages.success(request, f"Assets saved: {changed} thermogram(s) changed.")
    return redirect(f"{_survey_url(survey.pk)}#assets")


@login_required
@require_POST
def survey_view_defaults(request: HttpRequest, pk: int) -> HttpResponse:
    survey = get_survey_for_user(request, pk)
    require_editor(get_member(request))
    form = ViewDefaultsForm(request.POST)
    if not form.is_valid():
        messages.error(request, f"Not saved. {form_errors_text(form)}")
        return redirect(f"{_survey_url(survey.pk)}#view-defaults")
    apply_to_all = "apply" in request.POST
    try:
        result = surveys.survey_set_view_defaults(
            survey=survey, user=request.user, apply_to_all=apply_to_all, **form.cleaned_data
        )
    except ValidationError as error:
        messages.error(request, " ".join(error.messages))
        return redirect(f"{_survey_url(survey.pk)}#view-defaults")
    if apply_to_all:
        text = f"Applied to {result['applied']} thermogram(s); their previews are redrawn."
        if result["kept"]:
            text += f" Kept as issued: {', '.join(result['kept'])}."
        messages.success(request, text)
    else:
        messages.success(request, "View defaults saved for thermograms uploaded from now on.")
    return redirect(f"{_survey_url(survey.pk)}#view-defaults")
