"""The audit log: who created, changed, issued, shared and downloaded what (admins only)."""

from django.contrib.auth.decorators import login_required
from django.core.paginator import Paginator
from django.http import HttpRequest, HttpResponse
from django.shortcuts import render
from django.views.decorators.http import require_GET

from survey.access import audit_events_for, get_member, require_admin

PAGE_SIZE = 100


@login_required
@require_GET
def audit_log(request: HttpRequest) -> HttpResponse:
    member = get_member(request)
    require_admin(member)
    events = audit_events_for(member).select_related("actor")
    action = request.GET.get("action", "").strip()[:40]
    if action:
        events = events.filter(action=action)
    actions = (
        audit_events_for(member).order_by("action").values_list("action", flat=True).distinct()
    )
    page = Paginator(events, PAGE_SIZE).get_page(request.GET.get("page"))
    context = {"page": page, "actions": actions, "action": action}
    return render(request, "survey/audit_log.html", context)
