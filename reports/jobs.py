"""Periodic jobs of the reports app, run from celery beat (CELERY_BEAT_SCHEDULE in
settings.py); workers import this module through CELERY_IMPORTS. Idempotent."""

from celery import shared_task

from reports.services import reports_requeue


@shared_task(ignore_result=True)
def requeue_reports() -> int:
    """Send again the renders waiting for the broker or whose worker was lost."""
    return reports_requeue().sent
