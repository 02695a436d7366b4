"""Pages of mark templates: save a thermogram's marks under a name, list and remove
templates, apply one to thermograms of a survey (automatic alignment or matching points)."""

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import ValidationError
from django.http import HttpRequest, HttpResponse
from django.shortcuts import redirect, render
from django.urls import reverse
from django.views.decorators.http import require_GET, require_POST

from survey.access import (
    get_mark_template_for_user,
    get_member,
    get_survey_for_user,
    get_thermogram_for_user,
    mark_templates_for,
    require_editor,
)
from survey.forms.fields import add_service_error, submitted
from survey.forms.mark_templates import PointAlignmentForm, TemplateApplyForm, TemplateCreateForm
from survey.models import Thermogram
from survey.services import mark_templates as services


@login_required
def mark_template_list(request: HttpRequest) -> HttpResponse:
    member = get_member(request)
    templates = mark_templates_for(member).select_related("created_by")
    return render(request, "survey/mark_templates.html", {"templates": templates})


@login_required
def template_create(request: HttpRequest, pk: int) -> HttpResponse:
    """Save the marks of thermogram `pk` as a named template."""
    member = get_member(request)
    thermogram = get_thermogram_for_user(request, pk)
    require_editor(member)
    form = TemplateCreateForm(submitted(request))
    if request.method == "POST" and form.is_valid():
        try:
            template = services.mark_template_create(
                thermogram=thermogram, name=form.cleaned_data["name"], user=request.user
            )
        except ValidationError as error:
            add_service_error(form, error)
        else:
            messages.success(
                request, f"Template {template} saved with {len(template.marks)} marks."
            )
            return redirect("survey:mark_template", pk=template.pk)
    marks = thermogram.marks.order_by("id")
    context = {"thermogram": thermogram, "form": form, "marks": marks}
    return render(request, "survey/mark_template_form.html", context)


@login_required
def mark_template_detail(request: HttpRequest, pk: int) -> HttpResponse:
    template = get_mark_template_for_user(request, pk)
    return render(request, "survey/mark_template_detail.html", {"template": template})


@login_required
@require_POST
def mark_template_delete(request: HttpRequest, pk: int) -> HttpResponse:
    member = get_member(request)
    template = get_mark_template_for_user(request, pk)
    require_editor(member)
    services.mark_template_delete(template=template, user=request.user)
    messages.success(request, f"Template {template} removed.")
    return redirect("survey:mark_templates")


@login_required
@require_GET
def mark_template_picture(request: HttpRequest, pk: int) -> HttpResponse:
    """The template's thermogram as a PNG, for clicking matching points."""
    template = get_mark_template_for_user(request, pk)
    response = HttpResponse(services.template_picture_png(template), content_type="image/png")
    response["Content-Disposition"] = f'inline; filename="template-{template.pk}.png"'
    response["X-Content-Type-Options"] = "nosniff"
    return response


def _ready_thermograms(survey):
    return survey.thermograms.filter(status=Thermogram.Status.READY).order_by("sequence", "id")


@login_required
def template_apply(request: HttpRequest, pk: int) -> HttpResponse:
    """Apply a template to thermograms of survey `pk`; results per thermogram."""
    member = get_member(request)
    survey = get_survey_for_user(request, pk)
    require_editor(member)
    form = TemplateApplyForm(
        submitted(request),
        templates=mark_templates_for(member),
        thermograms=_ready_thermograms(survey),
        initial={"template": request.GET.get("template")} if request.method == "GET" else None,
    )
    results = []
    if request.method == "POST" and form.is_valid():
        template, chosen = form.cleaned_data["template"], list(form.cleaned_data["thermograms"])
        if form.cleaned_data["method"] == "points":
            return redirect(_align_url(template.pk, [t.pk for t in chosen]))
        for thermogram in chosen:
            try:
                result = services.mark_template_apply(
                    template=template, thermogram=thermogram, user=request.user
                )
            except ValidationError as error:
                result = services.TemplateResult(
                    thermogram=thermogram, needs_points=" ".join(error.messages)
                )
            results.append(
                {
                    "result": result,
                    "align_url": _align_url(template.pk, [thermogram.pk]),
                    "workspace_url": reverse("survey:thermogram", args=[thermogram.pk]),
                }
            )
    context = {"survey": survey, "form": form, "results": results}
    return render(request, "survey/template_apply.html", context)


def _align_url(template_pk: int, thermogram_pks: list[int]) -> str:
    first, rest = thermogram_pks[0], thermogram_pks[1:]
    url = reverse("survey:template_align", args=[template_pk, first])
    return url + (f"?then={','.join(map(str, rest))}" if rest else "")


def _queue(request: HttpRequest) -> list[int]:
    text = request.POST.get("then") or request.GET.get("then") or ""
    return [int(part) for part in text.split(",") if part.isdigit()][:500]


@login_required
def template_align(request: HttpRequest, pk: int, thermogram_pk: int) -> HttpResponse:
    """Align one thermogram to a template by matching points, then place the marks."""
    member = get_member(request)
    template = get_mark_template_for_user(request, pk)
    thermogram = get_thermogram_for_user(request, thermogram_pk)
    require_editor(member)
    queue = _queue(request)
    form = PointAlignmentForm(
        submitted(request),
        template_size=(template.width, template.height),
        image_size=(thermogram.width or 1, thermogram.height or 1),
    )
    if request.method == "POST" and form.is_valid():
        try:
            result = services.mark_template_apply(
                template=template,
                thermogram=thermogram,
                user=request.user,
                method="points",
                pairs=form.pairs(),
            )
        except ValidationError as error:
            add_service_error(form, error)
        else:
            messages.success(request, f"{thermogram}: {result.summary}.")
            if queue:
                return redirect(_align_url(template.pk, queue))
            return redirect("survey:survey", pk=thermogram.survey_id)
    context = {
        "template": template,
        "thermogram": thermogram,
        "form": form,
        "pairs": [
            [form[f"{side}{n}_{axis}"] for side in ("template", "image") for axis in "xy"]
            for n in (1, 2, 3)
        ],
        "then": ",".join(map(str, queue)),
        "remaining": len(queue),
    }
    return render(request, "survey/template_align.html", context)
