"""A background job's heartbeat: a row says its worker is alive while the work runs.

A claimed thermogram or report render carries `heartbeat_at`. Stages of the work refresh it,
but one stage can be long (WeasyPrint laying out a 50-page report, decoding a large CSV), so
`keep_alive` also refreshes it from a thread every TASK_HEARTBEAT_SECONDS for as long as the
process lives. A killed process stops beating at once, so a job silent for the stall time
(a few heartbeats) has lost its worker and may be taken by another one.
"""

import contextlib
import logging
import threading

from django.conf import settings
from django.db import connection, models
from django.utils import timezone

logger = logging.getLogger(__name__)


@contextlib.contextmanager
def keep_alive(model: type[models.Model], pk: int, status: str, *, enabled: bool = True):
    """Refresh `heartbeat_at` of the row while it is in `status`, until the block ends.

    Disabled in-process (tasks run eagerly): the web process is then the worker, and a
    second database connection from a thread would only wait on the request's own
    transaction.
    """
    if not enabled:
        yield
        return
    every = settings.TASK_HEARTBEAT_SECONDS
    stop = threading.Event()

    def beat() -> None:
        try:
            while not stop.wait(every):
                model.objects.filter(pk=pk, status=status).update(heartbeat_at=timezone.now())
        except Exception:  # a missed beat only makes the job look stalled sooner
            logger.warning("Heartbeat of %s %s stopped", model.__name__, pk, exc_info=True)
        finally:
            connection.close()  # this thread's own connection

    thread = threading.Thread(target=beat, name=f"heartbeat-{model.__name__}-{pk}", daemon=True)
    thread.start()
    try:
        yield
    finally:
        stop.set()
        thread.join(timeout=every)
