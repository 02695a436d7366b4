"""Background work of the reports app: rendering PDFs in recycled worker processes.

WeasyPrint keeps the whole document in memory and the process does not hand freed memory
back, so workers are recycled after CELERY_WORKER_MAX_TASKS_PER_CHILD tasks (settings.py).
"""

from celery import shared_task
from django.conf import settings


@shared_task(
    acks_late=True,
    time_limit=settings.CELERY_TASK_TIME_LIMIT,
    soft_time_limit=max(30, settings.CELERY_TASK_TIME_LIMIT - 60),
)
def render_report(version_id: int) -> bool:
    """Render one report version; a second delivery of the same id does nothing."""
    from reports.services import report_render

    return report_render(version_id)
