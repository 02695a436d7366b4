"""One PDF render in its own process, so its peak memory is its own.

    python -m tests.bench.pdf_child floor DIR REPEAT [WARMUP_DIR]
        WeasyPrint on DIR/index.html
    python -m tests.bench.pdf_child app VERSION_ID REPEAT [WARMUP_VERSION_ID]
        reports.document.render_pdf of that report version

The untimed warm-up renders the WARMUP target (default: the measured one), so a large
report can be warmed up with a small one. Prints one JSON line: render times, PDF bytes,
page count and the peak resident memory of this process in MB. With BENCH_PROFILE=1 the
timed renders run under cProfile and its summary goes to stderr.
"""

import cProfile
import json
import os
import pstats
import resource
import sys
import time
from pathlib import Path


def _floor(folder: str):
    from weasyprint import HTML

    index = Path(folder) / "index.html"

    def render() -> tuple[bytes, int]:
        document = HTML(filename=str(index), base_url=str(index.parent)).render()
        return document.write_pdf(), len(document.pages)

    return render


def _app(version_id: str):
    import django

    django.setup()
    from reports.document import render_pdf
    from reports.models import ReportVersion

    version = ReportVersion.objects.select_related("report__survey").get(pk=int(version_id))

    def render() -> tuple[bytes, int]:
        STAGES.clear()
        STAGES.append(("start", time.perf_counter()))
        rendered = render_pdf(version, progress=_stamp)
        STAGES.append(("end", time.perf_counter()))
        return rendered.pdf, rendered.page_count

    return render


# (stage, perf_counter) of the last render, as render_pdf reports its progress.
STAGES: list[tuple[str, float]] = []


def _stamp(stage: str, _percent: int) -> None:
    STAGES.append((stage, time.perf_counter()))


def stage_seconds() -> dict[str, float]:
    """Seconds spent in each stage of the last app render; "Drawing thermogram 3 of 50"
    and its siblings are summed as "Drawing thermograms"."""
    seconds: dict[str, float] = {}
    for (stage, start), (_next, end) in zip(STAGES, STAGES[1:], strict=False):
        key = "Drawing thermograms" if stage.startswith("Drawing thermogram") else stage
        seconds[key] = seconds.get(key, 0.0) + end - start
    return seconds


def peak_rss_kb() -> int:
    """This process's peak resident memory, KiB.

    VmHWM, not ru_maxrss: Linux carries ru_maxrss over exec, so a child started from the
    bench would report the bench's own (larger) peak. VmHWM belongs to this process image.
    """
    try:
        for line in Path("/proc/self/status").read_text().splitlines():
            if line.startswith("VmHWM:"):
                return int(line.split()[1])
    except OSError:
        pass
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss


def main(mode: str, target: str, repeat: int, warmup_target: str | None = None) -> dict:
    make = _floor if mode == "floor" else _app
    make(warmup_target or target)()
    render = make(target)
    profiler = cProfile.Profile() if os.environ.get("BENCH_PROFILE") == "1" else None
    samples = []
    for _ in range(repeat):
        start = time.perf_counter()
        pdf, pages = profiler.runcall(render) if profiler else render()
        samples.append(time.perf_counter() - start)
    if profiler:
        pstats.Stats(profiler, stream=sys.stderr).sort_stats("cumulative").print_stats(30)
    peak_kb = peak_rss_kb()
    return {
        "samples": samples,
        "bytes": len(pdf),
        "pages": pages,
        "peak_rss_mb": peak_kb / 1024,
        "stages_s": stage_seconds(),
    }


if __name__ == "__main__":
    print(json.dumps(main(sys.argv[1], sys.argv[2], int(sys.argv[3]), *sys.argv[4:5])))
