"""Pages and JSON endpoints through Django's test client (no network, no server)."""

import json
import random
import time

from tests.bench.timing import Row, percentile

WARMUP_REQUESTS = 5


def signed_in_client(survey):
    from django.test import Client

    client = Client()
    client.force_login(survey.thermographer.user)
    return client


def query_count(client, url: str) -> int:
    from django.db import connection
    from django.test.utils import CaptureQueriesContext

    with CaptureQueriesContext(connection) as captured:
        response = client.get(url)
    if response.status_code != 200:
        raise RuntimeError(f"GET {url} answered {response.status_code}")
    return len(captured.captured_queries)


def _latencies(send, count: int) -> list[float]:
    """Seconds per request for `count` calls of send(index), after a short warm-up."""
    for index in range(WARMUP_REQUESTS):
        send(index)
    samples = []
    for index in range(count):
        start = time.perf_counter()
        send(index)
        samples.append(time.perf_counter() - start)
    return samples


def _expect(response, status: int, what: str) -> None:
    if response.status_code != status:
        body = response.content[:300].decode("utf-8", "replace")
        raise RuntimeError(f"{what} answered {response.status_code}: {body}")


def figure_survey_page(surveys: dict[int, object], requests: int = 200) -> list[Row]:
    """The survey page of the largest survey; query count compared across survey sizes."""
    from django.urls import reverse

    largest = surveys[max(surveys)]
    client = signed_in_client(largest)
    counts = {
        size: query_count(client, reverse("survey:survey", args=[survey.pk]))
        for size, survey in sorted(surveys.items())
    }
    url = reverse("survey:survey", args=[largest.pk])

    def send(_index: int) -> None:
        _expect(client.get(url), 200, url)

    samples = _latencies(send, requests)
    constant = len(set(counts.values())) == 1
    by_size = ", ".join(f"{size}: {count}" for size, count in counts.items())
    label = f"survey page, {max(surveys)} thermograms"
    return [
        Row(
            f"{label}: p50",
            percentile(samples, 50) * 1e3,
            "ms",
            target_text="constant query count",
            met_override=constant,
            minimum=min(samples) * 1e3,
            note=f"queries by thermogram count: {by_size}",
            details={"query_counts": counts, "requests": requests},
        ),
        Row(
            f"{label}: p95",
            percentile(samples, 95) * 1e3,
            "ms",
            max_value=150.0,
            note=f"{requests} requests, one client; 60 thermograms a page",
        ),
    ]


def figure_workspace_page(survey, requests: int = 100) -> Row:
    from django.urls import reverse

    client = signed_in_client(survey)
    urls = [reverse("survey:thermogram", args=[pk]) for pk in _thermogram_ids(survey)]

    def send(index: int) -> None:
        url = urls[index % len(urls)]
        _expect(client.get(url), 200, url)

    samples = _latencies(send, requests)
    return Row(
        "workspace page: p95",
        percentile(samples, 95) * 1e3,
        "ms",
        note=f"p50 {percentile(samples, 50) * 1e3:.1f} ms over {requests} requests",
    )


def _thermogram_ids(survey) -> list[int]:
    return list(survey.thermograms.values_list("pk", flat=True))


def mark_payload(rng: random.Random, width: int = 640, height: int = 480) -> dict:
    x, y = rng.uniform(20, width - 140), rng.uniform(20, height - 100)
    kind = rng.choice(["point", "rectangle", "ellipse", "line"])
    if kind == "point":
        return {"kind": kind, "points": [[round(x), round(y)]]}
    return {"kind": kind, "points": [[x, y], [x + 120, y + 80]]}


def figure_marks_post(survey, requests: int = 100) -> Row:
    """POST a new mark (stats, readings and JSON answer) on thermograms of the survey."""
    from django.urls import reverse

    client = signed_in_client(survey)
    urls = [reverse("survey:api-marks", args=[pk]) for pk in _thermogram_ids(survey)]
    rng = random.Random(5)

    def send(index: int) -> None:
        url = urls[index % len(urls)]
        body = json.dumps(mark_payload(rng))
        _expect(client.post(url, body, content_type="application/json"), 201, url)

    samples = _latencies(send, requests)
    return Row(
        "marks endpoint POST: p95",
        percentile(samples, 95) * 1e3,
        "ms",
        max_value=50.0,
        minimum=min(samples) * 1e3,
        note=f"p50 {percentile(samples, 50) * 1e3:.1f} ms over {requests} requests, 640×480",
    )
