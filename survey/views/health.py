"""`/healthz`: is this web process able to work? For load balancers and container health.

No sign-in and no data: each dependency answers ok or not with the time it took. 503 when
one does not answer, so an orchestrator stops sending traffic here. The reason is logged,
never shown (it may name hosts).
"""

import logging
import time
from collections.abc import Callable

from django.conf import settings
from django.db import connection
from django.http import HttpRequest, JsonResponse
from django.views.decorators.cache import never_cache
from django.views.decorators.http import require_GET

from survey.storage import media_check

logger = logging.getLogger(__name__)

# Each check gives up after this long, so the answer comes before a balancer's own timeout.
CHECK_TIMEOUT_S = 3


def _database() -> None:
    with connection.cursor() as cursor:
        cursor.execute("SELECT 1")
        cursor.fetchone()


def _broker() -> None:
    if not settings.REDIS_URL:
        return  # the embedded default runs tasks in-process: there is no broker to reach
    import redis

    client = redis.Redis.from_url(
        settings.REDIS_URL,
        socket_connect_timeout=CHECK_TIMEOUT_S,
        socket_timeout=CHECK_TIMEOUT_S,
    )
    try:
        client.ping()
    finally:
        client.close()


CHECKS: dict[str, Callable[[], None]] = {
    "database": _database,
    "broker": _broker,
    "storage": media_check,
}


@never_cache
@require_GET
def healthz(request: HttpRequest) -> JsonResponse:
    results = {}
    for name, check in CHECKS.items():
        started = time.perf_counter()
        try:
            check()
            ok = True
        except Exception:  # noqa: BLE001 - any failure means "not reachable"
            logger.warning("Health check: %s is not reachable", name, exc_info=True)
            ok = False
        results[name] = {"ok": ok, "ms": round((time.perf_counter() - started) * 1000, 1)}
    healthy = all(result["ok"] for result in results.values())
    return JsonResponse(
        {"status": "ok" if healthy else "unavailable", "checks": results},
        status=200 if healthy else 503,
    )
