"""The organization's own settings, kept by its admins."""

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import ValidationError
from django.http import HttpRequest, HttpResponse
from django.shortcuts import redirect, render
from django.views.decorators.http import require_POST

from survey.access import get_member, require_admin
from survey.forms.fields import add_service_error, submitted
from survey.forms.letterhead import LetterheadForm
from survey.forms.register import OrganizationForm
from survey.services.letterhead import organization_update_letterhead
from survey.services.members import organization_update_settings


def _page(request: HttpRequest, form=None, letterhead_form=None) -> HttpResponse:
    organization = get_member(request).organization
    context = {
        "form": form
        or OrganizationForm(initial={"allow_self_review": organization.allow_self_review}),
        "letterhead_form": letterhead_form
        or LetterheadForm(initial=LetterheadForm.initial_for(organization)),
        "organization": organization,
    }
    return render(request, "survey/organization.html", context)


@login_required
def organization_settings(request: HttpRequest) -> HttpResponse:
    member = get_member(request)
    require_admin(member)
    organization = member.organization
    form = OrganizationForm(
        submitted(request), initial={"allow_self_review": organization.allow_self_review}
    )
    if request.method == "POST" and form.is_valid():
        organization_update_settings(
            organization=organization, user=request.user, **form.cleaned_data
        )
        messages.success(request, "Organization settings saved.")
        return redirect("survey:organization")
    return _page(request, form=form)


@login_required
@require_POST
def organization_letterhead(request: HttpRequest) -> HttpResponse:
    """The letterhead, logo, re-inspection interval and level times (one form)."""
    member = get_member(request)
    require_admin(member)
    form = LetterheadForm(request.POST, request.FILES)
    if form.is_valid():
        try:
            organization_update_letterhead(
                organization=member.organization, user=request.user, **form.cleaned_data
            )
        except ValidationError as error:
            add_service_error(form, error)
        else:
            messages.success(request, "Letterhead and report wording saved.")
            return redirect("survey:organization")
    return _page(request, letterhead_form=form)
