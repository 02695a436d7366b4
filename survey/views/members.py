"""Members page: admins add members, change their role, deactivate and reactivate them."""

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import ValidationError
from django.http import HttpRequest, HttpResponse
from django.shortcuts import redirect, render
from django.utils.cache import add_never_cache_headers

from survey.access import get_member, get_member_for_user, members_for, require_admin
from survey.forms.fields import add_service_error, submitted
from survey.forms.letterhead import QualificationForm
from survey.forms.members import MemberAddForm, MemberEditForm
from survey.models import Member
from survey.services import members as services
from survey.services.letterhead import member_update_qualification


@login_required
def member_list(request: HttpRequest) -> HttpResponse:
    admin = get_member(request)
    require_admin(admin)
    form = MemberAddForm(submitted(request))
    added, password = None, None
    if request.method == "POST" and form.is_valid():
        try:
            added, password = services.member_add(
                organization=admin.organization, actor=request.user, **form.cleaned_data
            )
        except ValidationError as error:
            add_service_error(form, error)
        else:
            if password is None:
                messages.success(request, f"{added.display_name} added.")
                return redirect("survey:members")
            form = MemberAddForm()
    people = members_for(admin).order_by("-user__is_active", "user__username")
    context = {"people": people, "form": form, "added": added, "password": password}
    response = render(request, "survey/members.html", context)
    if password:  # shown once: never kept by a browser or proxy cache
        add_never_cache_headers(response)
    return response


@login_required
def member_edit(request: HttpRequest, pk: int) -> HttpResponse:
    admin = get_member(request)
    person = get_member_for_user(request, pk)
    require_admin(admin)
    action = request.POST.get("action", "save") if request.method == "POST" else None
    if action in {"deactivate", "reactivate"}:
        return _set_active(request, person, action)
    if action == "qualification":
        return _qualification(request, person)
    initial = {"role": person.role, "qualification": person.qualification}
    form = MemberEditForm(submitted(request), initial=initial)
    if action == "save" and form.is_valid():
        try:
            services.member_update(member=person, actor=request.user, **form.cleaned_data)
        except ValidationError as error:
            add_service_error(form, error)
        else:
            messages.success(request, f"{person.display_name} saved.")
            return redirect("survey:members")
    return _edit_page(request, person, form=form)


def _edit_page(request: HttpRequest, person: Member, form=None, qualification_form=None):
    context = {
        "person": person,
        "form": form
        or MemberEditForm(initial={"role": person.role, "qualification": person.qualification}),
        "qualification_form": qualification_form
        or QualificationForm(initial=QualificationForm.initial_for(person)),
    }
    return render(request, "survey/member_edit.html", context)


def _qualification(request: HttpRequest, person: Member) -> HttpResponse:
    """The qualification record and signature picture printed on reports."""
    form = QualificationForm(request.POST, request.FILES)
    if form.is_valid():
        try:
            member_update_qualification(member=person, actor=request.user, **form.cleaned_data)
        except ValidationError as error:
            add_service_error(form, error)
        else:
            messages.success(request, f"Qualification of {person.display_name} saved.")
            return redirect("survey:member_edit", pk=person.pk)
    return _edit_page(request, person, qualification_form=form)


def _set_active(request: HttpRequest, person: Member, action: str) -> HttpResponse:
    change = services.member_deactivate if action == "deactivate" else services.member_reactivate
    try:
        change(member=person, actor=request.user)
    except ValidationError as error:
        messages.error(request, " ".join(error.messages))
        return redirect("survey:member_edit", pk=person.pk)
    messages.success(request, f"{person.display_name} {action}d.")
    return redirect("survey:members")
