"""Log lines that say which request, user, organization and task they belong to.

`RequestLogMiddleware` gives every request an id (the proxy's `X-Request-ID` when it is a
plain token, else a new one), sends it back in the response and writes one line per
request. `ContextFilter` adds `request_id`, `user_id`, `organization_id` and `task_id` to
every record; `JsonFormatter` writes each record as one JSON object per line (LOG_FORMAT=json,
the production default) so a log collector reads fields, not free text.
"""

import contextvars
import datetime
import json
import logging
import re
import time
import uuid

from django.http import HttpRequest, HttpResponse
from django.utils.functional import empty

logger = logging.getLogger("heatmark.request")

_request: contextvars.ContextVar[HttpRequest | None] = contextvars.ContextVar(
    "heatmark_request", default=None
)
_request_id: contextvars.ContextVar[str] = contextvars.ContextVar("heatmark_request_id", default="")
REQUEST_ID_PATTERN = re.compile(r"^[A-Za-z0-9._-]{8,64}$")
CONTEXT_FIELDS = ("request_id", "user_id", "organization_id", "task_id")
# Attributes every LogRecord has; anything else on a record was passed with `extra=`.
_STANDARD = set(vars(logging.LogRecord("", 0, "", 0, "", None, None))) | {"message", "asctime"}


def _loaded_user(request: HttpRequest):
    """The request's user if something already loaded it (logging never queries for it)."""
    user = getattr(request, "user", None)
    wrapped = getattr(user, "_wrapped", user)
    if wrapped is None or wrapped is empty:  # no user, or the lazy user not evaluated yet
        return None
    return wrapped if getattr(wrapped, "is_authenticated", False) else None


def _context() -> dict:
    fields = dict.fromkeys(CONTEXT_FIELDS)
    fields["request_id"] = _request_id.get() or None
    request = _request.get()
    user = _loaded_user(request) if request is not None else None
    if user is not None:
        fields["user_id"] = user.pk
        # The membership is cached on the user once a view has asked for it.
        member = user._state.fields_cache.get("membership")
        fields["organization_id"] = getattr(member, "organization_id", None)
    try:
        from celery import current_task

        if current_task and current_task.request.id:
            fields["task_id"] = current_task.request.id
    except Exception:  # noqa: BLE001 - logging must never fail for want of context
        pass
    return fields


class ContextFilter(logging.Filter):
    """Adds the request, user, organization and task ids to every record."""

    def filter(self, record: logging.LogRecord) -> bool:
        for name, value in _context().items():
            if getattr(record, name, None) is None:
                setattr(record, name, value)
        return True


class JsonFormatter(logging.Formatter):
    """One JSON object per line: time, level, logger, message, context ids, extras, error."""

    def format(self, record: logging.LogRecord) -> str:
        entry = {
            "time": datetime.datetime.fromtimestamp(record.created, datetime.UTC).isoformat(
                timespec="milliseconds"
            ),
            "level": record.levelname,
            "logger": record.name,
            "message": record.getMessage(),
        }
        for name in CONTEXT_FIELDS:
            entry[name] = getattr(record, name, None)
        for name, value in vars(record).items():
            if name not in _STANDARD and name not in entry:
                entry[name] = value
        if record.exc_info:
            entry["error"] = self.formatException(record.exc_info)
        return json.dumps(entry, default=str, ensure_ascii=False)


class RequestLogMiddleware:
    """Request id in and out, and one line per request (level INFO, errors at WARNING)."""

    def __init__(self, get_response):
        self.get_response = get_response

    def __call__(self, request: HttpRequest) -> HttpResponse:
        given = request.headers.get("X-Request-ID", "")
        request_id = given if REQUEST_ID_PATTERN.match(given) else uuid.uuid4().hex
        request.request_id = request_id
        request_token = _request.set(request)
        id_token = _request_id.set(request_id)
        started = time.perf_counter()
        try:
            response = self.get_response(request)
            response["X-Request-ID"] = request_id
            level = logging.WARNING if response.status_code >= 500 else logging.INFO
            logger.log(
                level,
                "%s %s %s",
                request.method,
                request.path,
                response.status_code,
                extra={
                    "method": request.method,
                    "path": request.path,
                    "status": response.status_code,
                    "duration_ms": round((time.perf_counter() - started) * 1000, 1),
                },
            )
            return response
        finally:
            _request.reset(request_token)
            _request_id.reset(id_token)
