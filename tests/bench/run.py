"""`make bench`: measure every hot path, print the table, write bench-results.json.

    .venv/bin/python -m tests.bench.run [--only thermal,proposals,ingest,web,report,load]
                                        [--output F] [--profile]

Runs on the embedded default (SQLite, tasks in-process). With DATABASE_URL (PostgreSQL) and
REDIS_URL set it runs there instead, in a database and a Redis db of its own, and also
measures ingest through a real `celery worker`. Targets are reported, never asserted: the
exit status is 0 whatever the figures, and 1 only when the bench itself breaks.
"""

import argparse
import cProfile
import datetime
import json
import pstats
import sys
import time
import traceback
from collections.abc import Callable
from pathlib import Path

from tests.bench import environment as bench_environment
from tests.bench import figures_proposals
from tests.bench.timing import Row, not_run, table

GROUPS = ("thermal", "proposals", "ingest", "web", "report", "load")
REPORT_SIZES = (10, 50, 200)
REPORT_REPEATS = (3, 2, 1)
# The survey page is measured on 1000 thermograms; workspace, marks and the load test on a
# survey of 200 whose arrays are all separate files (so the array cache is really tested).
SURVEY_PAGE_SIZE = 1000
WORK_SURVEY_SIZE = 200


class Runner:
    """Collects rows; a figure that cannot run becomes a 'not run' row with the reason."""

    def __init__(self, groups: set[str], profile: bool = False):
        self.groups = groups
        self.profile = profile
        self.rows: list[Row] = []
        self.started = time.perf_counter()

    def log(self, message: str) -> None:
        print(f"[{time.perf_counter() - self.started:6.1f} s] {message}", file=sys.stderr)

    def run(self, group: str | None, name: str, unit: str, figure: Callable[[], object]) -> object:
        """Run one figure of `group` (None: whatever the groups chosen) and keep its rows."""
        if group is not None and group not in self.groups:
            return None
        self.log(f"{name} …")
        try:
            result = self._profiled(figure) if self.profile else figure()
        except Exception as error:  # a missing API or a failure is a row, not a crash
            reason = f"{type(error).__name__}: {error}".splitlines()[0][:160]
            self.log(f"{name}: not run ({reason})")
            if not isinstance(error, ImportError | AttributeError):
                traceback.print_exc(file=sys.stderr)
            self.rows.append(not_run(name, unit, reason))
            return None
        new_rows = result if isinstance(result, list) else [result]
        for row in new_rows:
            if isinstance(row, Row):
                self.rows.append(row)
                self.log(f"  {row.figure}: {row.value} {row.unit} ({row.verdict})")
        return result

    def _profiled(self, figure: Callable[[], object]) -> object:
        """Run under cProfile and print the 25 heaviest calls (cumulative) to stderr."""
        profiler = cProfile.Profile()
        result = profiler.runcall(figure)
        stats = pstats.Stats(profiler, stream=sys.stderr)
        stats.sort_stats("cumulative").print_stats(25)
        return result


def thermal_figures(runner: Runner, floors: dict) -> None:
    from tests.bench import figures_thermal as thermal

    for size, repeat in (("640×480", 15), ("1280×1024", 7)):
        runner.run(
            "thermal",
            f"decode+span+render+PNG {size} float TIFF",
            "ms",
            lambda s=size, r=repeat: thermal.figure_decode_render(s, r, floors),
        )
    runner.run("thermal", "CSV 640×480", "ms", thermal.figure_csv)
    runner.run("thermal", "surface_rh map 1280×1024", "ms", thermal.figure_surface_rh)
    runner.run(
        "thermal", "object_temperature lwir 1280×1024", "ms", thermal.figure_object_temperature
    )
    runner.run("thermal", "100 marks on 1280×1024", "ms", thermal.figure_marks)


def ingest_figures(runner: Runner, environment, floors: dict) -> None:
    from tests.bench import figures_ingest as ingest

    if "640×480" not in floors and "ingest" in runner.groups:
        from tests.bench.figures_thermal import decode_render_timings

        floors["640×480"] = decode_render_timings("640×480", 9)[1].median
    floor = floors.get("640×480")
    runner.run(
        "ingest", "ingest 50 files (eager)", "ms/file", lambda: ingest.figure_ingest_eager(floor)
    )
    if environment.has_worker_services:
        runner.run(
            "ingest",
            "ingest 50 files (worker)",
            "ms/file",
            lambda: ingest.figure_ingest_worker(environment, floor),
        )
        runner.run(
            "ingest",
            f"ingest {ingest.SCALE_FILES} files, 2 workers",
            "ms/file",
            lambda: ingest.figure_ingest_two_workers(environment, floor),
        )
    elif "ingest" in runner.groups:
        for name in ("ingest through the task, 50 files (worker)", "ingest 200 files, 2 workers"):
            runner.rows.append(
                not_run(name, "ms/file", "needs DATABASE_URL (PostgreSQL) and REDIS_URL")
            )


def build_surveys(runner: Runner) -> dict:
    """Surveys of 10, 50 and 200 thermograms through the real upload, 3 marks each."""
    from tests.bench.fixtures import survey_with_thermograms

    wanted = set()
    if runner.groups & {"web", "load"}:
        wanted |= {10, 50, WORK_SURVEY_SIZE, SURVEY_PAGE_SIZE}
    if "report" in runner.groups:
        wanted |= set(REPORT_SIZES)
    from survey.celery import app

    app.conf.task_always_eager = True  # built in this process, whatever the broker
    surveys = {}
    for count in sorted(wanted):
        runner.log(f"building a survey of {count} thermograms (untimed)")
        # Only the page reads the 1000-thermogram survey: its copies share the arrays.
        surveys[count] = survey_with_thermograms(
            f"bench {count}", count, share_arrays=count > WORK_SURVEY_SIZE
        )
    return surveys


def web_figures(runner: Runner, surveys: dict) -> None:
    from tests.bench import figures_web as web

    work = surveys.get(WORK_SURVEY_SIZE)
    runner.run("web", "survey page", "ms", lambda: web.figure_survey_page(surveys))
    runner.run("web", "workspace page", "ms", lambda: web.figure_workspace_page(work))
    runner.run("web", "marks endpoint POST", "ms", lambda: web.figure_marks_post(work))


def report_figures(runner: Runner, environment, surveys: dict) -> None:
    from tests.bench import figures_report as report

    if "report" not in runner.groups:
        return
    inputs = {
        count: runner.run(
            None,
            f"inputs of the report of {count}",
            "-",
            lambda c=count: report.report_inputs(environment, surveys[c]),
        )
        for count in REPORT_SIZES
    }
    smallest = inputs[min(REPORT_SIZES)]
    for count, repeat in zip(REPORT_SIZES, REPORT_REPEATS, strict=True):
        if inputs[count] is None:
            continue
        runner.run(
            "report",
            f"report of {count} thermograms",
            "s",
            lambda c=count, r=repeat: report.figure_report(
                environment, inputs[c], r, warmup=smallest, profile=runner.profile
            ),
        )
    runner.run(
        "report",
        "report with extreme shapes: peak RSS",
        "MB",
        lambda: report.figure_extreme_shapes(environment),
    )


def load_figures(runner: Runner, environment, surveys: dict) -> None:
    from tests.bench.loadtest import figure_load

    survey = surveys.get(WORK_SURVEY_SIZE)
    runner.run("load", "load test", "ms", lambda: figure_load(environment, survey))


def write_results(path: Path, rows: list[Row], machine: dict, seconds: float) -> None:
    results = {
        "generated_at": datetime.datetime.now(datetime.UTC).isoformat(timespec="seconds"),
        "duration_s": round(seconds, 1),
        "machine": machine,
        "figures": [row.as_json() for row in rows],
    }
    path.write_text(json.dumps(results, indent=2, ensure_ascii=False) + "\n", encoding="utf-8")


def parse_args(argv: list[str] | None) -> argparse.Namespace:
    parser = argparse.ArgumentParser(prog="python -m tests.bench.run", description=__doc__)
    parser.add_argument("--only", default=",".join(GROUPS), help="comma-separated groups")
    parser.add_argument("--output", default="bench-results.json", type=Path)
    parser.add_argument(
        "--keep", action="store_true", help="keep the temporary folder (database, media, logs)"
    )
    parser.add_argument(
        "--profile", action="store_true", help="print a cProfile summary of each figure"
    )
    args = parser.parse_args(argv)
    args.groups = {g.strip() for g in args.only.split(",") if g.strip()}
    unknown = args.groups - set(GROUPS)
    if unknown:
        parser.error(f"unknown group(s) {sorted(unknown)}; choose from {', '.join(GROUPS)}")
    return args


def main(argv: list[str] | None = None) -> int:
    args = parse_args(argv)
    runner = Runner(args.groups, args.profile)
    environment = bench_environment.prepare()
    runner.log(f"database {environment.database}, media in {environment.media_root}")
    try:
        floors: dict = {}
        thermal_figures(runner, floors)
        figures_proposals.figures(runner)
        ingest_figures(runner, environment, floors)
        surveys = None
        if args.groups & {"web", "report", "load"}:
            surveys = runner.run(
                None, "surveys for pages and reports", "-", lambda: build_surveys(runner)
            )
        if surveys:
            web_figures(runner, surveys)
            report_figures(runner, environment, surveys)
            load_figures(runner, environment, surveys)
        machine = bench_environment.machine_info(environment)
    finally:
        bench_environment.teardown(environment, keep=args.keep)
    seconds = time.perf_counter() - runner.started
    print()
    print(
        f"Heatmark bench on {machine['database']} / {machine['broker']} / {machine['media']}, "
        f"{machine['cores']} cores, Python {machine['python']}, numpy {machine['numpy']}, "
        f"WeasyPrint {machine['weasyprint']} ({seconds:.0f} s)"
    )
    print(table(runner.rows))
    write_results(args.output, runner.rows, machine, seconds)
    print(f"\nWritten to {args.output}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
