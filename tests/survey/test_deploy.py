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


LONG_RUNNING = {"proxy", "web", "worker", "beat", "objects", "redis", "postgres"}
ONE_SHOT = {"migrate", "bucket"}


def test_it_defines_the_services_with_health_checks():
    """Every long-running service has a health check and restarts; one-shots run once."""
    services = compose()["services"]
    assert set(services) == LONG_RUNNING | ONE_SHOT
    for name in LONG_RUNNING:
        assert services[name]["healthcheck"]["test"], name
        assert services[name]["restart"] == "unless-stopped", name
    for name in ONE_SHOT:
        assert services[name]["restart"] == "no", name
    assert "gunicorn" in services["web"]["command"]
    assert "celery -A survey.celery worker" in services["worker"]["command"]
    assert "--max-tasks-per-child" in services["worker"]["command"]
    assert services["migrate"]["command"] == "python manage.py migrate --noinput"
    for name in ("web", "worker", "beat"):
        depends = services[name]["depends_on"]
        assert depends["migrate"]["condition"] == "service_completed_successfully", name
        assert depends["bucket"]["condition"] == "service_completed_successfully", name


def test_it_checks_the_web_service_through_healthz():
    """The web health check asks /healthz with an allowed host name; urlopen fails on 503."""
    test = " ".join(compose()["services"]["web"]["healthcheck"]["test"])
    assert "http://127.0.0.1:8000/healthz" in test
    assert "ALLOWED_HOSTS" in test and "urlopen" in test


def test_it_runs_celery_beat_as_its_own_service():
    """One beat service runs the periodic jobs; web and workers do not run beat themselves."""
    services = compose()["services"]
    assert services["beat"]["command"].startswith("celery -A survey.celery beat")
    assert "deploy" not in services["beat"]  # one beat per stack, never replicated
    assert (
        "--beat" not in services["worker"]["command"] and " -B" not in services["worker"]["command"]
    )


def test_it_lets_only_the_proxy_reach_gunicorn():
    """Only the proxy publishes ports; gunicorn sits on an internal network with it."""
    data = compose()
    services = data["services"]
    published = {name for name, service in services.items() if service.get("ports")}
    assert published == {"proxy"}
    assert data["networks"]["frontend"]["internal"] is True
    on_frontend = {name for name, s in services.items() if "frontend" in s.get("networks", [])}
    assert on_frontend == {"proxy", "web"}
    environment = services["web"]["environment"]
    assert environment["TRUSTED_PROXY_HEADER"] == "X-Forwarded-For"
    assert environment["TRUSTED_PROXY_COUNT"] == "1"
    caddyfile = (ROOT / ".docker" / "Caddyfile").read_text()
    assert "reverse_proxy web:8000" in caddyfile
    assert "./.docker/Caddyfile:/etc/caddy/Caddyfile:ro" in services["proxy"]["volumes"]


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
    """The database and the object store survive a container rebuild; media go to the bucket."""
    data = compose()
    assert {"db", "objects", "redis"} <= set(data["volumes"])
    services = data["services"]
    assert "db:/var/lib/postgresql/data" in services["postgres"]["volumes"]
    assert "objects:/data" in services["objects"]["volumes"]
    for name in ("web", "worker", "beat"):
        environment = services[name]["environment"]
        assert environment["MEDIA_STORAGE"] == "s3", name
        assert environment["S3_ENDPOINT_URL"] == "${S3_ENDPOINT_URL:-http://objects:9000}", name
        assert "volumes" not in services[name], f"{name} keeps nothing on its own disk"
    assert "mc version enable" in services["bucket"]["command"][0]


def test_it_requires_the_secrets():
    """SECRET_KEY, ALLOWED_HOSTS, the database password and the bucket keys have no default."""
    services = compose()["services"]
    environment = services["web"]["environment"]
    assert environment["SECRET_KEY"] == "${SECRET_KEY:?set SECRET_KEY}"
    assert environment["ALLOWED_HOSTS"].startswith("${ALLOWED_HOSTS:?")
    assert environment["AWS_SECRET_ACCESS_KEY"].startswith("${AWS_SECRET_ACCESS_KEY:?")
    assert environment["DEBUG"] == "0"
    assert services["postgres"]["environment"]["POSTGRES_PASSWORD"].startswith(
        "${POSTGRES_PASSWORD:?"
    )
    assert services["web"]["depends_on"]["postgres"]["condition"] == "service_healthy"


def test_it_builds_the_image_from_the_runtime_requirements_only():
    """The image installs requirements.txt (no test tools) and collects static files."""
    dockerfile = (ROOT / ".docker" / "Dockerfile").read_text()
    assert "pip install --no-cache-dir -r requirements.txt" in dockerfile
    assert "requirements-dev" not in dockerfile
    assert re.search(r"RUN DEBUG=0 .*manage\.py collectstatic --noinput", dockerfile)
    runtime = (ROOT / "requirements.txt").read_text().lower()
    for tool in ("pytest", "selenium", "hypothesis", "scipy", "psychrolib", "ruff", "moto"):
        assert tool not in runtime, tool
    development = (ROOT / "requirements-dev.txt").read_text()
    assert development.splitlines()[1] == "-r requirements.txt"


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
