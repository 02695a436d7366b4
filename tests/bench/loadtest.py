"""A load test on loopback: gunicorn serving the app, 50 concurrent clients of urllib.

Each client signs in with its own session cookie and repeats a visit (survey page, the
workspace's JSON, a new mark) for 60 seconds; the visits per client are bounded too.
"""

import json
import os
import random
import re
import socket
import string
import subprocess
import sys
import threading
import time
import urllib.error
import urllib.request
from dataclasses import dataclass, field
from pathlib import Path

from tests.bench.environment import BenchEnvironment
from tests.bench.figures_web import mark_payload
from tests.bench.timing import Row, percentile

CLIENTS = 50
VISITS_PER_CLIENT = 1000
DEADLINE_S = 60.0
REQUEST_TIMEOUT_S = 30.0
SERVER_START_TIMEOUT_S = 30.0
# Loopback only: never through a proxy named in the environment.
OPENER = urllib.request.build_opener(urllib.request.ProxyHandler({}))


@dataclass
class Tally:
    latencies: dict[str, list[float]] = field(default_factory=dict)
    errors: dict[str, int] = field(default_factory=dict)
    first_error: dict[str, str] = field(default_factory=dict)
    lock: threading.Lock = field(default_factory=threading.Lock)

    def record(self, endpoint: str, seconds: float, error: str | None) -> None:
        with self.lock:
            self.latencies.setdefault(endpoint, []).append(seconds)
            if error:
                self.errors[endpoint] = self.errors.get(endpoint, 0) + 1
                self.first_error.setdefault(endpoint, error)


def free_port() -> int:
    with socket.socket() as probe:
        probe.bind(("127.0.0.1", 0))
        return probe.getsockname()[1]


def workers() -> int:
    """gunicorn's own rule of thumb: 2 × cores + 1 synchronous workers."""
    return 2 * (os.cpu_count() or 1) + 1


def start_gunicorn(environment: BenchEnvironment, port: int) -> subprocess.Popen:
    log = open(environment.workdir / "gunicorn.log", "wb")  # noqa: SIM115 - lives with the server
    command = [
        sys.executable,
        "-m",
        "gunicorn",
        "survey.wsgi",
        "--bind",
        f"127.0.0.1:{port}",
        "--workers",
        str(workers()),
        "--timeout",
        "60",
    ]
    server = subprocess.Popen(
        command,
        cwd=Path(__file__).resolve().parents[2],
        env=environment.child_env,
        stdout=log,
        stderr=subprocess.STDOUT,
    )
    deadline = time.monotonic() + SERVER_START_TIMEOUT_S
    while time.monotonic() < deadline:
        if server.poll() is not None:
            raise RuntimeError(f"gunicorn exited with {server.returncode}; see gunicorn.log")
        try:
            with socket.create_connection(("127.0.0.1", port), 0.5):
                return server
        except OSError:
            time.sleep(0.1)
    server.terminate()
    raise RuntimeError("gunicorn did not start listening")


def session_cookie(user) -> str:
    from django.test import Client

    client = Client()
    client.force_login(user)
    return client.cookies["sessionid"].value


def _short(body: bytes) -> str:
    """An error page as one short line of text: tags dropped, whitespace collapsed."""
    text = re.sub(r"<[^>]*>", " ", body[:2000].decode("utf-8", "replace"))
    return " ".join(text.split())[:120]


def _request(request: urllib.request.Request) -> str | None:
    """None when the answer is a success, else a short reason."""
    try:
        with OPENER.open(request, timeout=REQUEST_TIMEOUT_S) as response:
            response.read()
            return None
    except urllib.error.HTTPError as error:
        return f"HTTP {error.code}: {_short(error.read())}"
    except (urllib.error.URLError, OSError) as error:
        return f"{type(error).__name__}: {error}"


@dataclass
class Target:
    base: str
    survey_id: int
    thermograms: list[int]


def _visit_requests(target: Target, rng: random.Random, headers: dict, csrf: str) -> list:
    """One inspector's visit: the survey page, one thermogram's workspace JSON, a new mark."""
    thermogram = rng.choice(target.thermograms)
    post_headers = {**headers, "X-CSRFToken": csrf, "Content-Type": "application/json"}
    return [
        (
            "survey page",
            urllib.request.Request(f"{target.base}/surveys/{target.survey_id}/", headers=headers),
        ),
        (
            "workspace JSON",
            urllib.request.Request(f"{target.base}/api/thermograms/{thermogram}/", headers=headers),
        ),
        (
            "marks POST",
            urllib.request.Request(
                f"{target.base}/api/thermograms/{thermogram}/marks/",
                data=json.dumps(mark_payload(rng)).encode(),
                headers=post_headers,
                method="POST",
            ),
        ),
    ]


def _client(
    target: Target,
    cookie: str,
    seed: int,
    tally: Tally,
    deadline: float,
    visits: int = VISITS_PER_CLIENT,
) -> None:
    rng = random.Random(seed)
    csrf = "".join(rng.choice(string.ascii_letters + string.digits) for _ in range(32))
    headers = {"Cookie": f"sessionid={cookie}; csrftoken={csrf}"}
    for _visit in range(visits):
        steps = _visit_requests(target, rng, headers, csrf)
        for endpoint, request in steps:
            if time.monotonic() > deadline:
                return
            start = time.perf_counter()
            error = _request(request)
            tally.record(endpoint, time.perf_counter() - start, error)


def _warm_up(target: Target, cookie: str) -> None:
    """One visit per worker, concurrently, so imports and template loading are not timed."""
    deadline = time.monotonic() + 60
    threads = [
        threading.Thread(target=_client, args=(target, cookie, i, Tally(), deadline, 1))
        for i in range(workers())
    ]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join(90)


def figure_load(environment: BenchEnvironment, survey) -> list[Row]:
    """Run the load test and return one row per endpoint plus a total."""
    from django.db import connections

    user = survey.thermographer.user
    thermograms = list(survey.thermograms.values_list("pk", flat=True))
    cookies = [session_cookie(user) for _ in range(CLIENTS)]
    connections.close_all()  # SQLite: let the server's workers write without our handle open
    port = free_port()
    server = start_gunicorn(environment, port)
    tally = Tally()
    target = Target(f"http://127.0.0.1:{port}", survey.pk, thermograms)
    try:
        _warm_up(target, cookies[0])
        deadline = time.monotonic() + DEADLINE_S
        start = time.perf_counter()
        threads = [
            threading.Thread(
                target=_client,
                args=(target, cookies[i], 100 + i, tally, deadline),
            )
            for i in range(CLIENTS)
        ]
        for thread in threads:
            thread.start()
        for thread in threads:
            thread.join(DEADLINE_S + REQUEST_TIMEOUT_S)
        elapsed = time.perf_counter() - start
    finally:
        server.terminate()
        try:
            server.wait(timeout=15)
        except subprocess.TimeoutExpired:
            server.kill()
    return _rows(tally, elapsed, server_errors(environment.workdir / "gunicorn.log"))


def server_errors(log: Path) -> str:
    """The most frequent exception in the server's log, with its count, or ''."""
    pattern = re.compile(r"^([\w.]+(?:Error|Exception)): (.*)$")
    counts: dict[str, int] = {}
    for line in log.read_text(errors="replace").splitlines():
        match = pattern.match(line)
        if match and not match.group(1).startswith("sqlite3."):
            key = f"{match.group(1)}: {match.group(2)[:80]}"
            counts[key] = counts.get(key, 0) + 1
    if not counts:
        return ""
    top = max(counts, key=counts.get)
    return f"server log: {counts[top]}× {top}"


def _rows(tally: Tally, elapsed: float, server_error: str = "") -> list[Row]:
    rows = []
    total = sum(len(v) for v in tally.latencies.values())
    total_errors = sum(tally.errors.values())
    for endpoint, samples in tally.latencies.items():
        errors = tally.errors.get(endpoint, 0)
        first = tally.first_error.get(endpoint, "")
        rows.append(
            Row(
                f"load {CLIENTS} clients: {endpoint} p95",
                percentile(samples, 95) * 1e3,
                "ms",
                target_text="no errors",
                met_override=errors == 0,
                note=(
                    f"p50 {percentile(samples, 50) * 1e3:.0f} ms, {len(samples)} requests, "
                    f"{errors} errors" + (f" (first: {first[:120]})" if first else "")
                ),
                details={
                    "p50_ms": percentile(samples, 50) * 1e3,
                    "requests": len(samples),
                    "errors": errors,
                },
            )
        )
    rows.append(
        Row(
            f"load {CLIENTS} clients: throughput",
            total / elapsed,
            "req/s",
            target_text="no errors",
            met_override=total_errors == 0,
            note=f"{total} requests, {total_errors} errors in {elapsed:.1f} s, "
            f"gunicorn {workers()} sync workers" + (f"; {server_error}" if server_error else ""),
            details={"requests": total, "errors": total_errors, "seconds": elapsed},
        )
    )
    return rows
