"""A client's acknowledgement of a finding, given on the report's share page.

The client has no account: the share link that opened the page is the authority, and the
reports app checks it before calling here. Each answer is kept (the firm sees them all on
the survey page), with who typed it and when.
"""

import datetime

from django.core.exceptions import ValidationError
from django.db import transaction
from django.utils import timezone

from survey.models import Acknowledgement, Finding
from survey.services.audit import audit_record

# A repair may be planned for next year's shutdown, not for the next decade.
LATEST_YEARS_AHEAD = 5


@transaction.atomic
def finding_acknowledge(
    *,
    finding: Finding,
    repair_scheduled_for: datetime.date | None,
    note: str = "",
    name: str = "",
    share_link_id: int | None = None,
) -> Acknowledgement:
    """Record the client's answer: when the repair is scheduled and/or a note."""
    note, name = (note or "").strip(), (name or "").strip()
    if repair_scheduled_for is None and not note:
        raise ValidationError("Give the date the repair is scheduled for, or a note.")
    today = timezone.localdate()
    if repair_scheduled_for is not None:
        latest = today.replace(year=today.year + LATEST_YEARS_AHEAD)
        earliest = today - datetime.timedelta(days=366)
        if not earliest <= repair_scheduled_for <= latest:
            raise ValidationError(
                {"repair_scheduled_for": "Give a date within a year back and five years ahead."}
            )
    acknowledgement = Acknowledgement(
        finding=finding,
        repair_scheduled_for=repair_scheduled_for,
        note=note,
        name=name,
        share_link_id=share_link_id,
    )
    acknowledgement.full_clean()
    acknowledgement.save()
    audit_record(
        organization=finding.organization,
        actor=None,
        action="finding_acknowledged",
        obj=finding,
        detail={
            "repair_scheduled_for": repair_scheduled_for.isoformat()
            if repair_scheduled_for
            else None,
            "name": name,
            "share_link": share_link_id,
        },
    )
    return acknowledgement
