"""The issue page points out an expired thermography qualification."""

import datetime

from django.urls import reverse

from survey.models import Member
from tests.conftest import login


def test_the_issue_page_warns_of_an_expired_qualification(client, report_survey, reviewer):
    from reports.services import report_create

    Member.objects.filter(pk=report_survey.thermographer_id).update(
        qualification_scheme="Invented Thermography Board",
        qualification_level="2",
        qualification_expires=datetime.date(2024, 5, 1),
    )
    report = report_create(survey=report_survey, user=reviewer.user)
    login(client, reviewer)
    page = client.get(reverse("reports:issue", args=[report.pk])).content.decode()
    assert "expired on 1 May 2024" in page
    Member.objects.filter(pk=report_survey.thermographer_id).update(
        qualification_expires=datetime.date(2099, 1, 1)
    )
    page = client.get(reverse("reports:issue", args=[report.pk])).content.decode()
    assert "expired on" not in page
