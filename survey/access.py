"""The one place that decides who may see and change what.

Every view fetches rows through these helpers, so a row of another organization answers
404, exactly as a row that does not exist.
"""

from django.core.exceptions import PermissionDenied
from django.db.models import Q, QuerySet
from django.http import Http404, HttpRequest
from django.shortcuts import get_object_or_404

from survey.models import (
    Asset,
    AuditEvent,
    Client,
    ConditionLog,
    CriteriaTable,
    Finding,
    Instrument,
    Mark,
    MarkTemplate,
    Member,
    Proposal,
    RoundStop,
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


def instruments_for(member: Member) -> QuerySet[Instrument]:
    return Instrument.objects.filter(organization=member.organization)


def get_instrument_for_user(request: HttpRequest, pk: int) -> Instrument:
    return get_object_or_404(instruments_for(get_member(request)), pk=pk)


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


def get_reviewable_criteria_table_for_user(request: HttpRequest, pk: int) -> CriteriaTable:
    """The organization's own table or a product default (reviewing one makes the copy)."""
    member = get_member(request)
    tables = CriteriaTable.objects.filter(
        Q(organization=member.organization) | Q(organization__isnull=True)
    )
    return get_object_or_404(tables, pk=pk)


def audit_events_for(member: Member) -> QuerySet[AuditEvent]:
    return AuditEvent.objects.filter(organization=member.organization)


# --- proposals, logged conditions, mark templates ---
def get_proposal_for_user(request: HttpRequest, pk: int) -> Proposal:
    member = get_member(request)
    return get_object_or_404(
        Proposal.objects.select_related("thermogram__survey").filter(
            thermogram__organization=member.organization,
            thermogram__survey__status=Survey.Status.ACTIVE,
        ),
        pk=pk,
    )


def get_condition_log_for_user(request: HttpRequest, pk: int) -> ConditionLog:
    member = get_member(request)
    return get_object_or_404(
        ConditionLog.objects.select_related("survey").filter(
            organization=member.organization, survey__status=Survey.Status.ACTIVE
        ),
        pk=pk,
    )


def mark_templates_for(member: Member) -> QuerySet[MarkTemplate]:
    return MarkTemplate.objects.filter(organization=member.organization)


def get_mark_template_for_user(request: HttpRequest, pk: int) -> MarkTemplate:
    return get_object_or_404(mark_templates_for(get_member(request)), pk=pk)


# --- clients, sites, assets, rounds and deleted rows (register and recovery) ---
DELETABLE_KINDS = {
    "client": Client,
    "site": Site,
    "asset": Asset,
    "thermogram": Thermogram,
    "finding": Finding,
}


def get_client_for_user(request: HttpRequest, pk: int) -> Client:
    return get_object_or_404(clients_for(get_member(request)), pk=pk)


def get_round_stop_for_user(request: HttpRequest, pk: int) -> RoundStop:
    member = get_member(request)
    return get_object_or_404(
        RoundStop.objects.select_related("survey", "asset").filter(
            survey__organization=member.organization, survey__status=Survey.Status.ACTIVE
        ),
        pk=pk,
    )


def get_deleted_item_for_user(request: HttpRequest, kind: str, pk: int):
    """A deleted client, site, asset, thermogram or finding of the member's organization."""
    model = DELETABLE_KINDS.get(kind)
    if model is None:
        raise Http404("Unknown kind")
    rows = model.all_objects.filter(
        organization=get_member(request).organization, deleted_at__isnull=False
    )
    if model in (Thermogram, Finding):
        rows = rows.filter(survey__status=Survey.Status.ACTIVE)
    return get_object_or_404(rows, pk=pk)
