"""Real Celery workers for the tests that need one: start, stop, and point the publisher.

Every worker runs `celery -A survey.celery worker` with one process against the test
database pytest-django created and a Redis database of its own, so no other worker on the
machine takes its tasks.
"""

import contextlib
import os
import subprocess
import sys
from pathlib import Path
from urllib.parse import urlparse, urlunparse

from django.conf import settings as django_settings

ROOT = Path(__file__).resolve().parents[1]


def test_database_url(postgres_url: str) -> str:
    """The URL of the test database pytest-django created (test_<name>)."""
    parsed = urlparse(postgres_url)
    return urlunparse(parsed._replace(path="/" + django_settings.DATABASES["default"]["NAME"]))


test_database_url.__test__ = False  # a helper, not a test, despite its name


def fresh_broker(redis_url: str, db: int) -> str:
    """The URL of Redis database `db`, emptied first."""
    url = urlunparse(urlparse(redis_url)._replace(path=f"/{db}"))
    subprocess.run(["redis-cli", "-u", url, "FLUSHDB"], capture_output=True, timeout=10)
    return url


def start_worker(
    broker: str,
    postgres_url: str,
    media_root: str,
    log_path: Path,
    pool: str = "solo",
    name: str = "",
    **environment: str,
) -> subprocess.Popen:
    """A worker process with one child, logging to `log_path` (appended)."""
    env = dict(
        os.environ,
        DATABASE_URL=test_database_url(postgres_url),
        REDIS_URL=broker,
        CELERY_EAGER="0",
        MEDIA_ROOT=media_root,
        DJANGO_SETTINGS_MODULE="survey.settings",
    )
    env.update(environment)
    celery = Path(sys.executable).with_name("celery")
    command = [str(celery), "-A", "survey.celery", "worker", f"--pool={pool}", "-c", "1"]
    command += ["-l", "INFO", "--without-gossip", "--without-mingle", "--without-heartbeat"]
    if name:
        command += ["-n", name]
    with open(log_path, "ab") as log:
        return subprocess.Popen(command, cwd=ROOT, env=env, stdout=log, stderr=subprocess.STDOUT)


def stop_worker(worker: subprocess.Popen) -> None:
    """Ask the worker to finish, and kill it if it has not within 20 s."""
    if worker.poll() is None:
        worker.terminate()
        try:
            worker.wait(timeout=20)
        except subprocess.TimeoutExpired:
            worker.kill()
            worker.wait()


@contextlib.contextmanager
def broker_at(app, url: str):
    """Point the test process's Celery publisher at `url` for a while."""
    saved = app.conf.broker_url
    app.conf.broker_url = url
    app._pool = None
    app.amqp._producer_pool = None
    try:
        yield
    finally:
        app.pool.force_close_all()
        app.conf.broker_url = saved
        app._pool = None
        app.amqp._producer_pool = None
