"""Sign-in throttling: per client address and per username, in a small indexed table.

Every form that authenticates goes through survey.backends.ThrottledModelBackend, which
asks `signin_wait` first and records each failure and success.

- A client address has a bucket of ADDRESS_BURST tokens; each failed sign-in takes one and
  one comes back every ADDRESS_REFILL. An empty bucket refuses that address only. The
  address comes from survey/net.py: behind a proxy, from the header the operator trusts.
- A username may fail USERNAME_FREE_FAILURES times in a row from anywhere; after that each
  attempt waits a delay that doubles up to USERNAME_MAX_DELAY (a minute), instead of a
  lock: whoever floods a colleague's username slows it, but cannot lock them out.
- Failures of a member's username are written to the audit log of their organization;
  unknown usernames only count here, so a flood of invented names leaves no audit rows.

Counters live in SignInThrottle (unique on scope and key, indexed by age), not in the audit
log: a check is two indexed reads, whatever the size of the log.
"""

import datetime
import math
from dataclasses import dataclass

from django.contrib.auth import get_user_model
from django.db import IntegrityError, transaction
from django.db.models import Q
from django.utils import timezone

from survey.models import SignInThrottle
from survey.services.audit import audit_record

ADDRESS_BURST = 20
ADDRESS_REFILL = datetime.timedelta(seconds=45)  # 20 tokens back in 15 minutes
USERNAME_FREE_FAILURES = 5
USERNAME_MAX_DELAY = datetime.timedelta(minutes=1)
# Failures older than this no longer count; idle rows older than PRUNE_AFTER are deleted.
FORGET_AFTER = datetime.timedelta(minutes=15)
PRUNE_AFTER = datetime.timedelta(hours=1)

FAILED, SUCCEEDED = "login.failed", "login"
ADDRESS, USERNAME = SignInThrottle.Scope.ADDRESS, SignInThrottle.Scope.USERNAME


@dataclass(frozen=True)
class Wait:
    """Why and how long a sign-in must wait."""

    seconds: float
    scope: str

    @property
    def message(self) -> str:
        if self.scope == ADDRESS:
            minutes = max(1, math.ceil(self.seconds / 60))
            return (
                "Too many failed sign-ins from your network. Wait "
                f"{minutes} minute{'s' if minutes != 1 else ''} and try again."
            )
        seconds = max(1, math.ceil(self.seconds))
        return (
            "Several wrong passwords were tried for this username just now. For your "
            f"account's safety, wait {seconds} second{'s' if seconds != 1 else ''} and try "
            "again, or ask your administrator to reset the password."
        )


def normalise(username: str) -> str:
    return (username or "").strip().lower()[:150]


def _tokens_now(row: SignInThrottle, now: datetime.datetime) -> float:
    refilled = (now - row.updated_at) / ADDRESS_REFILL
    return min(float(ADDRESS_BURST), row.tokens + refilled)


def _username_delay(failures: int) -> datetime.timedelta:
    extra = failures - USERNAME_FREE_FAILURES
    if extra < 0:
        return datetime.timedelta(0)
    return min(datetime.timedelta(seconds=2**extra), USERNAME_MAX_DELAY)


def signin_wait(username: str, address: str) -> Wait | None:
    """How long a sign-in for `username` from `address` must wait, or None: go ahead."""
    now = timezone.now()
    found = SignInThrottle.objects.filter(
        Q(scope=ADDRESS, key=address) | Q(scope=USERNAME, key=normalise(username))
    )
    rows = {row.scope: row for row in found}
    bucket = rows.get(ADDRESS)
    if bucket is not None and _tokens_now(bucket, now) < 1:
        return Wait(((1 - _tokens_now(bucket, now)) * ADDRESS_REFILL).total_seconds(), ADDRESS)
    counter = rows.get(USERNAME)
    if (
        counter is not None
        and counter.last_failure_at
        and now - counter.last_failure_at < FORGET_AFTER
    ):
        remaining = counter.last_failure_at + _username_delay(counter.failures) - now
        if remaining.total_seconds() > 0:
            return Wait(remaining.total_seconds(), USERNAME)
    return None


def _row(scope: str, key: str) -> SignInThrottle:
    """The counter row, locked for this transaction; created on first use."""
    now = timezone.now()
    try:
        with transaction.atomic():
            row, _ = SignInThrottle.objects.get_or_create(
                scope=scope, key=key, defaults={"tokens": float(ADDRESS_BURST), "updated_at": now}
            )
    except IntegrityError:  # created by a concurrent request a moment ago
        pass
    return SignInThrottle.objects.select_for_update().get(scope=scope, key=key)


@transaction.atomic
def signin_failed(*, username: str, address: str) -> None:
    """Count a failed sign-in against the address and the username."""
    now = timezone.now()
    bucket = _row(ADDRESS, address)
    bucket.tokens = max(0.0, _tokens_now(bucket, now) - 1)
    bucket.updated_at = now
    bucket.save(update_fields=["tokens", "updated_at"])
    counter = _row(USERNAME, normalise(username))
    recent = counter.last_failure_at and now - counter.last_failure_at < FORGET_AFTER
    counter.failures = (counter.failures if recent else 0) + 1
    counter.last_failure_at = counter.updated_at = now
    counter.save(update_fields=["failures", "last_failure_at", "updated_at"])
    user = get_user_model().objects.filter(username=username).select_related("membership").first()
    member = getattr(user, "membership", None) if user is not None else None
    if member is not None:
        audit_record(
            organization=member.organization,
            actor=None,
            action=FAILED,
            object_type="signin",
            detail={"username": normalise(username), "address": address},
        )


@transaction.atomic
def signin_succeeded(*, user, address: str) -> None:
    """A successful sign-in clears the username's failures (not the address's bucket)."""
    SignInThrottle.objects.filter(scope=USERNAME, key=normalise(user.get_username())).update(
        failures=0, updated_at=timezone.now()
    )
    member = getattr(user, "membership", None)
    audit_record(
        organization=member.organization if member is not None else None,
        actor=user,
        action=SUCCEEDED,
        object_type="signin",
        detail={"username": normalise(user.get_username()), "address": address},
    )


def throttle_prune(*, now: datetime.datetime | None = None) -> int:
    """Delete counters idle for PRUNE_AFTER: by then a bucket is full and failures forgotten."""
    now = now or timezone.now()
    deleted, _ = SignInThrottle.objects.filter(updated_at__lt=now - PRUNE_AFTER).delete()
    return deleted
