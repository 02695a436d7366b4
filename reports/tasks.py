"""Background work of the reports app: rendering PDFs in recycled worker processes.

WeasyPrint keeps the whole document in memory and the process does not hand freed memory
back, so workers are recycled after CELERY_WORKER_MAX_TASKS_PER_CHILD tasks (settings.py).
"""

from celery import shared_task
from django.conf import settings


@shared_task(
    bind=True,
    acks_late=True,
    reject_on_worker_lost=True,
    max_retries=3,
    time_limit=settings.CELERY_TASK_TIME_LIMIT,
    soft_time_limit=max(30, settings.CELERY_TASK_TIME_LIMIT - 60),
)
def render_report(self, version_id: int) -> bool:
    """Render one report version; a second delivery of the same id does nothing.

    When a worker process is killed mid-render its task comes back at once while the row
    still says `rendering`; that delivery waits until the claim is stale instead of being
    dropped, so the version cannot stay `rendering` for ever.
    """
    from reports.rendering import render_stalled_after, report_render, report_render_is_held

    rendered = report_render(version_id, keep_alive=not self.request.is_eager)
    if not rendered and report_render_is_held(version_id):
        raise self.retry(countdown=render_stalled_after().total_seconds() + 1)
    return rendered


@shared_task(ignore_result=True)
def expire_share_links() -> int:
    """Periodic (Celery beat): remove share links that ended SHARE_LINK_KEEP_DAYS ago.

    Safe to run twice at once: rows one run holds are skipped by the other.
    """
    from reports.retention import share_links_expire

    return share_links_expire(keep_days=settings.SHARE_LINK_KEEP_DAYS)
