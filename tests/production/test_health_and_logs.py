"""/healthz answers 503 when a dependency is down; logs carry ids; errors can be reported."""

import gzip
import json
import logging
import subprocess
import sys
import threading
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer

import pytest
from django.test import RequestFactory

from survey.logs import ContextFilter, JsonFormatter, RequestLogMiddleware
from survey.settings import media_storages
from tests.objectstore import free_port, make_bucket, s3_environment
from tests.processes import ROOT, production_environment


def _checks(response) -> dict:
    return {name: result["ok"] for name, result in response.json()["checks"].items()}


def test_it_answers_503_when_the_broker_does_not_answer(client, db, settings):
    """A broker nobody listens on: 503, and the check names the broker, not the others."""
    settings.REDIS_URL = f"redis://127.0.0.1:{free_port()}/0"
    response = client.get("/healthz")
    assert response.status_code == 503
    assert response.json()["status"] == "unavailable"
    assert _checks(response) == {"database": True, "broker": False, "storage": True}


def test_it_answers_503_when_the_bucket_does_not_answer(
    client, db, settings, monkeypatch, s3_endpoint
):
    """A bucket that does not exist, then an endpoint that does not listen: 503 both times."""
    environment = s3_environment(s3_endpoint, "heatmark-test-no-such-bucket")
    for name, value in environment.items():
        monkeypatch.setenv(name, value)
    settings.STORAGES = {**settings.STORAGES, **media_storages("s3")}
    response = client.get("/healthz")
    assert response.status_code == 503
    assert _checks(response) == {"database": True, "broker": True, "storage": False}
    bucket = make_bucket(s3_endpoint)
    monkeypatch.setenv("S3_BUCKET", bucket)
    settings.STORAGES = {**settings.STORAGES, **media_storages("s3")}
    assert client.get("/healthz").status_code == 200
    monkeypatch.setenv("S3_ENDPOINT_URL", f"http://127.0.0.1:{free_port()}")
    settings.STORAGES = {**settings.STORAGES, **media_storages("s3")}
    response = client.get("/healthz")
    assert response.status_code == 503 and _checks(response)["storage"] is False
    assert response.json()["checks"]["storage"]["ms"] < 15000


HEALTH_PROBE = """
import json, django
django.setup()
from django.test import Client
response = Client().get("/healthz", HTTP_HOST="127.0.0.1")
print(json.dumps({"status": response.status_code, "body": response.json()}))
"""


def test_it_answers_503_when_the_database_does_not_answer(tmp_path):
    """PostgreSQL not listening: 503 within the connect timeout, database check failed."""
    environment = production_environment(
        DATABASE_URL=f"postgres://heatmark@127.0.0.1:{free_port()}/heatmark",
        MEDIA_ROOT=str(tmp_path / "media"),
        DB_CONNECT_TIMEOUT="2",
        LOG_LEVEL="CRITICAL",
    )
    result = subprocess.run(
        [sys.executable, "-c", HEALTH_PROBE],
        cwd=ROOT,
        env=environment,
        capture_output=True,
        text=True,
        timeout=120,
    )
    seen = json.loads(result.stdout.strip().splitlines()[-1])
    assert seen["status"] == 503, result.stderr[-2000:]
    checks = {name: check["ok"] for name, check in seen["body"]["checks"].items()}
    assert checks == {"database": False, "broker": True, "storage": True}


def test_it_writes_one_json_object_per_request_with_its_ids(rf: RequestFactory, owner, caplog):
    """A signed-in request's line carries its request id, user id and organization id."""
    request = rf.get("/surveys/", HTTP_X_REQUEST_ID="proxy-given-id-0001")
    request.user = owner.user
    assert owner.user.membership.organization_id  # the view asked for it: cached on the user

    def view(request):
        logging.getLogger("survey.views").warning("inside the view")
        from django.http import HttpResponse

        return HttpResponse("fine")

    with caplog.at_level(logging.INFO):
        response = RequestLogMiddleware(view)(request)
    assert response["X-Request-ID"] == "proxy-given-id-0001"
    formatter, context = JsonFormatter(), ContextFilter()
    lines = []
    for record in caplog.records:
        context.filter(record)
        lines.append(json.loads(formatter.format(record)))
    inside, summary = lines[-2], lines[-1]
    for line in (inside, summary):
        assert line["request_id"] == "proxy-given-id-0001"
        assert line["user_id"] == owner.user.pk
        assert line["organization_id"] == owner.organization_id
        assert line["task_id"] is None
    assert inside["message"] == "inside the view" and inside["level"] == "WARNING"
    assert summary["status"] == 200 and summary["path"] == "/surveys/"
    assert summary["duration_ms"] >= 0


def test_it_makes_its_own_request_id_when_the_given_one_is_not_a_plain_token(rf, db):
    """A header with spaces or quotes (log injection) is replaced by a fresh id."""
    request = rf.get("/", HTTP_X_REQUEST_ID='bad id"\nforged')
    from django.contrib.auth.models import AnonymousUser
    from django.http import HttpResponse

    request.user = AnonymousUser()
    response = RequestLogMiddleware(lambda r: HttpResponse())(request)
    assert response["X-Request-ID"] != 'bad id"\nforged'
    assert len(response["X-Request-ID"]) == 32


def test_it_logs_plain_lines_in_development(settings):
    """DEBUG=1 without LOG_FORMAT: readable lines, not JSON."""
    assert settings.LOG_FORMAT == "plain"
    assert settings.LOGGING["handlers"]["console"]["formatter"] == "plain"


class _Collector(BaseHTTPRequestHandler):
    received: list[bytes] = []

    def do_POST(self):  # noqa: N802 - the name http.server calls
        body = self.rfile.read(int(self.headers.get("Content-Length", 0)))
        encoding = self.headers.get("Content-Encoding", "")
        if encoding == "gzip":
            body = gzip.decompress(body)
        elif encoding == "br":
            import brotli

            body = brotli.decompress(body)
        _Collector.received.append(body)
        self.send_response(200)
        self.end_headers()
        self.wfile.write(b"{}")

    def log_message(self, *args):
        pass


ERROR_PROBE = """
import django, logging, sentry_sdk
django.setup()
print("active" if sentry_sdk.get_client().is_active() else "inactive")
try:
    1 / 0
except ZeroDivisionError:
    logging.getLogger("survey.views").exception("error-report probe failed on purpose")
"""


@pytest.mark.parametrize("enabled", [True, False])
def test_it_reports_errors_only_when_sentry_dsn_is_set(tmp_path, enabled):
    """With SENTRY_DSN an error reaches the collector named there; without, nothing starts."""
    _Collector.received = []
    server = ThreadingHTTPServer(("127.0.0.1", 0), _Collector)
    thread = threading.Thread(target=server.serve_forever, daemon=True)
    thread.start()
    port = server.server_address[1]
    environment = production_environment(
        DATABASE_URL=f"sqlite:///{tmp_path / 'db.sqlite3'}", LOG_LEVEL="ERROR"
    )
    if enabled:
        environment["SENTRY_DSN"] = f"http://publickey@127.0.0.1:{port}/1"
    try:
        result = subprocess.run(
            [sys.executable, "-c", ERROR_PROBE],
            cwd=ROOT,
            env=environment,
            capture_output=True,
            text=True,
            timeout=60,
        )
    finally:
        server.shutdown()
    assert result.returncode == 0, result.stderr[-2000:]
    assert result.stdout.strip() == ("active" if enabled else "inactive")
    sent = b"".join(_Collector.received)
    if enabled:
        assert b"error-report probe failed on purpose" in sent
        assert b"ZeroDivisionError" in sent
    else:
        assert sent == b""
