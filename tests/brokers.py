"""A private Redis server for the tests that stop and restart the broker.

The shared Redis of the machine is never stopped: each test that needs an outage starts its
own `redis-server` on a free port chosen at run time, without persistence, and stops and
restarts that one.
"""

import contextlib
import shutil
import socket
import subprocess
import time
from pathlib import Path


def free_port() -> int:
    with socket.socket() as probe:
        probe.bind(("127.0.0.1", 0))
        return probe.getsockname()[1]


class PrivateRedis:
    """`redis-server` on 127.0.0.1:<port>, stopped and started again on the same port."""

    def __init__(self, folder: Path):
        self.binary = shutil.which("redis-server")
        self.folder = folder
        self.port = free_port()
        self.process: subprocess.Popen | None = None

    def url(self, db: int = 0) -> str:
        return f"redis://127.0.0.1:{self.port}/{db}"

    def start(self) -> None:
        command = [self.binary, "--port", str(self.port), "--bind", "127.0.0.1"]
        command += ["--save", "", "--appendonly", "no", "--dir", str(self.folder)]
        with open(self.folder / "redis.log", "ab") as log:
            self.process = subprocess.Popen(command, stdout=log, stderr=subprocess.STDOUT)
        deadline = time.monotonic() + 10
        while not self.answers():
            if time.monotonic() > deadline or self.process.poll() is not None:
                raise RuntimeError((self.folder / "redis.log").read_text()[-2000:])
            time.sleep(0.05)

    def stop(self) -> None:
        if self.process is not None and self.process.poll() is None:
            self.process.terminate()
            try:
                self.process.wait(timeout=10)
            except subprocess.TimeoutExpired:
                self.process.kill()
                self.process.wait()
        self.process = None

    def answers(self) -> bool:
        with contextlib.suppress(OSError), socket.create_connection(("127.0.0.1", self.port), 0.2):
            return True
        return False

    def queue_length(self, db: int = 0, queue: str = "celery") -> int:
        """Messages waiting in Celery's default queue of database `db`."""
        result = subprocess.run(
            ["redis-cli", "-p", str(self.port), "-n", str(db), "LLEN", queue],
            capture_output=True,
            text=True,
            timeout=10,
        )
        return int(result.stdout.strip() or 0)
