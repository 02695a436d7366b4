"""The production path in tests: collectstatic, gunicorn with DEBUG=0, a worker, a browser.

Processes run as they do in the Docker image (DEBUG=0, hashed static files from
STATIC_ROOT, JSON logs), on loopback ports chosen at start. `Browser` talks to gunicorn the
way the TLS proxy in front of it would: it says X-Forwarded-Proto: https, and it keeps the
Secure cookies itself (a cookie jar would not send them over plain http).
"""

import contextlib
import os
import re
import secrets
import subprocess
import sys
import time
from dataclasses import dataclass
from pathlib import Path

import requests

from tests.objectstore import free_port, stop_process, wait_for_port

ROOT = Path(__file__).resolve().parents[1]
PRODUCTION_SECRET = secrets.token_urlsafe(50)


def production_environment(**overrides: str) -> dict[str, str]:
    """The variables of a production process on this machine (no inherited database)."""
    environment = {
        key: value
        for key, value in os.environ.items()
        if key
        not in {
            "DATABASE_URL",
            "REDIS_URL",
            "DJANGO_SETTINGS_MODULE",
            "DEBUG",
            "MEDIA_STORAGE",
            "SENTRY_DSN",
        }
    }
    environment.update(
        DEBUG="0",
        SECRET_KEY=PRODUCTION_SECRET,
        ALLOWED_HOSTS="127.0.0.1,localhost",
        DJANGO_SETTINGS_MODULE="survey.settings",
        LOG_LEVEL="INFO",
        PYTHONUNBUFFERED="1",
    )
    environment.update(overrides)
    return environment


def collectstatic(static_root: Path) -> None:
    """What the Docker image does at build: hashed, compressed files in `static_root`."""
    environment = production_environment(STATIC_ROOT=str(static_root))
    result = subprocess.run(
        [sys.executable, "manage.py", "collectstatic", "--noinput", "-v", "0"],
        cwd=ROOT,
        env=environment,
        capture_output=True,
        text=True,
        timeout=300,
    )
    if result.returncode != 0:
        raise RuntimeError(result.stdout + result.stderr)


def manage(environment: dict[str, str], *arguments: str, timeout: float = 300) -> str:
    result = subprocess.run(
        [sys.executable, "manage.py", *arguments],
        cwd=ROOT,
        env=environment,
        capture_output=True,
        text=True,
        timeout=timeout,
    )
    if result.returncode != 0:
        raise RuntimeError(f"manage.py {' '.join(arguments)}: {result.stdout}{result.stderr}")
    return result.stdout


class Gunicorn:
    """gunicorn serving survey.wsgi on a free loopback port."""

    def __init__(self, environment: dict[str, str], log_path: Path, workers: int = 2):
        self.port = free_port()
        self.log_path = log_path
        gunicorn = Path(sys.executable).with_name("gunicorn")
        command = [
            str(gunicorn),
            "survey.wsgi:application",
            "--bind",
            f"127.0.0.1:{self.port}",
            "--workers",
            str(workers),
            "--timeout",
            "120",
        ]
        with open(log_path, "ab") as log:
            self.process = subprocess.Popen(
                command, cwd=ROOT, env=environment, stdout=log, stderr=subprocess.STDOUT
            )
        wait_for_port(self.port, self.process)
        self.url = f"http://127.0.0.1:{self.port}"

    def log(self) -> str:
        return self.log_path.read_text(errors="replace")

    def stop(self) -> None:
        stop_process(self.process)


class Browser:
    """A signed-in visitor behind the TLS proxy: cookies kept by hand, CSRF sent back."""

    def __init__(self, base_url: str):
        self.base_url = base_url
        self.cookies: dict[str, str] = {}

    def _headers(self, extra: dict | None = None) -> dict[str, str]:
        host = self.base_url.split("//", 1)[1]
        headers = {
            "X-Forwarded-Proto": "https",
            "Origin": f"https://{host}",
            "Referer": f"https://{host}/",
        }
        if self.cookies:
            headers["Cookie"] = "; ".join(f"{k}={v}" for k, v in self.cookies.items())
        if "csrftoken" in self.cookies:
            headers["X-CSRFToken"] = self.cookies["csrftoken"]
        headers.update(extra or {})
        return headers

    def request(self, method: str, path: str, **kwargs) -> requests.Response:
        url = path if path.startswith("http") else self.base_url + path
        headers = self._headers(kwargs.pop("headers", None))
        response = requests.request(
            method, url, headers=headers, allow_redirects=False, timeout=120, **kwargs
        )
        for cookie in response.cookies:
            self.cookies[cookie.name] = cookie.value
        return response

    def get(self, path: str, **kwargs) -> requests.Response:
        return self.request("GET", path, **kwargs)

    def post(self, path: str, data: dict | None = None, **kwargs) -> requests.Response:
        if "csrftoken" not in self.cookies:
            self.get("/accounts/login/")
        data = dict(data or {}, csrfmiddlewaretoken=self.cookies["csrftoken"])
        return self.request("POST", path, data=data, **kwargs)

    def sign_in(self, username: str, password: str) -> None:
        self.get("/accounts/login/")
        response = self.post("/accounts/login/", {"username": username, "password": password})
        if response.status_code != 302:
            raise AssertionError(f"sign-in failed: {response.status_code} {response.text[:300]}")


def assets_of(html: str) -> list[tuple[str, str]]:
    """(kind, URL) of every script and stylesheet a page references."""
    found = []
    for tag in re.findall(r"<script\b[^>]*>", html):
        source = re.search(r'\bsrc="([^"]+)"', tag)
        if source:
            kind = "module" if re.search(r'\btype="module"', tag) else "script"
            found.append((kind, source.group(1)))
    for tag in re.findall(r"<link\b[^>]*>", html):
        if re.search(r'\brel="(?:stylesheet|modulepreload)"', tag):
            href = re.search(r'\bhref="([^"]+)"', tag)
            if href:
                found.append(("stylesheet" if "stylesheet" in tag else "module", href.group(1)))
    return found


MODULE_IMPORT = re.compile(
    r"""(?:\bimport\s*(?:[\w*{}\s,]+\s*from\s*)?|\bexport\s*[\w*{}\s,]+\s*from\s*|\bimport\()\s*["'](\.{1,2}/[^"']+)["']"""
)


def module_imports(source: str) -> list[str]:
    """Relative specifiers a JavaScript module imports (static, re-exports and import())."""
    return MODULE_IMPORT.findall(source)


def wait_until(condition, timeout: float, interval: float = 0.2, message: str = "") -> None:
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        if condition():
            return
        time.sleep(interval)
    raise AssertionError(message or f"not done after {timeout} s")


@dataclass
class Stack:
    """One web process and its workers, each with a media folder of its own."""

    web: Gunicorn
    web_media: Path
    workers: list[subprocess.Popen]
    worker_logs: list[Path]
    worker_media: list[Path]

    def logs(self) -> str:
        parts = [f"--- web\n{self.web.log()[-4000:]}"]
        for path in self.worker_logs:
            parts.append(f"--- {path.name}\n{path.read_text(errors='replace')[-4000:]}")
        return "\n".join(parts)


@contextlib.contextmanager
def production_stack(
    tmp_path: Path,
    *,
    postgres_url: str,
    broker: str,
    static_root: Path,
    storage: dict[str, str],
    workers: int = 1,
):
    """gunicorn and `workers` Celery workers with DEBUG=0 on the test database and `broker`.

    Each process gets its own empty MEDIA_ROOT: with `storage` naming a bucket nothing may
    land there, and no process can read another's disk.
    """
    from tests.workers import start_worker, stop_worker, test_database_url

    shared = dict(
        DEBUG="0",
        SECRET_KEY=PRODUCTION_SECRET,
        ALLOWED_HOSTS="127.0.0.1,localhost",
        STATIC_ROOT=str(static_root),
        LOG_LEVEL="INFO",
        **storage,
    )
    web_media = tmp_path / "web-media"
    web_media.mkdir()
    environment = production_environment(
        DATABASE_URL=test_database_url(postgres_url),
        REDIS_URL=broker,
        CELERY_EAGER="0",
        MEDIA_ROOT=str(web_media),
        **shared,
    )
    started: list[subprocess.Popen] = []
    logs, folders = [], []
    web = None
    try:
        for index in range(workers):
            folder = tmp_path / f"worker{index + 1}-media"
            folder.mkdir()
            log = tmp_path / f"worker{index + 1}.log"
            started.append(
                start_worker(
                    broker,
                    postgres_url,
                    str(folder),
                    log,
                    name=f"worker{index + 1}@%h",
                    **shared,
                )
            )
            logs.append(log)
            folders.append(folder)
        web = Gunicorn(environment, tmp_path / "gunicorn.log")
        wait_until(
            lambda: all("ready." in log.read_text(errors="replace") for log in logs),
            timeout=60,
            message="the workers did not start",
        )
        yield Stack(web, web_media, started, logs, folders)
    finally:
        if web is not None:
            web.stop()
        for worker in started:
            stop_worker(worker)
