"""Sign-in throttling, production cookie and HSTS settings, the CSP on every page."""

import datetime
import json
import os
import re
import secrets
import subprocess
import sys
from pathlib import Path

import pytest
from django.db import connection
from django.test.utils import CaptureQueriesContext
from django.urls import reverse
from django.utils import timezone

from survey.jobs import prune_signin_throttle
from survey.models import AuditEvent, SignInThrottle
from survey.net import client_address
from survey.services import signin
from tests.conftest import PASSWORD

ROOT = Path(__file__).resolve().parents[2]


def _sign_in(client, username: str, password: str, address: str = "127.0.0.1", **headers):
    return client.post(
        reverse("login"),
        {"username": username, "password": password},
        REMOTE_ADDR=address,
        **headers,
    )


def _minutes_ago(minutes: float) -> datetime.datetime:
    return timezone.now() - datetime.timedelta(minutes=minutes)


def test_it_slows_a_username_from_any_address_instead_of_locking_it(client, thermographer):
    """After five wrong passwords the next try waits a second, from any address; the wait
    doubles with each failure up to a minute, never a 15-minute lock."""
    for _ in range(signin.USERNAME_FREE_FAILURES):
        response = _sign_in(client, "theo", "wrong-password", address="203.0.113.5")
        assert response.status_code == 200
        assert "Please enter a correct username and password" in response.content.decode()
    # The colleague at another address: a short wait, with a clear message.
    response = _sign_in(client, "theo", PASSWORD, address="192.0.2.7")
    assert response.status_code == 429
    assert "wait 1 second and try again" in response.content.decode()
    assert "_auth_user_id" not in client.session
    # A flood from many addresses keeps the wait at a minute at most.
    for index in range(20):
        SignInThrottle.objects.filter(scope="username").update(last_failure_at=_minutes_ago(2))
        _sign_in(client, "theo", "wrong-password", address=f"198.51.100.{index}")
    counter = SignInThrottle.objects.get(scope="username", key="theo")
    assert counter.failures == signin.USERNAME_FREE_FAILURES + 20
    response = _sign_in(client, "theo", PASSWORD, address="192.0.2.7")
    assert response.status_code == 429 and "wait 60 seconds" in response.content.decode()
    SignInThrottle.objects.filter(scope="username").update(last_failure_at=_minutes_ago(1.01))
    assert _sign_in(client, "theo", PASSWORD, address="192.0.2.7").status_code == 302


def test_it_counts_again_from_a_successful_sign_in(client, thermographer):
    """Four slips, a success, four more slips: no wait (the count restarts)."""
    for _ in range(signin.USERNAME_FREE_FAILURES - 1):
        _sign_in(client, "theo", "wrong-password")
    assert _sign_in(client, "theo", PASSWORD).status_code == 302
    client.logout()
    for _ in range(signin.USERNAME_FREE_FAILURES - 1):
        _sign_in(client, "theo", "wrong-password")
    assert _sign_in(client, "theo", PASSWORD).status_code == 302


def test_it_forgets_old_failures(client, thermographer):
    """Failures older than the window no longer count."""
    for _ in range(signin.USERNAME_FREE_FAILURES + 3):
        SignInThrottle.objects.filter(scope="username").update(last_failure_at=_minutes_ago(2))
        _sign_in(client, "theo", "wrong-password", address="203.0.113.5")
    assert _sign_in(client, "theo", PASSWORD).status_code == 429
    SignInThrottle.objects.filter(scope="username").update(
        last_failure_at=timezone.now() - signin.FORGET_AFTER
    )
    assert _sign_in(client, "theo", PASSWORD).status_code == 302


def test_it_stops_an_address_guessing_many_usernames(client, thermographer, settings):
    """One address trying invented names is stopped after ADDRESS_BURST failures; the names
    leave no rows in the audit log, and another address is not affected."""
    for index in range(signin.ADDRESS_BURST):
        assert _sign_in(client, f"guess{index}", "x", address="203.0.113.66").status_code == 200
    response = _sign_in(client, "theo", PASSWORD, address="203.0.113.66")
    assert response.status_code == 429
    assert "Too many failed sign-ins from your network" in response.content.decode()
    assert not AuditEvent.objects.filter(organization__isnull=True).exists()
    assert _sign_in(client, "theo", PASSWORD, address="203.0.113.67").status_code == 302


def test_it_checks_sign_ins_without_reading_the_audit_log(client, thermographer):
    """The throttle reads two indexed counter rows, never the (large) audit log."""
    with CaptureQueriesContext(connection) as queries:
        _sign_in(client, "somebody-unknown", "x")
    assert not [q for q in queries.captured_queries if "survey_auditevent" in q["sql"]]


def test_it_reads_the_client_address_from_the_trusted_proxy_header_only(
    client, thermographer, settings
):
    """Without TRUSTED_PROXY_HEADER a forged X-Forwarded-For is ignored; with it, the entry
    the proxy appended tells clients behind one proxy apart."""
    forged = {"HTTP_X_FORWARDED_FOR": "192.0.2.200"}
    for index in range(signin.ADDRESS_BURST):
        _sign_in(client, f"guess{index}", "x", address="10.0.0.2", **forged)
    assert SignInThrottle.objects.filter(scope="address", key="10.0.0.2").exists()
    assert not SignInThrottle.objects.filter(key="192.0.2.200").exists()
    SignInThrottle.objects.all().delete()

    settings.TRUSTED_PROXY_HEADER = "X-Forwarded-For"
    for index in range(signin.ADDRESS_BURST):
        _sign_in(
            client, f"guess{index}", "x", "10.0.0.2", HTTP_X_FORWARDED_FOR="1.2.3.4, 198.51.100.9"
        )
    # The guesser behind the proxy is stopped; a colleague behind the same proxy is not.
    behind = {"HTTP_X_FORWARDED_FOR": "198.51.100.9"}
    assert _sign_in(client, "theo", PASSWORD, "10.0.0.2", **behind).status_code == 429
    colleague = {"HTTP_X_FORWARDED_FOR": "198.51.100.10"}
    assert _sign_in(client, "theo", PASSWORD, "10.0.0.2", **colleague).status_code == 302


@pytest.mark.parametrize(
    "remote, header, count, expected",
    [
        ("10.0.0.2", None, 1, "10.0.0.2"),
        ("10.0.0.2", "203.0.113.9", 1, "203.0.113.9"),
        ("10.0.0.2", "6.6.6.6, 203.0.113.9", 1, "203.0.113.9"),
        ("10.0.0.2", "6.6.6.6, 203.0.113.9, 10.0.0.1", 2, "203.0.113.9"),
        ("10.0.0.2", "203.0.113.9", 2, "10.0.0.2"),  # fewer hops than proxies: connection
        ("10.0.0.2", "not-an-address", 1, "10.0.0.2"),
        ("10.0.0.2", "[2001:db8::1]:443", 1, "2001:db8::1"),
        ("", None, 1, "unknown"),
    ],
)
def test_client_address_takes_the_entry_of_the_trusted_proxy(
    rf, settings, remote, header, count, expected
):
    settings.TRUSTED_PROXY_HEADER = "X-Forwarded-For"
    settings.TRUSTED_PROXY_COUNT = count
    extra = {"HTTP_X_FORWARDED_FOR": header} if header is not None else {}
    assert client_address(rf.get("/", REMOTE_ADDR=remote, **extra)) == expected


def test_it_throttles_the_admin_login_like_the_normal_one(client, owner):
    """Wrong passwords on the admin's page count, are audited, and the right one then waits
    too (it used to let the admin in while the normal page answered 429)."""
    owner.user.is_staff = owner.user.is_superuser = True
    owner.user.save()
    url = reverse("admin:login")
    for _ in range(signin.USERNAME_FREE_FAILURES):
        response = client.post(url, {"username": "olivia", "password": "nope"})
        assert response.status_code == 200
    failed = AuditEvent.objects.filter(action="login.failed", organization=owner.organization)
    assert failed.count() == signin.USERNAME_FREE_FAILURES
    response = client.post(url, {"username": "olivia", "password": PASSWORD})
    assert response.status_code == 429 and "wait 1 second" in response.content.decode()
    assert "_auth_user_id" not in client.session
    assert _sign_in(client, "olivia", PASSWORD).status_code == 429


def test_it_shows_failed_sign_ins_to_the_members_admin(client, owner, thermographer, outsider):
    """The admin's audit log lists failed sign-ins of the firm's own members only."""
    _sign_in(client, "theo", "wrong-password", address="198.51.100.4")
    _sign_in(client, "otto", "wrong-password", address="198.51.100.5")
    client.force_login(owner.user)
    body = client.get(reverse("survey:audit_log") + "?action=login.failed").content.decode()
    assert "198.51.100.4" in body and "theo" in body
    assert "198.51.100.5" not in body


def test_it_prunes_counters_that_hold_no_one_back(db):
    """Rows idle for an hour go; recent ones stay (celery beat runs this every hour)."""
    SignInThrottle.objects.create(scope="address", key="192.0.2.1", updated_at=_minutes_ago(61))
    SignInThrottle.objects.create(scope="username", key="theo", updated_at=_minutes_ago(5))
    assert prune_signin_throttle() == 1
    assert list(SignInThrottle.objects.values_list("key", flat=True)) == ["theo"]


PRODUCTION_PROBE = """
import django, json
django.setup()
from django.conf import settings
from django.test import Client
from django.test.utils import setup_test_environment
setup_test_environment()
client = Client()
plain = client.get("/accounts/login/", HTTP_HOST="example.org")
secure = client.get("/accounts/login/", HTTP_HOST="example.org", secure=True)
cookie = secure.cookies.get("csrftoken")
print(json.dumps({
    "session_cookie_secure": settings.SESSION_COOKIE_SECURE,
    "csrf_cookie_secure": settings.CSRF_COOKIE_SECURE,
    "plain_status": plain.status_code,
    "plain_location": plain.get("Location", ""),
    "hsts": secure.get("Strict-Transport-Security", ""),
    "csp": secure.get("Content-Security-Policy", ""),
    "csrf_cookie_flag_secure": bool(cookie and cookie["secure"]),
}))
"""


def _production_environment() -> dict:
    environment = {
        key: value
        for key, value in os.environ.items()
        if key not in {"DATABASE_URL", "REDIS_URL", "DJANGO_SETTINGS_MODULE", "DEBUG"}
    }
    environment.update(
        DEBUG="0",
        SECRET_KEY=secrets.token_urlsafe(50),
        ALLOWED_HOSTS="example.org",
        DJANGO_SETTINGS_MODULE="survey.settings",
    )
    return environment


def test_it_sets_secure_cookies_and_hsts_when_debug_is_off(collected_static):
    """With DEBUG=0: HTTPS redirect, HSTS for a year, cookies marked Secure."""
    result = subprocess.run(
        [sys.executable, "-c", PRODUCTION_PROBE],
        cwd=ROOT,
        # Pages name hashed static files, as in the image where collectstatic has run.
        env=dict(_production_environment(), STATIC_ROOT=str(collected_static)),
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert result.returncode == 0, result.stderr
    seen = json.loads(result.stdout.strip().splitlines()[-1])
    assert seen["session_cookie_secure"] and seen["csrf_cookie_secure"]
    assert seen["csrf_cookie_flag_secure"]
    assert seen["plain_status"] == 301
    assert seen["plain_location"] == "https://example.org/accounts/login/"
    # 31536000 s = one year, the usual HSTS max-age (common practice, no source).
    assert seen["hsts"] == "max-age=31536000; includeSubDomains"
    assert "script-src 'self'" in seen["csp"]


def test_it_passes_the_deployment_checks_without_warnings():
    """`check --deploy --fail-level WARNING` is clean with production settings."""
    result = subprocess.run(
        [sys.executable, "manage.py", "check", "--deploy", "--fail-level", "WARNING"],
        cwd=ROOT,
        env=_production_environment(),
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert result.returncode == 0, result.stdout + result.stderr
    assert "WARNING" not in result.stdout + result.stderr


INLINE = [
    (re.compile(r"<script\b(?![^>]*\bsrc=)[^>]*>", re.IGNORECASE), "inline <script>"),
    (re.compile(r"<style\b", re.IGNORECASE), "<style> element"),
    (re.compile(r"\sstyle\s*=", re.IGNORECASE), "style= attribute"),
    (re.compile(r"\son[a-z]+\s*=", re.IGNORECASE), "on…= event handler"),
    (re.compile(r"javascript:", re.IGNORECASE), "javascript: URL"),
]


def _page_templates() -> list[Path]:
    folders = [ROOT / "templates", *ROOT.glob("*/templates")]
    # The PDF template is read by the PDF renderer only, never by a browser.
    return [
        path
        for folder in folders
        for path in folder.rglob("*.html")
        if "pdf" not in path.relative_to(folder).parts
    ]


def test_it_keeps_scripts_and_styles_out_of_every_page_template():
    """The CSP forbids inline code, so no page template may need it."""
    templates = _page_templates()
    assert len(templates) > 20
    problems = [
        f"{path.relative_to(ROOT)}: {what}"
        for path in templates
        for pattern, what in INLINE
        if pattern.search(path.read_text())
    ]
    assert problems == []


@pytest.mark.parametrize(
    "name", ["survey:home", "survey:clients", "survey:sites", "survey:survey_create", "login"]
)
def test_it_sends_the_content_security_policy_on_pages(owner_client, name):
    """Pages without an id carry the CSP too (pages with one: see the access matrix)."""
    response = owner_client.get(reverse(name))
    assert response.status_code == 200
    policy = response["Content-Security-Policy"]
    assert "script-src 'self'" in policy and "style-src 'self'" in policy
    assert "unsafe-inline" not in policy
