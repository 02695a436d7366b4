"""Celery tasks: they take ids and hand the work to a service (imported inside the task)."""

from celery import shared_task


@shared_task(acks_late=True, reject_on_worker_lost=True, ignore_result=True)
def process_thermogram(thermogram_id: int) -> str | None:
    """Decode one thermogram; safe to run twice (the service claims the row first)."""
    from survey.services.surveys import thermogram_process

    return thermogram_process(thermogram_id)
