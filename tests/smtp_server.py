"""A real SMTP server on loopback for the e-mail tests (aiosmtpd, a test-only dependency).

No mock: Django's SMTP backend connects to it over TCP, says EHLO, upgrades the connection
with STARTTLS (a certificate for 127.0.0.1 made by openssl for the test and trusted through
SSL_CERT_FILE), logs in with the user name and password it was configured with, and hands
over the message, which the server parses and keeps for the test to read.
"""

import contextlib
import email
import email.policy
import os
import shutil
import socket
import ssl
import subprocess
import tempfile
from dataclasses import dataclass, field
from pathlib import Path

import pytest


@dataclass
class Mailbox:
    host: str
    port: int
    certificate: str
    messages: list = field(default_factory=list)
    logins: list = field(default_factory=list)

    def configure(self, settings, monkeypatch, user: str, password: str) -> None:
        """Point Django's mail framework at this server, as production settings would."""
        settings.EMAIL_BACKEND = "django.core.mail.backends.smtp.EmailBackend"
        settings.EMAIL_HOST = self.host
        settings.EMAIL_PORT = self.port
        settings.EMAIL_HOST_USER = user
        settings.EMAIL_HOST_PASSWORD = password
        settings.EMAIL_USE_TLS = True
        settings.EMAIL_USE_SSL = False
        settings.EMAIL_TIMEOUT = 10
        # The client trusts the test's own certificate, as it would a real CA's.
        monkeypatch.setenv("SSL_CERT_FILE", self.certificate)


def _free_port() -> int:
    with socket.socket() as probe:
        probe.bind(("127.0.0.1", 0))
        return probe.getsockname()[1]


def _certificate(folder: Path) -> tuple[str, str]:
    if shutil.which("openssl") is None:
        reason = "the SMTP tests need openssl to make a certificate"
        if os.environ.get("REQUIRE_SERVICES") == "1":
            pytest.fail(f"{reason}, and REQUIRE_SERVICES=1")
        pytest.skip(reason)
    key, cert = folder / "key.pem", folder / "cert.pem"
    subprocess.run(
        [
            "openssl", "req", "-x509", "-newkey", "rsa:2048", "-nodes", "-days", "1",
            "-subj", "/CN=127.0.0.1", "-addext", "subjectAltName=IP:127.0.0.1",
            "-keyout", str(key), "-out", str(cert),
        ],
        check=True,
        capture_output=True,
    )  # fmt: skip
    return str(cert), str(key)


@contextlib.contextmanager
def smtp_server(user: str, password: str):
    """Run an SMTP server on 127.0.0.1 that asks for STARTTLS and accepts only
    `user`/`password`."""
    from aiosmtpd.controller import Controller
    from aiosmtpd.smtp import AuthResult

    with tempfile.TemporaryDirectory(prefix="heatmark-smtp-") as folder:
        cert, key = _certificate(Path(folder))
        context = ssl.create_default_context(ssl.Purpose.CLIENT_AUTH)
        context.load_cert_chain(cert, key)
        mailbox = Mailbox(host="127.0.0.1", port=_free_port(), certificate=cert)

        class Handler:
            async def handle_DATA(self, server, session, envelope):
                message = email.message_from_bytes(envelope.content, policy=email.policy.default)
                mailbox.messages.append(
                    {
                        "from": envelope.mail_from,
                        "to": envelope.rcpt_tos,
                        "message": message,
                        "tls": session.ssl is not None,
                    }
                )
                return "250 Message accepted for delivery"

        def authenticator(server, session, envelope, mechanism, auth_data):
            login, given = auth_data.login.decode(), auth_data.password.decode()
            ok = (login, given) == (user, password)
            mailbox.logins.append((mechanism, login, ok))
            return AuthResult(success=ok)

        controller = Controller(
            Handler(),
            hostname=mailbox.host,
            port=mailbox.port,
            tls_context=context,
            require_starttls=True,
            authenticator=authenticator,
            auth_required=True,
        )
        controller.start()
        try:
            yield mailbox
        finally:
            controller.stop()
