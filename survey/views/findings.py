"""Pages of the judgement layer: findings, assets, criteria tables, heat-loss estimates."""

import json
from urllib.parse import urlencode

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import ValidationError
from django.http import HttpRequest, HttpResponse
from django.shortcuts import redirect, render
from django.urls import reverse
from django.utils import timezone
from django.views.decorators.http import require_POST

from survey import severity
from survey.access import (
    assets_for,
    findings_for,
    get_asset_for_user,
    get_criteria_table_for_user,
    get_finding_for_user,
    get_member,
    get_reviewable_criteria_table_for_user,
    get_site_for_user,
    get_survey_for_user,
    get_thermogram_for_user,
    require_admin,
    require_editor,
    require_reviewer,
)
from survey.captions import mark_caption
from survey.cautions import cautions_for, cautions_for_kinds
from survey.charts import trend_svg
from survey.conditions import conditions_check
from survey.forms.fields import add_service_error, member_units
from survey.forms.findings import (
    CriteriaReviewForm,
    CriteriaRowsForm,
    FindingEditForm,
    FindingForm,
    FindingStatusForm,
    FindingVerifyOverrideForm,
    HeatLossForm,
    finding_label,
)
from survey.forms.roof import MoistureCheckForm
from survey.models import Finding
from survey.services import assets as asset_services
from survey.services import criteria_tables as table_services
from survey.services import findings as finding_services
from survey.services import rounds

OPEN = [Finding.Status.OPEN, Finding.Status.REPAIRED]


def _initial_marks(request: HttpRequest, thermogram) -> dict:
    ids = [i for i in request.GET.getlist("marks") if i.isdigit()]
    initial = {"marks": list(thermogram.marks.filter(pk__in=ids))}
    if request.GET.get("previous", "").isdigit():
        initial["previous"] = int(request.GET["previous"])
    if thermogram.asset_id:
        initial["asset"] = thermogram.asset_id
    return initial


def _first_suggestion(thermogram, initial: dict) -> dict | None:
    """Coming from the workspace with marks ticked: suggest at once by the first basis."""
    if not initial.get("marks"):
        return None
    basis = severity.BASES[thermogram.survey.kind][0][0]
    marks = sorted(initial["marks"], key=lambda m: (len(m.label), m.label))
    try:
        return finding_services.finding_suggest(
            survey=thermogram.survey, basis=basis, marks=marks, thermogram=thermogram
        )
    except ValidationError:
        return None


@login_required
def finding_create(request: HttpRequest, pk: int) -> HttpResponse:
    thermogram = get_thermogram_for_user(request, pk)
    member = get_member(request)
    require_editor(member)
    data = request.POST if request.method == "POST" else None
    form = FindingForm(
        data,
        thermogram=thermogram,
        initial=_initial_marks(request, thermogram),
        **member_units(member),
    )
    suggestion = _first_suggestion(thermogram, form.initial) if data is None else None
    if data is not None and form.is_valid():
        try:
            suggestion = finding_services.finding_suggest(**form.suggest_arguments())
            if "save" in request.POST:
                finding = finding_services.finding_create(
                    survey=thermogram.survey,
                    user=request.user,
                    suggestion=suggestion,
                    marks=form.suggest_arguments()["marks"],
                    thermogram=thermogram,
                    **form.create_arguments(),
                )
                messages.success(request, "Finding recorded.")
                return redirect("survey:finding", finding.pk)
        except ValidationError as error:
            add_service_error(form, error)
    context = {"form": form, "thermogram": thermogram, "survey": thermogram.survey}
    context |= _marks_picture(thermogram, _chosen_marks(form))
    return render(request, "survey/findings/form.html", context | {"suggestion": suggestion})


def _chosen_marks(form: FindingForm) -> list:
    """The marks ticked on the form, or sent from the workspace."""
    cleaned = getattr(form, "cleaned_data", None)
    return list(cleaned.get("marks") or []) if cleaned is not None else form.initial["marks"]


def _marks_picture(thermogram, marks: list) -> dict:
    """The picture of the thermogram with `marks` drawn, for the side of a finding."""
    marks = [m for m in marks if m.thermogram_id == getattr(thermogram, "pk", None)]
    if not marks or not thermogram.is_ready:
        return {}
    marks = sorted(marks, key=lambda m: (len(m.label), m.label))
    query = urlencode([("marks", m.pk) for m in marks])
    url = reverse("survey:thermogram_marks_picture", args=[thermogram.pk])
    titles = ", ".join(m.title for m in marks)
    alt = f"Thermogram {thermogram} with mark{'s' if len(marks) > 1 else ''} {titles}"
    return {"marks_picture_url": f"{url}?{query}", "marks_picture_alt": alt}


@login_required
def finding_detail(request: HttpRequest, pk: int) -> HttpResponse:
    finding = get_finding_for_user(request, pk)
    marks = sorted(
        finding.marks.select_related("thermogram__asset"), key=lambda m: (len(m.label), m.label)
    )
    for mark in marks:
        mark.caption = mark_caption(mark)
    context = {
        "finding": finding,
        "marks": marks,
        "survey": finding.survey,
        "category": severity.category_label(finding.survey.kind, finding.category),
        "status_form": FindingStatusForm(initial={"status": finding.status}),
        "override_form": FindingVerifyOverrideForm(),
        "verification": asset_services.repair_verification(finding),
        "verified_text": finding_services.verification_text(finding),
        "changes": finding_services.finding_changes(finding),
        "previous_label": finding_label(finding.previous) if finding.previous_id else "",
        "estimates": finding.heat_loss_estimates.all(),
        "cautions": cautions_for(finding.survey.kind),
    }
    context |= _marks_picture(finding.thermogram, marks)
    if finding.survey.kind == "roof":
        context["moisture_checks"] = finding.moisture_checks.all()
        context["moisture_form"] = MoistureCheckForm(
            initial={"checked_on": timezone.localdate()}, prefix=MoistureCheckForm.PREFIX
        )
    return render(request, "survey/findings/detail.html", context)


@login_required
@require_POST
def finding_rejudge(request: HttpRequest, pk: int) -> HttpResponse:
    finding = get_finding_for_user(request, pk)
    require_editor(get_member(request))
    try:
        finding_services.finding_rejudge(finding=finding, user=request.user)
        messages.success(request, "Judged again on the current readings.")
    except ValidationError as error:
        messages.error(request, " ".join(error.messages))
    return redirect("survey:finding", finding.pk)


@login_required
@require_POST
def finding_verify_override(request: HttpRequest, pk: int) -> HttpResponse:
    finding = get_finding_for_user(request, pk)
    require_editor(get_member(request))
    form = FindingVerifyOverrideForm(request.POST)
    if not form.is_valid():
        messages.error(request, "Say how the repair was confirmed without a later measurement.")
        return redirect("survey:finding", finding.pk)
    try:
        finding_services.finding_verify_override(
            finding=finding, user=request.user, reason=form.cleaned_data["reason"]
        )
        messages.success(request, "Verified, with your reason kept and printed.")
    except ValidationError as error:
        messages.error(request, " ".join(error.messages))
    return redirect("survey:finding", finding.pk)


@login_required
def finding_edit(request: HttpRequest, pk: int) -> HttpResponse:
    finding = get_finding_for_user(request, pk)
    require_editor(get_member(request))
    form = FindingEditForm(request.POST or None, finding=finding)
    if request.method == "POST" and form.is_valid():
        try:
            finding_services.finding_update(finding=finding, user=request.user, **form.cleaned_data)
        except ValidationError as error:
            add_service_error(form, error)
            finding.refresh_from_db()
        else:
            messages.success(request, "Finding updated.")
            return redirect("survey:finding", finding.pk)
    return render(request, "survey/findings/edit.html", {"form": form, "finding": finding})


@login_required
@require_POST
def finding_status(request: HttpRequest, pk: int) -> HttpResponse:
    finding = get_finding_for_user(request, pk)
    require_editor(get_member(request))
    form = FindingStatusForm(request.POST)
    if not form.is_valid():
        messages.error(request, " ".join(form.errors.get("status", ["Choose open or repaired."])))
        return redirect("survey:finding", finding.pk)
    try:
        finding_services.finding_set_status(finding=finding, user=request.user, **form.cleaned_data)
        messages.success(request, f"Status set to {finding.get_status_display().lower()}.")
    except ValidationError as error:
        messages.error(request, " ".join(error.messages))
    return redirect("survey:finding", finding.pk)


@login_required
@require_POST
def finding_verify(request: HttpRequest, pk: int) -> HttpResponse:
    finding = get_finding_for_user(request, pk)
    require_editor(get_member(request))
    try:
        asset_services.finding_verify(finding=finding, user=request.user)
        messages.success(request, "Repair verified by the later measurement.")
    except ValidationError as error:
        messages.error(request, " ".join(error.messages))
    if request.POST.get("next") == "asset" and finding.asset_id:
        return redirect("survey:asset", finding.asset_id)
    return redirect("survey:finding", finding.pk)


@login_required
def survey_findings(request: HttpRequest, pk: int) -> HttpResponse:
    survey = get_survey_for_user(request, pk)
    findings = _with_changes(
        survey.findings.select_related("thermogram", "asset", "survey")
        .prefetch_related("thermogram__marks__reference_mark")
        .order_by("level", "created_at")
    )
    context = {
        "survey": survey,
        "findings": findings,
        "heat_loss_refusal": finding_services.heat_loss_refusal(survey),
        "thermograms": survey.thermograms.filter(status="ready"),
        "conditions_checks": conditions_check(survey),
        "estimates": survey.heat_loss_estimates.select_related("mark", "finding"),
        "cautions": cautions_for(survey.kind),
    }
    return render(request, "survey/findings/survey_findings.html", context)


@login_required
def site_findings(request: HttpRequest, pk: int) -> HttpResponse:
    site = get_site_for_user(request, pk)
    findings = (
        findings_for(get_member(request))
        .filter(survey__site=site, status__in=OPEN)
        .select_related("survey", "asset", "thermogram")
        .prefetch_related("thermogram__marks__reference_mark")
        .order_by("level", "survey__date", "created_at")
    )
    findings = _with_changes(findings)
    kinds = sorted({f.survey.kind for f in findings})
    context = {"site": site, "findings": findings, "cautions": cautions_for_kinds(kinds)}
    return render(request, "survey/findings/site_findings.html", context)


def _with_changes(findings) -> list:
    """The findings, each with `changes`: what changed since it was judged."""
    findings = list(findings)
    for finding in findings:
        finding.changes = finding_services.finding_changes(finding)
    return findings


@login_required
def asset_detail(request: HttpRequest, pk: int) -> HttpResponse:
    asset = get_asset_for_user(request, pk)
    unit = get_member(request).temperature_unit
    visits = asset_services.asset_history(asset)
    kinds = sorted({v["survey"].kind for v in visits})
    context = {
        "asset": asset,
        "due": rounds.register_states(
            assets_for(get_member(request)).filter(pk=asset.pk), timezone.localdate()
        )[0],
        "visits": visits,
        "chart": _asset_chart(asset, visits, unit),
        "verifications": asset_services.asset_verifications(asset, visits),
        "cautions": cautions_for_kinds(kinds),
    }
    return render(request, "survey/assets/detail.html", context)


def _asset_chart(asset, visits, unit: str = "C") -> str:
    points = asset_services.trend_points(visits)
    thresholds = []
    for basis in ("similar", "ambient"):
        if any(v["key_rise"] and v["key_rise"]["basis"] == basis for v in visits):
            table = table_services.criteria_table_for(organization=asset.organization, basis=basis)
            threshold = severity.no_finding_below(table.rows)
            if threshold is not None:
                thresholds.append((threshold, f"{basis}: no finding below {threshold:g} K"))
    points, thresholds, label = asset_services.trend_in_unit(points, thresholds, unit)
    return trend_svg(points, 560, 220, label, title=f"Rise at {asset}", thresholds=thresholds)


@login_required
def asset_trend_svg(request: HttpRequest, pk: int) -> HttpResponse:
    asset = get_asset_for_user(request, pk)
    unit = get_member(request).temperature_unit
    svg = _asset_chart(asset, asset_services.asset_history(asset), unit)
    return HttpResponse(svg, content_type="image/svg+xml")


@login_required
def heat_loss_create(request: HttpRequest, pk: int) -> HttpResponse:
    survey = get_survey_for_user(request, pk)
    member = get_member(request)
    require_editor(member)
    refusal = finding_services.heat_loss_refusal(survey)
    if refusal:
        context = {"survey": survey, "refusal": refusal}
        return render(request, "survey/findings/heat_loss_form.html", context)
    initial = {k: request.GET[k] for k in ("mark", "finding") if request.GET.get(k, "").isdigit()}
    form = HeatLossForm(
        request.POST or None, survey=survey, initial=initial, **member_units(member)
    )
    if request.method == "POST" and form.is_valid():
        try:
            finding_services.heat_loss_estimate_create(
                survey=survey, user=request.user, **form.cleaned_data
            )
        except ValidationError as error:
            add_service_error(form, error)
        else:
            messages.success(request, "Heat-loss estimate added.")
            return redirect("survey:survey_findings", survey.pk)
    context = {
        "form": form,
        "survey": survey,
        "applies": finding_services.HEAT_LOSS_APPLIES,
        "cautions": cautions_for(survey.kind, heat_loss=True),
    }
    return render(request, "survey/findings/heat_loss_form.html", context)


@login_required
def criteria_tables(request: HttpRequest) -> HttpResponse:
    member = get_member(request)
    tables = [
        table_services.criteria_table_for(organization=member.organization, basis=basis)
        for basis in severity.TABLE_KEY_FOR_BASIS
    ]
    rows = [
        {
            "table": table,
            "basis": table_services.table_basis(table),
            "review_form": CriteriaReviewForm(
                initial={"basis": table_services.table_basis(table)}, prefix=f"t{table.pk}"
            )
            if member.can_review
            else None,
        }
        for table in tables
    ]
    context = {"rows": rows, "unreviewed_text": table_services.UNREVIEWED_TEXT}
    return render(request, "survey/findings/criteria_tables.html", context)


@login_required
@require_POST
def criteria_copy(request: HttpRequest) -> HttpResponse:
    member = get_member(request)
    require_admin(member)
    table_services.criteria_table_copy_defaults(organization=member.organization, user=request.user)
    messages.success(request, "Your organization now has its own copy of the tables to edit.")
    return redirect("survey:criteria_tables")


@login_required
@require_POST
def criteria_review(request: HttpRequest, pk: int) -> HttpResponse:
    """A reviewer or admin records the firm's review of a table and the basis it prints."""
    member = get_member(request)
    require_reviewer(member)
    table = get_reviewable_criteria_table_for_user(request, pk)
    form = CriteriaReviewForm(request.POST, prefix=f"t{pk}")
    if form.is_valid():
        try:
            table = table_services.criteria_table_review(
                organization=member.organization,
                table=table,
                member=member,
                basis=form.cleaned_data["basis"],
            )
        except ValidationError as error:
            add_service_error(form, error)
        else:
            messages.success(request, f"Your review of {table.name} is recorded.")
            return redirect("survey:criteria_tables")
    for error in form.errors.values():
        messages.error(request, " ".join(error))
    return redirect("survey:criteria_tables")


@login_required
def criteria_edit(request: HttpRequest, pk: int) -> HttpResponse:
    member = get_member(request)
    require_admin(member)
    table = get_criteria_table_for_user(request, pk)
    form = CriteriaRowsForm(
        request.POST or None,
        initial={
            "rows": json.dumps(table.rows, indent=2, ensure_ascii=False),
            "source": table.source,
        },
    )
    if request.method == "POST" and form.is_valid():
        try:
            table_services.criteria_table_update(
                table=table, user=request.user, **form.cleaned_data
            )
        except ValidationError as error:
            add_service_error(form, error)
        else:
            messages.success(request, f"{table.name} saved.")
            return redirect("survey:criteria_tables")
    return render(request, "survey/findings/criteria_edit.html", {"form": form, "table": table})
