"""Full ingest through the task: upload saved → thermogram ready, eager and with a worker."""

import contextlib
import gc
import subprocess
import sys
import time
from pathlib import Path

from tests.bench.environment import BenchEnvironment
from tests.bench.fixtures import empty_survey, ingest, tiff_files
from tests.bench.timing import Row, Timing

FILES = 50
WORKER_START_TIMEOUT_S = 60.0
BATCH_TIMEOUT_S = 300.0


def _set_eager(eager: bool) -> None:
    from survey.celery import app

    app.conf.task_always_eager = eager


def _finished(ids: list[int]) -> int:
    from survey.models import Thermogram

    done = [Thermogram.Status.READY, Thermogram.Status.FAILED, Thermogram.Status.DAMAGED]
    return Thermogram.objects.filter(pk__in=ids, status__in=done).count()


def _wait_until_finished(ids: list[int], timeout_s: float) -> None:
    deadline = time.monotonic() + timeout_s
    while _finished(ids) < len(ids):
        if time.monotonic() > deadline:
            raise TimeoutError(f"{len(ids) - _finished(ids)} thermograms still not processed")
        time.sleep(0.01)


def _check_ready(ids: list[int]) -> None:
    from survey.models import Thermogram

    bad = Thermogram.objects.filter(pk__in=ids).exclude(status=Thermogram.Status.READY)
    if bad.exists():
        first = bad.first()
        raise RuntimeError(f"{bad.count()} not ready; first: {first.status} {first.error!r}")


def _batches(survey, repeat: int, *, wait: bool) -> Timing:
    """Ingest `repeat` batches of FILES distinct uploads; each sample is one whole batch."""
    samples = []
    for batch in range(repeat):
        files = tiff_files(FILES, start=1000 * (batch + 1))
        gc.collect()
        start = time.perf_counter()
        ids = ingest(survey, files)
        if wait:
            _wait_until_finished(ids, BATCH_TIMEOUT_S)
        samples.append(time.perf_counter() - start)
        _check_ready(ids)
    return Timing(samples)


@contextlib.contextmanager
def time_calls(module, names: tuple[str, ...]):
    """Accumulate the seconds spent in module.<name> for each name that exists, while inside.

    Only for the eager run, where the pipeline runs in this process: it tells where an
    ingest's time goes without a profiler's overhead.
    """
    spent = dict.fromkeys(names, 0.0)
    originals = {name: getattr(module, name) for name in names if hasattr(module, name)}

    def timed(name, function):
        def wrapper(*args, **kwargs):
            start = time.perf_counter()
            try:
                return function(*args, **kwargs)
            finally:
                spent[name] += time.perf_counter() - start

        return wrapper

    for name, function in originals.items():
        setattr(module, name, timed(name, function))
    try:
        yield spent
    finally:
        for name, function in originals.items():
            setattr(module, name, function)


def _row(label: str, timing: Timing, floor_per_file_s: float | None, note: str = "") -> Row:
    return Row(
        f"ingest through the task, {FILES} files ({label})",
        timing.median / FILES * 1e3,
        "ms/file",
        None if floor_per_file_s is None else floor_per_file_s * 1e3,
        max_ratio=1.3,
        minimum=timing.min / FILES * 1e3,
        note=note,
        details={"batch_seconds": timing.samples, "size": "640×480 float TIFF"},
    )


def figure_ingest_eager(floor_per_file_s: float | None, repeat: int = 3) -> Row:
    from survey.services import processing

    _set_eager(True)
    survey = empty_survey("bench ingest (eager)")
    _check_ready(ingest(survey, tiff_files(5, start=0)))  # warm-up
    with time_calls(processing, ("decode_original", "write_images")) as spent:
        timing = _batches(survey, repeat, wait=False)
    files = FILES * repeat
    note = (
        f"per file: preview + thumbnail {spent['write_images'] / files * 1e3:.0f} ms, "
        f"decode {spent['decode_original'] / files * 1e3:.0f} ms; the rest is DB, files, sha256"
    )
    return _row("eager", timing, floor_per_file_s, note)


def start_worker(environment: BenchEnvironment, name: str = "bench") -> subprocess.Popen:
    log = open(environment.workdir / f"celery-{name}.log", "wb")  # noqa: SIM115 - lives with the worker
    command = [
        sys.executable,
        "-m",
        "celery",
        "-A",
        "survey.celery",
        "worker",
        "--pool=solo",
        "--loglevel=WARNING",
        "--without-gossip",
        "--without-mingle",
        "--without-heartbeat",
        "-n",
        f"{name}@%h",
    ]
    return subprocess.Popen(
        command,
        cwd=Path(__file__).resolve().parents[2],
        env=environment.child_env,
        stdout=log,
        stderr=subprocess.STDOUT,
    )


def stop(process: subprocess.Popen) -> None:
    process.terminate()
    try:
        process.wait(timeout=15)
    except subprocess.TimeoutExpired:
        process.kill()
        process.wait()


def figure_ingest_worker(
    environment: BenchEnvironment, floor_per_file_s: float | None, repeat: int = 3
) -> Row:
    """The same through Redis and one `celery worker --pool=solo` process beside us."""
    worker = start_worker(environment)
    _set_eager(False)
    try:
        survey = empty_survey("bench ingest (worker)")
        warm = ingest(survey, tiff_files(5, start=0))
        _wait_until_finished(warm, WORKER_START_TIMEOUT_S)
        _check_ready(warm)
        timing = _batches(survey, repeat, wait=True)
    finally:
        _set_eager(True)
        stop(worker)
    note = "one solo worker decodes while this process stores the uploads; ends at the last ready"
    return _row("Redis + celery worker --pool=solo", timing, floor_per_file_s, note)


SCALE_FILES = 200


def figure_ingest_two_workers(environment: BenchEnvironment, floor_per_file_s: float | None) -> Row:
    """200 uploads of 640×480 through Redis to two workers that read and write the bucket.

    The wall time runs from the first upload to the last thermogram ready; this process
    stores the uploads while the workers already decode. The floor is the decode+render
    time of one file (measured in this run) shared by two workers: what two cores would
    need if nothing but decoding and drawing cost anything.
    """
    workers = [start_worker(environment, name=f"bench{i}") for i in (1, 2)]
    _set_eager(False)
    try:
        survey = empty_survey("bench ingest (two workers)")
        warm = ingest(survey, tiff_files(4, start=0))
        _wait_until_finished(warm, WORKER_START_TIMEOUT_S)
        _check_ready(warm)
        files = tiff_files(SCALE_FILES, start=10_000)
        gc.collect()
        start = time.perf_counter()
        ids = ingest(survey, files)
        stored = time.perf_counter() - start
        _wait_until_finished(ids, BATCH_TIMEOUT_S * 2)
        wall = time.perf_counter() - start
        _check_ready(ids)
    finally:
        _set_eager(True)
        for worker in workers:
            stop(worker)
    floor = None if floor_per_file_s is None else floor_per_file_s / 2 * 1e3
    media = "S3 bucket on loopback" if environment.s3_endpoint else "local folder"
    return Row(
        f"ingest {SCALE_FILES} files 640×480, 2 workers",
        wall / SCALE_FILES * 1e3,
        "ms/file",
        floor,
        max_ratio=1.5,
        note=(
            f"{SCALE_FILES / wall:.1f} files/s; uploads stored in {stored:.1f} s of {wall:.1f} s; "
            f"media in {media}; 2 cores shared by uploader, workers, PostgreSQL, Redis, S3"
        ),
        details={"files_per_s": SCALE_FILES / wall, "wall_s": wall, "store_s": stored},
    )
