"""The one place that decides who may see and change what.

Every view fetches rows through these helpers, so a row of another organization answers
404, exactly as a row that does not exist.
"""

from django.core.exceptions import PermissionDenied
from django.db.models import QuerySet
from django.http import Http404, HttpRequest
from django.shortcuts import get_object_or_404

from survey.models import (
    Asset,
    AuditEvent,
    Client,
    CriteriaTable,
    Finding,
    Mark,
    Member,
    Site,
    Survey,
    Thermogram,
)


def get_member(request: HttpRequest) -> Member:
    """The signed-in user's membership; users without one see nothing."""
    member = getattr(request.user, "membership", None) if request.user.is_authenticated else None
    if member is None:
        raise Http404("No organization")
    return member


def require_editor(member: Member) -> None:
    if not member.can_edit:
        raise PermissionDenied("Your role cannot change surveys.")


def require_reviewer(member: Member) -> None:
    if not member.can_review:
        raise PermissionDenied("Only reviewers can do this.")


def require_admin(member: Member) -> None:
    if not member.is_admin:
        raise PermissionDenied("Only admins can do this.")


def surveys_for(member: Member) -> QuerySet[Survey]:
    return Survey.objects.filter(organization=member.organization, status=Survey.Status.ACTIVE)


def clients_for(member: Member) -> QuerySet[Client]:
    return Client.objects.filter(organization=member.organization)


def sites_for(member: Member) -> QuerySet[Site]:
    return Site.objects.filter(organization=member.organization)


def assets_for(member: Member) -> QuerySet[Asset]:
    return Asset.objects.filter(organization=member.organization)


def thermograms_for(member: Member) -> QuerySet[Thermogram]:
    return Thermogram.objects.filter(
        organization=member.organization, survey__status=Survey.Status.ACTIVE
    )


def findings_for(member: Member) -> QuerySet[Finding]:
    return Finding.objects.filter(
        organization=member.organization, survey__status=Survey.Status.ACTIVE
    )


def get_survey_for_user(request: HttpRequest, pk: int) -> Survey:
    return get_object_or_404(surveys_for(get_member(request)).select_related("site__client"), pk=pk)


def get_site_for_user(request: HttpRequest, pk: int) -> Site:
    return get_object_or_404(sites_for(get_member(request)).select_related("client"), pk=pk)


def get_asset_for_user(request: HttpRequest, pk: int) -> Asset:
    return get_object_or_404(assets_for(get_member(request)).select_related("site"), pk=pk)


def get_thermogram_for_user(request: HttpRequest, pk: int) -> Thermogram:
    return get_object_or_404(
        thermograms_for(get_member(request)).select_related("survey__site__client"), pk=pk
    )


def get_mark_for_user(request: HttpRequest, pk: int) -> Mark:
    member = get_member(request)
    return get_object_or_404(
        Mark.objects.select_related("thermogram__survey").filter(
            thermogram__organization=member.organization,
            thermogram__survey__status=Survey.Status.ACTIVE,
        ),
        pk=pk,
    )


def get_finding_for_user(request: HttpRequest, pk: int) -> Finding:
    return get_object_or_404(findings_for(get_member(request)).select_related("survey"), pk=pk)


# --- pages (web-core helper) ---
def members_for(member: Member) -> QuerySet[Member]:
    return Member.objects.filter(organization=member.organization).select_related("user")


def deleted_surveys_for(member: Member) -> QuerySet[Survey]:
    return Survey.objects.filter(organization=member.organization, status=Survey.Status.DELETED)


def get_deleted_survey_for_user(request: HttpRequest, pk: int) -> Survey:
    return get_object_or_404(deleted_surveys_for(get_member(request)), pk=pk)


def get_member_for_user(request: HttpRequest, pk: int) -> Member:
    """A member of the signed-in user's organization (admins manage them)."""
    return get_object_or_404(members_for(get_member(request)), pk=pk)


# --- judgement and audit ---
def criteria_tables_for(member: Member) -> QuerySet[CriteriaTable]:
    """The organization's own (editable) severity tables; the product defaults are not."""
    return CriteriaTable.objects.filter(organization=member.organization)


def get_criteria_table_for_user(request: HttpRequest, pk: int) -> CriteriaTable:
    return get_object_or_404(criteria_tables_for(get_member(request)), pk=pk)


def audit_events_for(member: Member) -> QuerySet[AuditEvent]:
    return AuditEvent.objects.filter(organization=member.organization)
