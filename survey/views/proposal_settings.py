"""Pages of the proposal detectors' thresholds: an organization's per survey kind (admins),
and one survey's own (editors)."""

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import ValidationError
from django.http import HttpRequest, HttpResponse
from django.shortcuts import redirect, render

from survey.access import get_member, get_survey_for_user, require_admin, require_editor
from survey.forms.fields import add_service_error, submitted
from survey.forms.proposals import ProposalSettingsForm
from survey.models import Survey
from survey.services import proposals as services


@login_required
def proposal_settings(request: HttpRequest) -> HttpResponse:
    """The organization's thresholds, one form per survey kind."""
    member = get_member(request)
    require_admin(member)
    posted = request.POST.get("kind") if request.method == "POST" else None
    sections = []
    for kind, label in Survey.Kind.choices:
        row = services.organization_proposal_settings(member.organization, kind)
        form = ProposalSettingsForm(
            request.POST if posted == kind else None,
            kind=kind,
            unit=member.temperature_unit,
            prefix=kind,
            initial=ProposalSettingsForm.initial_for(row, kind, member.temperature_unit),
        )
        if posted == kind and form.is_valid():
            try:
                services.proposal_settings_save(row=row, user=request.user, **form.values())
            except ValidationError as error:
                add_service_error(form, error)
            else:
                messages.success(request, f"Proposal settings for {label.lower()} surveys saved.")
                return redirect("survey:proposal_settings")
        sections.append(
            {"kind": kind, "label": label, "form": form, "defaults": services.DEFAULTS[kind]}
        )
    return render(request, "survey/proposal_settings.html", {"sections": sections})


@login_required
def survey_proposal_settings(request: HttpRequest, pk: int) -> HttpResponse:
    """One survey's own thresholds; blank fields keep the organization's."""
    member = get_member(request)
    survey = get_survey_for_user(request, pk)
    require_editor(member)
    row = services.survey_proposal_settings(survey)
    form = ProposalSettingsForm(
        submitted(request),
        kind=survey.kind,
        unit=member.temperature_unit,
        initial=ProposalSettingsForm.initial_for(row, survey.kind, member.temperature_unit),
    )
    if request.method == "POST" and form.is_valid():
        try:
            services.proposal_settings_save(row=row, user=request.user, **form.values())
        except ValidationError as error:
            add_service_error(form, error)
        else:
            messages.success(request, "Proposal settings of this survey saved.")
            return redirect("survey:survey", pk=survey.pk)
    context = {
        "survey": survey,
        "form": form,
        "effective": services.effective_settings(survey),
    }
    return render(request, "survey/survey_proposal_settings.html", context)
