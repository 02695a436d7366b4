"""The web server as deployed: real gunicorn with .docker/gunicorn.conf.py, on PostgreSQL.

- Workers are recycled after about GUNICORN_MAX_REQUESTS requests (with jitter), so memory
  one request needed goes back to the system.
- A thermogram with ten long line marks answers its JSON in a fraction of a megabyte and
  seconds, and the worker stays small: profiles are capped (they once made the JSON
  188 MB and each worker 3.7 GB).
"""

import json
import os
import subprocess
import sys
import time
import urllib.request
from http.cookies import SimpleCookie
from pathlib import Path

import numpy as np
import pytest

from survey.thermal.marks import MAX_PROFILE_SAMPLES
from tests.brokers import free_port
from tests.factories import make_thermogram
from tests.workers import test_database_url

ROOT = Path(__file__).resolve().parents[2]
CONFIG = ROOT / ".docker" / "gunicorn.conf.py"


def _children(pid: int) -> set[int]:
    path = Path(f"/proc/{pid}/task/{pid}/children")
    return {int(child) for child in path.read_text().split()} if path.exists() else set()


def _peak_rss_mb(pid: int) -> float:
    for line in Path(f"/proc/{pid}/status").read_text().splitlines():
        if line.startswith("VmHWM:"):
            return int(line.split()[1]) / 1024
    return 0.0


class Gunicorn:
    def __init__(self, postgres_url: str, media_root: str, log_path: Path, **environment):
        self.port = free_port()
        env = dict(
            os.environ,
            DATABASE_URL=test_database_url(postgres_url),
            MEDIA_ROOT=media_root,
            GUNICORN_BIND=f"127.0.0.1:{self.port}",
            WEB_CONCURRENCY="1",
            DJANGO_SETTINGS_MODULE="survey.settings",
            CELERY_EAGER="1",
        )
        env.pop("REDIS_URL", None)
        env.update(environment)
        gunicorn = Path(sys.executable).with_name("gunicorn")
        with open(log_path, "ab") as log:
            self.process = subprocess.Popen(
                [str(gunicorn), "-c", str(CONFIG)],
                cwd=ROOT,
                env=env,
                stdout=log,
                stderr=subprocess.STDOUT,
            )
        self.log_path = log_path
        deadline = time.monotonic() + 60
        while not self._answers():
            if time.monotonic() > deadline or self.process.poll() is not None:
                raise RuntimeError(log_path.read_text(errors="replace")[-3000:])
            time.sleep(0.1)

    def url(self, path: str) -> str:
        return f"http://127.0.0.1:{self.port}{path}"

    def _answers(self) -> bool:
        try:
            urllib.request.urlopen(self.url("/accounts/login/"), timeout=2).read()
        except OSError:
            return False
        return True

    def stop(self) -> None:
        self.process.terminate()
        try:
            self.process.wait(timeout=20)
        except subprocess.TimeoutExpired:
            self.process.kill()
            self.process.wait()


@pytest.fixture
def gunicorn_server(postgres_url, transactional_db, settings, tmp_path):
    servers = []

    def start(**environment) -> Gunicorn:
        server = Gunicorn(
            postgres_url, str(settings.MEDIA_ROOT), tmp_path / "web.log", **environment
        )
        servers.append(server)
        return server

    yield start
    for server in servers:
        server.stop()


@pytest.mark.services
def test_it_recycles_web_workers_after_their_share_of_requests(gunicorn_server):
    """With max_requests 3 and jitter 1, 12 requests are served by at least three workers in
    turn, each answering; the master stays."""
    server = gunicorn_server(GUNICORN_MAX_REQUESTS="3", GUNICORN_MAX_REQUESTS_JITTER="1")
    seen = set()
    for _ in range(12):
        with urllib.request.urlopen(server.url("/accounts/login/"), timeout=10) as response:
            assert response.status == 200
        seen |= _children(server.process.pid)
    # At most 3 + 1 requests per worker (the first answered the start-up probe too).
    assert len(seen) >= 3, server.log_path.read_text(errors="replace")[-2000:]
    assert server.process.poll() is None


def _session_cookie(member) -> str:
    """A signed-in session of `member`, saved in the database the server reads."""
    from django.contrib.auth import BACKEND_SESSION_KEY, HASH_SESSION_KEY, SESSION_KEY
    from django.contrib.sessions.backends.db import SessionStore

    session = SessionStore()
    session[SESSION_KEY] = str(member.user.pk)
    session[BACKEND_SESSION_KEY] = "survey.backends.ThrottledModelBackend"
    session[HASH_SESSION_KEY] = member.user.get_session_auth_hash()
    session.save()
    return f"sessionid={session.session_key}"


def _get(url: str, cookie: str, timeout: float = 60):
    return urllib.request.urlopen(
        urllib.request.Request(url, headers={"Cookie": cookie}), timeout=timeout
    )


@pytest.mark.services
def test_it_answers_a_thermogram_with_ten_long_lines_small_and_fast(
    gunicorn_server, envelope_survey, thermographer
):
    """Ten lines across a 20 000-pixel-wide thermogram, drawn through the API: each profile
    holds at most MAX_PROFILE_SAMPLES points with the line's extremes, the JSON stays small,
    and the worker's peak memory stays low."""
    rng = np.random.default_rng(3)
    field = (20 + rng.random((1000, 20000))).astype(np.float32)
    field[::100, 15000] = 80.0  # one hot pixel on each line drawn below (invented)
    thermogram = make_thermogram(envelope_survey, field, title="Long roof edge")
    server = gunicorn_server()
    cookie = _session_cookie(thermographer)
    with _get(server.url(f"/thermograms/{thermogram.pk}/"), cookie) as page:
        assert page.status == 200
        jar = SimpleCookie("; ".join(page.headers.get_all("Set-Cookie")))
    token = jar["csrftoken"].value
    cookie += f"; csrftoken={token}"
    for row in range(0, 1000, 100):
        request = urllib.request.Request(
            server.url(f"/api/thermograms/{thermogram.pk}/marks/"),
            data=json.dumps({"kind": "line", "points": [[0, row], [19999, row]]}).encode(),
            headers={"Content-Type": "application/json", "X-CSRFToken": token, "Cookie": cookie},
            method="POST",
        )
        with urllib.request.urlopen(request, timeout=60) as response:
            assert response.status == 201
    started = time.monotonic()
    with _get(server.url(f"/api/thermograms/{thermogram.pk}/"), cookie) as response:
        body = response.read()
    took = time.monotonic() - started
    marks = json.loads(body)["marks"]
    assert len(marks) == 10
    for mark in marks:
        values = [v for _, v in mark["profile"] if v is not None]
        assert len(mark["profile"]) <= MAX_PROFILE_SAMPLES
        assert max(values) == pytest.approx(80.0) == mark["stats"]["max_c"]
    # 10 × 1024 points of about 20 bytes each, plus the rest: well under a megabyte.
    assert len(body) < 1_000_000 and took < 5
    workers = _children(server.process.pid)
    assert max(_peak_rss_mb(pid) for pid in workers) < 600
