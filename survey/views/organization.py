"""The organization's own settings, kept by its admins."""

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.http import HttpRequest, HttpResponse
from django.shortcuts import redirect, render

from survey.access import get_member, require_admin
from survey.forms.fields import submitted
from survey.forms.register import OrganizationForm
from survey.services.members import organization_update_settings


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
    return render(request, "survey/organization.html", {"form": form})
