"""Sign-in throttling: after repeated failures for one username from one address, wait.

Failures are stored as audit events in the database (no shared cache is configured), so
every web process behind the load balancer sees the same count, and admins see the
failed attempts of their members in the audit log. A successful sign-in starts the count
again. The address is REMOTE_ADDR: behind a proxy, the proxy must pass the client's own.
"""

import datetime
import math

from django.contrib.auth import get_user_model
from django.http import HttpRequest
from django.utils import timezone

from survey.models import AuditEvent
from survey.services.audit import audit_record

MAX_FAILURES = 5


WINDOW = datetime.timedelta(minutes=15)


FAILED, SUCCEEDED = "login.failed", "login"


def client_address(request: HttpRequest | None) -> str:
    return (request.META.get("REMOTE_ADDR") or "unknown") if request is not None else "unknown"


def _normalise(username: str) -> str:
    return (username or "").strip().lower()[:150]


def _events(username: str, address: str):
    return AuditEvent.objects.filter(
        object_type="signin",
        detail__username=_normalise(username),
        detail__address=address,
        at__gte=timezone.now() - WINDOW,
    )


def login_wait(username: str, address: str) -> datetime.timedelta | None:
    """How long this username must wait from this address, or None when it may try now."""
    events = _events(username, address)
    last_success = events.filter(action=SUCCEEDED).order_by("-at").values_list("at", flat=True)
    failures = events.filter(action=FAILED)
    if last_success:
        failures = failures.filter(at__gt=last_success[0])
    times = list(failures.order_by("-at").values_list("at", flat=True)[:MAX_FAILURES])
    if len(times) < MAX_FAILURES:
        return None
    # Locked until the oldest of the last MAX_FAILURES failures leaves the window.
    return max(times[-1] + WINDOW - timezone.now(), datetime.timedelta(seconds=1))


def login_record(*, username: str, address: str, succeeded: bool) -> None:
    """Write the attempt to the audit log, under the organization of that user if any."""
    user = get_user_model().objects.filter(username=username).select_related("membership").first()
    member = getattr(user, "membership", None) if user is not None else None
    audit_record(
        organization=member.organization if member is not None else None,
        actor=user if succeeded else None,
        action=SUCCEEDED if succeeded else FAILED,
        object_type="signin",
        detail={"username": _normalise(username), "address": address},
    )


def wait_message(wait: datetime.timedelta) -> str:
    minutes = max(1, math.ceil(wait.total_seconds() / 60))
    unit = "minute" if minutes == 1 else "minutes"
    return (
        f"Too many failed sign-in attempts for this username. For your account's safety, "
        f"wait {minutes} {unit} and try again, or ask your administrator to reset the password."
    )
