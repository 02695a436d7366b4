"""A real S3 API on loopback for the tests: moto's standalone server in a child process.

The server listens on a free port chosen at start. Every test makes buckets of its own, so
tests never see each other's objects. `s3_environment` gives the variables a web process
or worker needs to keep its media in a bucket (MEDIA_STORAGE=s3, as in production).
"""

import os
import socket
import subprocess
import sys
import time
import uuid
from pathlib import Path

import boto3
from botocore.config import Config

REGION = "eu-west-1"
# moto accepts any credentials; these only have to look like real ones.
ACCESS_KEY = "heatmark-test-access"
SECRET_KEY = "heatmark-test-secret"


def free_port() -> int:
    """A TCP port nothing listens on right now (the OS picks it)."""
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as probe:
        probe.bind(("127.0.0.1", 0))
        return probe.getsockname()[1]


def wait_for_port(port: int, process: subprocess.Popen | None = None, timeout: float = 30) -> None:
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        if process is not None and process.poll() is not None:
            raise RuntimeError(f"the process stopped (exit {process.returncode}) before listening")
        try:
            with socket.create_connection(("127.0.0.1", port), 0.5):
                return
        except OSError:
            time.sleep(0.1)
    raise RuntimeError(f"nothing listens on 127.0.0.1:{port} after {timeout} s")


def start_s3_server(log_path: Path) -> tuple[subprocess.Popen, str]:
    """moto's server on a free loopback port; returns the process and its endpoint URL."""
    port = free_port()
    with open(log_path, "ab") as log:
        process = subprocess.Popen(
            [sys.executable, "-m", "moto.server", "-H", "127.0.0.1", "-p", str(port)],
            stdout=log,
            stderr=subprocess.STDOUT,
            env=dict(os.environ, MOTO_ALLOW_NONEXISTENT_REGION="true"),
        )
    wait_for_port(port, process)
    return process, f"http://127.0.0.1:{port}"


def stop_process(process: subprocess.Popen) -> None:
    if process.poll() is None:
        process.terminate()
        try:
            process.wait(timeout=10)
        except subprocess.TimeoutExpired:
            process.kill()
            process.wait()


def client(endpoint: str):
    return boto3.client(
        "s3",
        endpoint_url=endpoint,
        region_name=REGION,
        aws_access_key_id=ACCESS_KEY,
        aws_secret_access_key=SECRET_KEY,
        config=Config(s3={"addressing_style": "path"}),
    )


def make_bucket(endpoint: str, *, versioned: bool = False) -> str:
    """A new empty bucket with a unique name."""
    name = f"heatmark-test-{uuid.uuid4().hex[:12]}"
    s3 = client(endpoint)
    s3.create_bucket(Bucket=name, CreateBucketConfiguration={"LocationConstraint": REGION})
    if versioned:
        s3.put_bucket_versioning(Bucket=name, VersioningConfiguration={"Status": "Enabled"})
    return name


def bucket_keys(endpoint: str, bucket: str) -> list[str]:
    s3 = client(endpoint)
    keys = []
    for page in s3.get_paginator("list_objects_v2").paginate(Bucket=bucket):
        keys += [item["Key"] for item in page.get("Contents", [])]
    return sorted(keys)


def bucket_versions(endpoint: str, bucket: str) -> tuple[dict[str, int], list[str]]:
    """How many versions each key has, and the keys with a delete marker."""
    s3 = client(endpoint)
    counts: dict[str, int] = {}
    deleted: list[str] = []
    for page in s3.get_paginator("list_object_versions").paginate(Bucket=bucket):
        for item in page.get("Versions", []):
            counts[item["Key"]] = counts.get(item["Key"], 0) + 1
        deleted += [item["Key"] for item in page.get("DeleteMarkers", [])]
    return counts, sorted(deleted)


def s3_environment(endpoint: str, bucket: str) -> dict[str, str]:
    """What a web process or a worker reads to keep its media in `bucket`."""
    return {
        "MEDIA_STORAGE": "s3",
        "S3_ENDPOINT_URL": endpoint,
        "S3_BUCKET": bucket,
        "S3_REGION": REGION,
        "AWS_ACCESS_KEY_ID": ACCESS_KEY,
        "AWS_SECRET_ACCESS_KEY": SECRET_KEY,
    }


def local_files(folder: Path) -> list[str]:
    """Every file under `folder` (what a process wrote to its own disk)."""
    return sorted(str(path.relative_to(folder)) for path in folder.rglob("*") if path.is_file())
