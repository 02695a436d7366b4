"""Celery tasks: they take ids and hand the work to a service (imported inside the task).

The periodic jobs are in survey/jobs.py (they call services that publish these tasks).
"""

from celery import shared_task


@shared_task(
    bind=True, acks_late=True, reject_on_worker_lost=True, ignore_result=True, max_retries=3
)
def process_thermogram(self, thermogram_id: int) -> str | None:
    """Decode one thermogram; safe to run twice (the service claims the row first).

    A delivery that finds the job held by another worker comes back once that worker's
    heartbeat would be stale: after a worker process is killed, its task is delivered again
    at once (reject_on_worker_lost) while the row still says `processing`, and dropping that
    delivery would lose the job.
    """
    from survey.models import Thermogram
    from survey.services.processing import stalled_after, thermogram_process

    status = thermogram_process(thermogram_id, keep_alive=not self.request.is_eager)
    held = Thermogram.objects.filter(pk=thermogram_id, status=Thermogram.Status.PROCESSING)
    if status is None and held.exists():
        raise self.retry(countdown=stalled_after().total_seconds() + 1)
    if status == Thermogram.Status.READY:
        from survey.services.proposals import thermogram_propose_after_processing

        thermogram_propose_after_processing(thermogram_id)
    return status


@shared_task(ignore_result=True)
def purge_deleted_surveys() -> int:
    """Periodic (Celery beat): purge surveys deleted longer ago than the retention period.

    Safe to run twice at once: each survey is purged under a row lock that the other run skips.
    """
    from django.conf import settings

    from survey.services.retention import surveys_purge_due

    return surveys_purge_due(days=settings.PURGE_DELETED_AFTER_DAYS)


@shared_task(acks_late=True, reject_on_worker_lost=True, ignore_result=True)
def render_previews(thermogram_id: int) -> bool:
    """Draw a thermogram's preview and thumbnail again; drawing twice does no harm."""
    from survey.services.processing import thermogram_render_previews

    return thermogram_render_previews(thermogram_id)
