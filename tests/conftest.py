"""Shared fixtures: named personas in two organizations, and service checks.

The owner organization "Northwind Thermal" has an admin (Olivia), a reviewer (Rita), a
thermographer (Theo) and a read-only viewer (Vera). "Ridgeback Inspections" is another firm:
its member Otto is the outsider who must never see Northwind's data.
"""

import os
import socket
import tempfile
from urllib.parse import urlparse

import pytest
from django.contrib.auth import get_user_model

from survey.models import Client, Member, Organization, Site, Survey
from tests import hypothesis_profiles  # noqa: F401  (loads the Hypothesis profile)

PASSWORD = "correct-horse-battery-staple"


def _service_answers(url: str, default_port: int) -> bool:
    parsed = urlparse(url)
    try:
        with socket.create_connection(
            (parsed.hostname or "127.0.0.1", parsed.port or default_port), 1
        ):
            return True
    except OSError:
        return False


def require_service(name: str, url: str | None, default_port: int) -> None:
    """Skip when a service is absent, or fail when REQUIRE_SERVICES=1 (set by .ci/run)."""
    reason = None
    if not url:
        reason = f"{name} is not configured (set its URL variable)"
    elif not _service_answers(url, default_port):
        reason = f"{name} does not answer at {url}"
    if reason:
        if os.environ.get("REQUIRE_SERVICES") == "1":
            pytest.fail(f"{reason}, and REQUIRE_SERVICES=1")
        pytest.skip(reason)


DB_FIXTURES = {"db", "transactional_db", "django_db_setup"}


def pytest_collection_modifyitems(config, items):
    """Mark every test that touches the database or the task runner as `db_backend`.

    CI runs the whole suite on PostgreSQL + Redis, then only `-m db_backend` again on the
    embedded default (SQLite, tasks in-process): the rest does not depend on the backend.
    """
    for item in items:
        fixtures = set(getattr(item, "fixturenames", ()))
        if fixtures & DB_FIXTURES or item.get_closest_marker("django_db"):
            item.add_marker(pytest.mark.db_backend)


@pytest.fixture
def redis_url() -> str:
    url = os.environ.get("REDIS_URL", "")
    require_service("Redis", url, 6379)
    return url


@pytest.fixture
def private_redis(tmp_path):
    """A Redis server of this test alone (started on a free port), which it may stop."""
    from tests.brokers import PrivateRedis

    server = PrivateRedis(tmp_path)
    if server.binary is None:
        reason = "redis-server is not installed"
        if os.environ.get("REQUIRE_SERVICES") == "1":
            pytest.fail(f"{reason}, and REQUIRE_SERVICES=1")
        pytest.skip(reason)
    server.start()
    try:
        yield server
    finally:
        server.stop()


@pytest.fixture
def publisher(settings):
    """The test process publishes tasks to a broker instead of running them in-process."""
    from survey.celery import app

    settings.CELERY_TASK_ALWAYS_EAGER = False
    app.conf.task_always_eager = False
    try:
        yield app
    finally:
        app.conf.task_always_eager = True


@pytest.fixture
def postgres_url() -> str:
    url = os.environ.get("DATABASE_URL", "")
    if not url.startswith("postgres"):
        url = ""
    require_service("PostgreSQL", url, 5432)
    return url


@pytest.fixture(autouse=True)
def _fast_passwords(settings):
    """Password hashing is not under test here; the real hasher costs a second per persona."""
    settings.PASSWORD_HASHERS = ["django.contrib.auth.hashers.MD5PasswordHasher"]


@pytest.fixture(autouse=True)
def _media_in_tmp(settings, tmp_path_factory):
    """Each test writes media in its own folder; celery runs eagerly unless a test says not."""
    settings.MEDIA_ROOT = str(tmp_path_factory.mktemp("media"))
    settings.CELERY_TASK_ALWAYS_EAGER = True
    from survey.celery import app

    app.conf.task_always_eager = True
    yield


def make_person(org: Organization, username: str, role: str, name: str) -> Member:
    first, _, last = name.partition(" ")
    user = get_user_model().objects.create_user(
        username=username, password=PASSWORD, first_name=first, last_name=last
    )
    return Member.objects.create(user=user, organization=org, role=role)


@pytest.fixture
def org(db) -> Organization:
    return make_organization()


@pytest.fixture
def other_org(db) -> Organization:
    return Organization.objects.create(name="Ridgeback Inspections", slug="ridgeback")


@pytest.fixture
def owner(org) -> Member:
    return make_person(org, "olivia", Member.Role.ADMIN, "Olivia Admin")


@pytest.fixture
def reviewer(org) -> Member:
    return make_person(org, "rita", Member.Role.REVIEWER, "Rita Reviewer")


@pytest.fixture
def thermographer(org) -> Member:
    return make_person(org, "theo", Member.Role.THERMOGRAPHER, "Theo Thermographer")


@pytest.fixture
def viewer(org) -> Member:
    return make_person(org, "vera", Member.Role.VIEWER, "Vera Viewer")


@pytest.fixture
def outsider(other_org) -> Member:
    return make_person(other_org, "otto", Member.Role.ADMIN, "Otto Outsider")


def login(client, member: Member):
    client.force_login(member.user)
    return client


@pytest.fixture
def owner_client(client, owner):
    return login(client, owner)


@pytest.fixture
def thermographer_client(client, thermographer):
    return login(client, thermographer)


@pytest.fixture
def reviewer_client(client, reviewer):
    return login(client, reviewer)


@pytest.fixture
def outsider_client(client, outsider):
    return login(client, outsider)


def make_organization() -> Organization:
    return Organization.objects.create(name="Northwind Thermal", slug="northwind")


def make_site(org: Organization) -> Site:
    client = Client.objects.create(organization=org, name="Harbour Lane Housing Co-op")
    return Site.objects.create(organization=org, client=client, name="Block C, 14 Harbour Lane")


def make_envelope_survey(org: Organization, site: Site, thermographer: Member) -> Survey:
    """The envelope survey of the personas: 20 °C / 50 % inside, −5 °C outside."""
    import datetime

    from survey.models import Conditions

    survey = Survey.objects.create(
        organization=org,
        site=site,
        kind=Survey.Kind.ENVELOPE,
        date=datetime.date(2026, 1, 14),
        thermographer=thermographer,
        ifov_mrad=1.309,
    )
    Conditions.objects.create(
        survey=survey, indoor_air_c=20.0, indoor_rh_pct=50.0, outdoor_air_c=-5.0, wind_m_s=2.0
    )
    return survey


@pytest.fixture
def site(org) -> Site:
    return make_site(org)


@pytest.fixture
def envelope_survey(org, site, thermographer) -> Survey:
    return make_envelope_survey(org, site, thermographer)


@pytest.fixture
def electrical_survey(org, site, thermographer) -> Survey:
    import datetime

    from survey.models import Conditions

    survey = Survey.objects.create(
        organization=org,
        site=site,
        kind=Survey.Kind.ELECTRICAL,
        date=datetime.date(2026, 3, 2),
        thermographer=thermographer,
    )
    Conditions.objects.create(survey=survey, ambient_air_c=24.0, load_pct=65.0)
    return survey


@pytest.fixture
def scratch_dir():
    with tempfile.TemporaryDirectory() as path:
        yield path


@pytest.fixture(scope="session")
def collected_static(tmp_path_factory):
    """STATIC_ROOT as the Docker image has it: `collectstatic` run once for the session."""
    from tests.processes import collectstatic

    root = tmp_path_factory.mktemp("staticfiles")
    collectstatic(root)
    return root


@pytest.fixture(scope="session")
def s3_endpoint(tmp_path_factory):
    """A loopback S3 API (moto's server, started here on a free port) for the session."""
    from tests.objectstore import start_s3_server, stop_process

    try:
        import moto  # noqa: F401
    except ImportError:
        require_service("The loopback S3 server (moto)", None, 0)
    log_path = tmp_path_factory.mktemp("s3") / "moto.log"
    process, endpoint = start_s3_server(log_path)
    yield endpoint
    stop_process(process)


@pytest.fixture
def s3_media(s3_endpoint, settings, monkeypatch):
    """This test process keeps its media in a new bucket, as MEDIA_STORAGE=s3 does."""
    from survey.settings import media_storages
    from tests.objectstore import make_bucket, s3_environment

    bucket = make_bucket(s3_endpoint, versioned=True)
    environment = s3_environment(s3_endpoint, bucket)
    for name, value in environment.items():
        monkeypatch.setenv(name, value)
    settings.STORAGES = {**settings.STORAGES, **media_storages("s3")}
    return environment
