"""Periodic tidying of the reports app: share links that ended long ago.

Kept apart from reports/services.py so the periodic task (reports/tasks.py) and the report
services, which enqueue tasks, do not import each other.
"""

import datetime

from django.db import transaction
from django.db.models import Q
from django.utils import timezone

from reports.models import ShareLink
from survey.services.audit import audit_record


def share_links_expire(*, keep_days: int) -> int:
    """Remove share links that ended (expired or revoked) more than `keep_days` ago.

    The periodic job (reports.tasks.expire_share_links). An ended link already opens
    nothing (share_link_active); removing it deletes its token for good and tidies the
    survey's report page. Downloads made through it stay in the download log, and each link
    leaves one audit line. Rows another run holds are skipped, so two runs at once remove
    each link, and write its line, once. Returns how many links went.
    """
    if keep_days < 0:
        raise ValueError("keep_days must be zero or more")
    cutoff = timezone.now() - datetime.timedelta(days=keep_days)
    with transaction.atomic():
        ended = list(
            ShareLink.objects.select_for_update(skip_locked=True, of=("self",))
            .select_related("version__report__organization")
            .filter(Q(expires_at__lt=cutoff) | Q(revoked_at__lt=cutoff))
            .order_by("pk")
        )
        for link in ended:
            audit_record(
                organization=link.version.report.organization,
                actor=None,
                action="share_link.expire",
                obj=link,
                detail={
                    "version": link.version_id,
                    "expires_at": link.expires_at.isoformat(),
                    "revoked_at": link.revoked_at.isoformat() if link.revoked_at else None,
                },
            )
        ShareLink.objects.filter(pk__in=[link.pk for link in ended]).delete()
    return len(ended)
