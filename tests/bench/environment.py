"""The bench's own database, media root and broker, set up before Django starts.

On the embedded default the database is a SQLite file in a temporary folder. When
DATABASE_URL names PostgreSQL, the bench creates (and afterwards drops) a separate database
`<name>_bench` on the same server; the one in DATABASE_URL is never touched. When REDIS_URL
is set, the bench uses database BENCH_REDIS_DB (default 15) of that Redis server and empties
it before and after. On PostgreSQL + Redis, media go to a bucket of a loopback S3 server
(moto's, started here) as in a scaled-out production; elsewhere to a temporary folder.
Static files are collected first, as the Docker image does (the bench runs with DEBUG=0).
"""

import os
import platform
import shutil
import subprocess
import sys
import tempfile
from dataclasses import dataclass, field
from pathlib import Path
from urllib.parse import urlparse, urlunparse

BENCH_REDIS_DB = int(os.environ.get("BENCH_REDIS_DB", "15"))


@dataclass
class BenchEnvironment:
    workdir: Path
    media_root: Path
    database_url: str
    redis_url: str
    admin_database_url: str = ""
    child_env: dict = field(default_factory=dict)
    bench_database: str = ""
    s3_endpoint: str = ""
    s3_server: subprocess.Popen | None = None

    @property
    def database(self) -> str:
        return "postgresql" if self.database_url.startswith("postgres") else "sqlite"

    @property
    def has_worker_services(self) -> bool:
        """A real Celery worker is measured only on PostgreSQL + Redis."""
        return self.database == "postgresql" and bool(self.redis_url)


def _with_path(url: str, path: str) -> str:
    return urlunparse(urlparse(url)._replace(path=path))


def _recreate_postgres_database(admin_url: str, name: str) -> None:
    import psycopg

    with psycopg.connect(admin_url, autocommit=True) as connection:
        connection.execute(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)')
        connection.execute(f'CREATE DATABASE "{name}"')


def _drop_postgres_database(admin_url: str, name: str) -> None:
    import psycopg

    with psycopg.connect(admin_url, autocommit=True) as connection:
        connection.execute(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)')


def _start_object_store(workdir: Path) -> tuple[subprocess.Popen, str, dict]:
    """moto's S3 server on loopback and a bucket in it; the variables that point there."""
    from tests.objectstore import make_bucket, s3_environment, start_s3_server

    process, endpoint = start_s3_server(workdir / "s3-server.log")
    return process, endpoint, s3_environment(endpoint, make_bucket(endpoint))


def _flush_redis(url: str) -> None:
    import redis

    redis.Redis.from_url(url, socket_connect_timeout=2).flushdb()


def prepare() -> BenchEnvironment:
    """Point Django at throw-away storage, start it and migrate. Call before any model import."""
    workdir = Path(tempfile.mkdtemp(prefix="heatmark-bench-"))
    media_root = workdir / "media"
    media_root.mkdir()
    given_database = os.environ.get("DATABASE_URL", "")
    admin_url = bench_database = ""
    if given_database.startswith("postgres"):
        admin_url = given_database
        bench_database = (urlparse(given_database).path.lstrip("/") or "heatmark") + "_bench"
        database_url = _with_path(given_database, "/" + bench_database)
        _recreate_postgres_database(admin_url, bench_database)
    else:
        database_url = f"sqlite:///{workdir / 'bench.sqlite3'}"
    redis_url = os.environ.get("REDIS_URL", "")
    if redis_url:
        redis_url = _with_path(redis_url, f"/{BENCH_REDIS_DB}")
        _flush_redis(redis_url)
    overrides = {
        "DJANGO_SETTINGS_MODULE": "survey.settings",
        "DATABASE_URL": database_url,
        "REDIS_URL": redis_url,
        "MEDIA_ROOT": str(media_root),
        # Measure what production runs: DEBUG off (no query log, no debug templates).
        "DEBUG": "0",
        "SECRET_KEY": "bench-only-" + os.urandom(16).hex(),
        "ALLOWED_HOSTS": "127.0.0.1,localhost,testserver",
        "SECURE_SSL_REDIRECT": "0",
        "SECURE_HSTS_SECONDS": "0",
        "LOG_LEVEL": "ERROR",
        "STATIC_ROOT": str(workdir / "static"),
    }
    s3_server, s3_endpoint = None, ""
    if admin_url and redis_url:
        s3_server, s3_endpoint, s3_variables = _start_object_store(workdir)
        overrides.update(s3_variables)
    os.environ.update(overrides)
    environment = BenchEnvironment(
        workdir=workdir,
        media_root=media_root,
        database_url=database_url,
        redis_url=redis_url,
        admin_database_url=admin_url,
        child_env=dict(os.environ),
        bench_database=bench_database,
        s3_endpoint=s3_endpoint,
        s3_server=s3_server,
    )
    import django
    from django.core.management import call_command

    django.setup()
    call_command("migrate", verbosity=0, interactive=False)
    call_command("collectstatic", verbosity=0, interactive=False)
    return environment


def teardown(environment: BenchEnvironment, *, keep: bool = False) -> None:
    """Drop what the bench made; with keep, leave the folder (and its logs) for a look."""
    from django.db import connections

    connections.close_all()
    if environment.s3_server is not None:
        from tests.objectstore import stop_process

        stop_process(environment.s3_server)
    if keep:
        print(f"Kept {environment.workdir}", file=sys.stderr)
        return
    if environment.admin_database_url:
        _drop_postgres_database(environment.admin_database_url, environment.bench_database)
    if environment.redis_url:
        _flush_redis(environment.redis_url)
    shutil.rmtree(environment.workdir, ignore_errors=True)


def _version(module: str) -> str | None:
    try:
        return __import__(module).__version__
    except Exception:  # a missing or broken library is reported, not fatal
        return None


def machine_info(environment: BenchEnvironment) -> dict:
    cpu_model = ""
    try:
        for line in Path("/proc/cpuinfo").read_text().splitlines():
            if line.startswith("model name"):
                cpu_model = line.split(":", 1)[1].strip()
                break
    except OSError:
        pass
    git = subprocess.run(
        ["git", "rev-parse", "--short", "HEAD"], capture_output=True, text=True, check=False
    )
    return {
        "cores": os.cpu_count(),
        "cpu": cpu_model or platform.processor(),
        "platform": platform.platform(),
        "python": sys.version.split()[0],
        "numpy": _version("numpy"),
        "pillow": _version("PIL"),
        "tifffile": _version("tifffile"),
        "weasyprint": _version("weasyprint"),
        "django": _version("django"),
        "celery": _version("celery"),
        "database": environment.database,
        "broker": "redis" if environment.redis_url else "eager (in-process)",
        "media": "S3 (moto on loopback)" if environment.s3_endpoint else "local folder",
        "commit": git.stdout.strip() or None,
    }
