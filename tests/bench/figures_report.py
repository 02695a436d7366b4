"""Report PDFs of 10, 50 and 200 thermograms against WeasyPrint on a bare HTML file.

The floor is WeasyPrint alone on a plain page per thermogram holding the same print-size
JPEG and a table of the same readings: what any report of that content must cost. Each
render runs in its own process (tests/bench/pdf_child.py), so the peak memory measured is
that render's, not the bench's.
"""

import html
import json
import subprocess
import sys
from dataclasses import dataclass
from pathlib import Path

from tests.bench.environment import BenchEnvironment
from tests.bench.timing import Row, Timing

MAX_RSS_MB = 250.0
MAX_KB_PER_PAGE = 150.0

FLOOR_STYLE = """
@page { size: A4; margin: 15mm }
body { font-family: "DejaVu Sans", sans-serif; font-size: 9pt }
section { break-after: page }
img { width: 100mm; display: block; margin-bottom: 4mm }
table { border-collapse: collapse; width: 100% }
th, td { border: 0.5pt solid #888; padding: 1mm 2mm; text-align: right }
"""
READING_COLUMNS = ("label", "kind", "min", "max", "mean", "corrected mean", "ΔT", "surface RH")


def report_version(survey) -> int:
    """A draft version of the survey's report, created without queuing its render."""
    from reports.models import ReportVersion
    from reports.services import report_create

    user = survey.thermographer.user
    report = report_create(survey=survey, user=user)
    version = ReportVersion.objects.create(
        report=report, version=1, is_draft=True, requested_by=user
    )
    return version.pk


def _reading_cells(reading: dict) -> list:
    apparent, corrected = reading.get("apparent") or {}, reading.get("corrected") or {}
    values = [
        reading.get("label"),
        reading.get("kind"),
        apparent.get("min"),
        apparent.get("max"),
        apparent.get("mean"),
        corrected.get("mean"),
        reading.get("delta_t_c"),
        reading.get("surface_rh_pct"),
    ]
    return [f"{v:.1f}" if isinstance(v, float) else ("–" if v is None else v) for v in values]


def write_floor_html(survey, folder: Path) -> Path:
    """index.html + one JPEG per thermogram, pictures made exactly as the report makes them."""
    from reports.pictures import JPEG_QUALITY, THERMOGRAM_WIDTH_MM, mm_to_px, thermogram_picture
    from survey.services.readings import thermogram_readings

    folder.mkdir(parents=True)
    header = "".join(f"<th>{html.escape(name)}</th>" for name in READING_COLUMNS)
    sections = []
    for thermogram in survey.thermograms.all():
        picture, _span = thermogram_picture(thermogram, mm_to_px(THERMOGRAM_WIDTH_MM))
        name = f"t{thermogram.pk}.jpg"
        picture.convert("RGB").save(folder / name, "JPEG", quality=JPEG_QUALITY, subsampling=0)
        rows = "".join(
            "<tr>" + "".join(f"<td>{html.escape(str(c))}</td>" for c in _reading_cells(r)) + "</tr>"
            for r in thermogram_readings(thermogram)
        )
        sections.append(
            f"<section><h2>{html.escape(thermogram.original_name)}</h2>"
            f'<img src="{name}" alt=""><table><tr>{header}</tr>{rows}</table></section>'
        )
    (folder / "index.html").write_text(
        f'<!doctype html><html><head><meta charset="utf-8"><style>{FLOOR_STYLE}</style>'
        f"</head><body>{''.join(sections)}</body></html>",
        encoding="utf-8",
    )
    return folder


@dataclass
class ReportInputs:
    """What both renders of one report size need: the app's version and the floor's page."""

    count: int
    version_id: int
    folder: Path


def _stage_note(stages: dict[str, float]) -> str:
    """Where the last render's time went, the heaviest stages first."""
    heaviest = sorted(stages.items(), key=lambda item: -item[1])[:4]
    return ", ".join(f"{stage.lower()} {seconds:.2f} s" for stage, seconds in heaviest)


def report_inputs(environment: BenchEnvironment, survey) -> ReportInputs:
    count = survey.thermograms.count()
    folder = write_floor_html(survey, environment.workdir / f"floor-{count}")
    return ReportInputs(count, report_version(survey), folder)


def run_child(
    environment: BenchEnvironment, arguments: list[str], *, profile: bool = False
) -> dict:
    command = [sys.executable, "-m", "tests.bench.pdf_child", *arguments]
    env = {**environment.child_env, "BENCH_PROFILE": "1" if profile else "0"}
    finished = subprocess.run(
        command,
        cwd=Path(__file__).resolve().parents[2],
        env=env,
        capture_output=True,
        text=True,
        timeout=600,
        check=False,
    )
    if finished.returncode != 0:
        raise RuntimeError(f"{arguments[0]} render failed: {finished.stderr.strip()[-500:]}")
    if profile:
        print(finished.stderr, file=sys.stderr)
    return json.loads(finished.stdout.strip().splitlines()[-1])


def figure_report(
    environment: BenchEnvironment,
    inputs: ReportInputs,
    repeat: int,
    *,
    warmup: ReportInputs | None = None,
    profile: bool = False,
) -> list[Row]:
    """Floor and app, each in a fresh process, warmed up on `warmup` (a smaller report)."""
    warmup = warmup or inputs
    floor = run_child(environment, ["floor", str(inputs.folder), str(repeat), str(warmup.folder)])
    app = run_child(
        environment,
        ["app", str(inputs.version_id), str(repeat), str(warmup.version_id)],
        profile=profile,
    )
    timing, floor_timing = Timing(app["samples"]), Timing(floor["samples"])
    label = f"report of {inputs.count} thermograms"
    details = {"app": app, "floor": floor}
    return [
        Row(
            label,
            timing.median,
            "s",
            floor_timing.median,
            max_ratio=1.3,
            minimum=timing.min,
            note=_stage_note(app.get("stages_s") or {}),
            details=details,
        ),
        Row(
            f"{label}: peak RSS",
            app["peak_rss_mb"],
            "MB",
            floor["peak_rss_mb"],
            max_value=MAX_RSS_MB,
            note="whole render process (Python, Django, WeasyPrint)",
        ),
        Row(
            f"{label}: PDF per page",
            app["bytes"] / app["pages"] / 1e3,
            "kB",
            floor["bytes"] / floor["pages"] / 1e3,
            max_value=MAX_KB_PER_PAGE,
            note=f"{app['pages']} pages ({floor['pages']} in the floor)",
        ),
    ]


SHAPES_MAX_RATIO = 1.10
STRIP_LENGTH = 4000


def add_strips(survey) -> None:
    """A 2 × 4000 and a 4000 × 2 thermogram (stored as the processing would leave them: the
    upload refuses such shapes), each with a mark, so both are drawn in the report."""
    import numpy as np

    from survey.services.marks import mark_add
    from tests.factories import make_thermogram

    ramp = np.linspace(10.0, 30.0, STRIP_LENGTH, dtype=np.float32)
    wide = make_thermogram(survey, np.vstack([ramp, ramp]), title="Strip 4000 × 2")
    tall = make_thermogram(survey, np.vstack([ramp, ramp]).T.copy(), title="Strip 2 × 4000")
    user = survey.thermographer.user
    mark_add(thermogram=wide, kind="line", points=[[0, 0], [STRIP_LENGTH - 1, 1]], user=user)
    mark_add(thermogram=tall, kind="point", points=[[1, STRIP_LENGTH // 2]], user=user)


def _draft(report) -> int:
    from reports.models import ReportVersion

    user = report.survey.thermographer.user
    version = ReportVersion.objects.create(report=report, version=1, requested_by=user)
    return version.pk


def figure_extreme_shapes(environment: BenchEnvironment, repeat: int = 2) -> Row:
    """Peak memory of the report of a 10-thermogram survey holding one 2 × 4000 and one
    4000 × 2 thermogram, against the same report before they were added: a picture's size
    is bounded in both directions, so one file's shape must not show in the peak."""
    from reports.models import ReportVersion
    from tests.bench.fixtures import survey_with_thermograms

    survey = survey_with_thermograms("bench shapes", 10)
    plain = ReportVersion.objects.get(pk=report_version(survey))
    without = run_child(environment, ["app", str(plain.pk), str(repeat)])
    add_strips(survey)
    shaped = run_child(environment, ["app", str(_draft(plain.report)), str(repeat)])
    return Row(
        "report with a 2 × 4000 and a 4000 × 2 thermogram: peak RSS",
        shaped["peak_rss_mb"],
        "MB",
        without["peak_rss_mb"],
        max_ratio=SHAPES_MAX_RATIO,
        note=(
            f"floor: the same report without them ({without['pages']} pages, "
            f"{shaped['pages']} with them)"
        ),
        details={"with": shaped, "without": without},
    )
