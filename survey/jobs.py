"""Periodic jobs, run from celery beat (CELERY_BEAT_SCHEDULE in settings.py).

Each is idempotent, so a late, repeated or overlapping run does no harm. They live apart
from survey/tasks.py because they call services that publish those tasks; workers import
this module through CELERY_IMPORTS.
"""

from celery import shared_task

from survey.services.ingest import thermograms_requeue
from survey.services.signin import throttle_prune


@shared_task(ignore_result=True)
def requeue_thermograms() -> int:
    """Send again the thermograms waiting for the broker or whose worker was lost."""
    return thermograms_requeue().sent


@shared_task(ignore_result=True)
def prune_signin_throttle() -> int:
    """Forget sign-in counters that no longer hold anyone back."""
    return throttle_prune()
