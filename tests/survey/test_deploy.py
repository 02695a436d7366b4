"""Deployment files: docker-compose.yml, .env.example and Django's deployment checks."""

import json
import os
import re
import secrets
import subprocess
import sys
from pathlib import Path

import yaml

ROOT = Path(__file__).resolve().parents[2]


def compose() -> dict:
    """docker-compose.yml as YAML reads it (PyYAML resolves its anchors and merge keys)."""
    return yaml.safe_load((ROOT / "docker-compose.yml").read_text())


def test_it_defines_the_four_services_with_health_checks():
    """web, worker, redis and postgres each have a health check and a restart policy."""
    services = compose()["services"]
    assert set(services) == {"web", "worker", "redis", "postgres"}
    for name, service in services.items():
        assert service["healthcheck"]["test"], name
        assert service["restart"] == "unless-stopped", name
    assert "gunicorn" in services["web"]["command"]
    assert "celery -A survey.celery worker" in services["worker"]["command"]
    assert "--max-tasks-per-child" in services["worker"]["command"]


def test_it_recycles_web_workers_with_jitter():
    """The web command reads .docker/gunicorn.conf.py, which restarts each worker after
    about 500 requests, spread by a jitter (tested with real gunicorn in test_gunicorn.py)."""
    command = compose()["services"]["web"]["command"]
    assert "gunicorn -c .docker/gunicorn.conf.py" in command
    config: dict = {}
    exec((ROOT / ".docker" / "gunicorn.conf.py").read_text(), config)
    assert config["wsgi_app"] == "survey.wsgi:application"
    assert config["max_requests"] == 500 and config["max_requests_jitter"] == 50


def test_it_keeps_the_database_and_media_in_volumes():
    """The database and media survive a container rebuild."""
    data = compose()
    assert {"db", "media"} <= set(data["volumes"])
    services = data["services"]
    assert "db:/var/lib/postgresql/data" in services["postgres"]["volumes"]
    for name in ("web", "worker"):
        assert "media:/data/media" in services[name]["volumes"], name
        assert services[name]["environment"]["MEDIA_ROOT"] == "/data/media"


def test_it_requires_the_secrets():
    """SECRET_KEY, ALLOWED_HOSTS and the database password have no default."""
    services = compose()["services"]
    environment = services["web"]["environment"]
    assert environment["SECRET_KEY"] == "${SECRET_KEY:?set SECRET_KEY}"
    assert environment["ALLOWED_HOSTS"].startswith("${ALLOWED_HOSTS:?")
    assert environment["DEBUG"] == "0"
    assert services["postgres"]["environment"]["POSTGRES_PASSWORD"].startswith(
        "${POSTGRES_PASSWORD:?"
    )
    assert services["web"]["depends_on"]["postgres"]["condition"] == "service_healthy"


def test_it_lists_every_setting_in_the_env_example():
    """Each environment variable settings.py reads is documented in .env.example."""
    settings_text = (ROOT / "survey" / "settings.py").read_text()
    used = set(re.findall(r'env_(?:str|bool|int|list)\(\s*"([A-Z0-9_]+)"', settings_text))
    listed = set(re.findall(r"^([A-Z0-9_]+)=", (ROOT / ".env.example").read_text(), re.MULTILINE))
    assert used, "no env_* calls found in settings.py"
    assert used - listed == set()


def test_it_passes_the_deployment_checks():
    """`manage.py check --deploy` with production settings reports no errors."""
    environment = {
        key: value
        for key, value in os.environ.items()
        if key not in {"DATABASE_URL", "REDIS_URL", "DJANGO_SETTINGS_MODULE"}
    }
    environment.update(
        DEBUG="0",
        SECRET_KEY=secrets.token_urlsafe(50),
        ALLOWED_HOSTS="example.org",
        DJANGO_SETTINGS_MODULE="survey.settings",
    )
    result = subprocess.run(
        [sys.executable, "manage.py", "check", "--deploy", "--fail-level", "ERROR"],
        cwd=ROOT,
        env=environment,
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert result.returncode == 0, result.stdout + result.stderr
    assert "ERROR" not in result.stdout + result.stderr


def test_it_registers_every_periodic_job_it_schedules(settings):
    """Each task of CELERY_BEAT_SCHEDULE is one a worker loads (its tasks.py modules and
    CELERY_IMPORTS), checked in a fresh interpreter that starts like a worker."""
    script = (
        "import django, json; django.setup()\n"
        "from survey.celery import app\n"
        "app.loader.import_default_modules()\n"
        "print(json.dumps(sorted(app.tasks)))\n"
    )
    environment = {k: v for k, v in os.environ.items() if k not in {"DATABASE_URL", "REDIS_URL"}}
    environment["DJANGO_SETTINGS_MODULE"] = "survey.settings"
    result = subprocess.run(
        [sys.executable, "-c", script], cwd=ROOT, env=environment, capture_output=True, text=True
    )
    assert result.returncode == 0, result.stderr
    registered = set(json.loads(result.stdout.strip().splitlines()[-1]))
    scheduled = {entry["task"] for entry in settings.CELERY_BEAT_SCHEDULE.values()}
    assert {"survey.jobs.requeue_thermograms", "reports.jobs.requeue_reports"} <= scheduled
    assert scheduled <= registered
