"""Who may see which report, version and share link: scoped to the member's organization.

Built on survey/access.py; a row of another organization, or of a deleted survey, answers
404 exactly as a row that does not exist.
"""

from django.db.models import QuerySet
from django.http import HttpRequest
from django.shortcuts import get_object_or_404

from reports.models import Report, ReportVersion, ShareLink
from survey.access import get_member
from survey.models import Member, Survey


def reports_for(member: Member) -> QuerySet[Report]:
    return Report.objects.filter(
        organization=member.organization, survey__status=Survey.Status.ACTIVE
    )


def get_report_for_user(request: HttpRequest, pk: int) -> Report:
    return get_object_or_404(
        reports_for(get_member(request)).select_related("survey__site__client"), pk=pk
    )


def get_report_version_for_user(request: HttpRequest, pk: int) -> ReportVersion:
    member = get_member(request)
    return get_object_or_404(
        ReportVersion.objects.select_related("report__survey__site__client").filter(
            report__organization=member.organization,
            report__survey__status=Survey.Status.ACTIVE,
        ),
        pk=pk,
    )


def get_share_link_for_user(request: HttpRequest, pk: int) -> ShareLink:
    member = get_member(request)
    return get_object_or_404(
        ShareLink.objects.select_related("version__report").filter(
            version__report__organization=member.organization,
            version__report__survey__status=Survey.Status.ACTIVE,
        ),
        pk=pk,
    )
