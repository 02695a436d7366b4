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
from django.urls import reverse

from survey.models import AuditEvent
from survey.services.signin import MAX_FAILURES, WINDOW
from tests.conftest import PASSWORD

ROOT = Path(__file__).resolve().parents[2]


def _sign_in(client, username: str, password: str, address: str = "127.0.0.1"):
    return client.post(
        reverse("login"), {"username": username, "password": password}, REMOTE_ADDR=address
    )


def test_it_locks_a_username_after_repeated_failures_from_one_address(client, thermographer):
    """5 wrong passwords in 15 minutes: even the right one waits, with a clear message."""
    for _ in range(MAX_FAILURES):
        response = _sign_in(client, "theo", "wrong-password")
        assert response.status_code == 200
        assert "Please enter a correct username and password" in response.content.decode()
    response = _sign_in(client, "theo", PASSWORD)
    body = response.content.decode()
    assert response.status_code == 429
    assert "Too many failed sign-in attempts" in body and "wait 15 minutes" in body
    assert "_auth_user_id" not in client.session
    # The lock holds for this username from this address only.
    assert _sign_in(client, "theo", PASSWORD, address="192.0.2.7").status_code == 302


def test_it_lets_the_user_in_again_once_the_window_has_passed(client, thermographer):
    """Failures older than the window no longer count."""
    for _ in range(MAX_FAILURES):
        _sign_in(client, "theo", "wrong-password")
    assert _sign_in(client, "theo", PASSWORD).status_code == 429
    AuditEvent.objects.filter(action="login.failed").update(
        at=datetime.datetime.now(datetime.UTC) - WINDOW - datetime.timedelta(seconds=1)
    )
    response = _sign_in(client, "theo", PASSWORD)
    assert response.status_code == 302
    assert client.session["_auth_user_id"] == str(thermographer.user.pk)


def test_it_counts_again_from_a_successful_sign_in(client, thermographer):
    """Four slips, a success, four more slips: still allowed (the count restarts)."""
    for _ in range(MAX_FAILURES - 1):
        _sign_in(client, "theo", "wrong-password")
    assert _sign_in(client, "theo", PASSWORD).status_code == 302
    client.logout()
    for _ in range(MAX_FAILURES - 1):
        _sign_in(client, "theo", "wrong-password")
    assert _sign_in(client, "theo", PASSWORD).status_code == 302


def test_it_does_not_count_a_blank_password_as_a_successful_sign_in(client, thermographer):
    """A form sent without a password is a failure: it must not restart the count."""
    for _ in range(MAX_FAILURES - 1):
        _sign_in(client, "theo", "wrong-password")
    assert _sign_in(client, "theo", "").status_code == 200
    assert not AuditEvent.objects.filter(action="login").exists()
    assert _sign_in(client, "theo", PASSWORD).status_code == 429


def test_it_throttles_unknown_usernames_too(client, db):
    """Guessing names is throttled like guessing passwords, with the same message."""
    for _ in range(MAX_FAILURES):
        assert _sign_in(client, "nobody", "x").status_code == 200
    assert _sign_in(client, "nobody", "x").status_code == 429


def test_it_shows_failed_sign_ins_to_the_members_admin(client, owner, thermographer, outsider):
    """The admin's audit log lists failed sign-ins of the firm's own members only."""
    _sign_in(client, "theo", "wrong-password", address="198.51.100.4")
    _sign_in(client, "otto", "wrong-password", address="198.51.100.5")
    client.force_login(owner.user)
    body = client.get(reverse("survey:audit_log") + "?action=login.failed").content.decode()
    assert "198.51.100.4" in body and "theo" in body
    assert "198.51.100.5" not in body


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
