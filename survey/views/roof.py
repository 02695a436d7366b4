"""Pages of roof surveys: the roof plan with the thermograms placed on it, and the core or
moisture-meter checks of a finding."""

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import ValidationError
from django.http import Http404, HttpRequest, HttpResponse
from django.shortcuts import redirect, render
from django.views.decorators.http import require_GET, require_POST

from survey.access import (
    get_finding_for_user,
    get_member,
    get_survey_for_user,
    get_thermogram_for_user,
    require_editor,
)
from survey.files import serve_file
from survey.forms.roof import MoistureCheckForm, PlanPositionForm, RoofPlanForm
from survey.models import Survey, Thermogram
from survey.services import roof


def _roof_survey(request: HttpRequest, pk: int) -> Survey:
    survey = get_survey_for_user(request, pk)
    if survey.kind != Survey.Kind.ROOF:
        raise Http404("Only a roof survey has a roof plan.")
    return survey


@login_required
def roof_plan(request: HttpRequest, pk: int) -> HttpResponse:
    survey = _roof_survey(request, pk)
    form = RoofPlanForm()
    if request.method == "POST":
        require_editor(get_member(request))
        form = RoofPlanForm(request.POST, request.FILES)
        if form.is_valid():
            try:
                roof.roof_plan_upload(
                    survey=survey, uploaded_file=form.cleaned_data["plan"], user=request.user
                )
            except ValidationError as error:
                form.add_error("plan", error)
            else:
                messages.success(request, "Roof plan stored.")
                return redirect("survey:roof_plan", survey.pk)
    thermograms = survey.thermograms.filter(status=Thermogram.Status.READY)
    rows = [
        (t, PlanPositionForm(initial={"x_pct": t.plan_x_pct, "y_pct": t.plan_y_pct}, prefix=t.pk))
        for t in thermograms
    ]
    context = {"survey": survey, "form": form, "rows": rows}
    if survey.roof_plan:
        width, height = survey.roof_plan_width, survey.roof_plan_height
        context["placed"] = [
            (t, position, t.plan_x_pct * width / 100, t.plan_y_pct * height / 100)
            for t, position in rows
            if t.plan_x_pct is not None
        ]
        size = max(width, height)
        context |= {
            "marker_r": size / 60,
            "marker_stroke": size / 400,
            "marker_font": size / 50,
        }
    return render(request, "survey/roof_plan.html", context)


@login_required
@require_GET
def roof_plan_image(request: HttpRequest, pk: int) -> HttpResponse:
    survey = _roof_survey(request, pk)
    return serve_file(
        survey.roof_plan, download_name=survey.roof_plan_name or "plan", attachment=False
    )


@login_required
@require_POST
def thermogram_plan_position(request: HttpRequest, pk: int) -> HttpResponse:
    thermogram = get_thermogram_for_user(request, pk)
    require_editor(get_member(request))
    form = PlanPositionForm(request.POST, prefix=thermogram.pk)
    if not form.is_valid():
        problems = [m for errors in form.errors.values() for m in errors]
        messages.error(request, f"Thermogram {thermogram.sequence}: {' '.join(problems)}")
        return redirect("survey:roof_plan", thermogram.survey_id)
    try:
        roof.thermogram_place_on_plan(
            thermogram=thermogram,
            x_pct=form.cleaned_data["x_pct"],
            y_pct=form.cleaned_data["y_pct"],
            user=request.user,
        )
        messages.success(request, f"Thermogram {thermogram.sequence} placed on the plan.")
    except ValidationError as error:
        messages.error(request, " ".join(error.messages))
    return redirect("survey:roof_plan", thermogram.survey_id)


@login_required
@require_POST
def moisture_check_create(request: HttpRequest, pk: int) -> HttpResponse:
    finding = get_finding_for_user(request, pk)
    require_editor(get_member(request))
    form = MoistureCheckForm(request.POST, prefix=MoistureCheckForm.PREFIX)
    if not form.is_valid():
        problems = [
            f"{form.fields[name].label}: {' '.join(errs)}"
            for name, errs in form.errors.items()
            if name in form.fields
        ]
        messages.error(request, "Check not recorded. " + "; ".join(problems))
        return redirect("survey:finding", finding.pk)
    try:
        roof.moisture_check_add(finding=finding, user=request.user, **form.cleaned_data)
        messages.success(request, "Check recorded.")
    except ValidationError as error:
        messages.error(request, " ".join(error.messages))
    return redirect("survey:finding", finding.pk)
