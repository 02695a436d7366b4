"""Render a draft of a survey's report to a file, without queueing or storing anything."""

import time
from pathlib import Path

from django.core.management.base import BaseCommand, CommandError

from reports.models import Report, ReportVersion
from survey.models import Survey


class Command(BaseCommand):
    help = "Render a DRAFT PDF of a survey's report to --output FILE.pdf; stores nothing."

    def add_arguments(self, parser):
        parser.add_argument("survey_id", type=int)
        parser.add_argument("--output", required=True, help="Where to write the PDF.")
        parser.add_argument(
            "--image-format",
            choices=["jpeg", "png"],
            default="jpeg",
            help="How pictures are embedded.",
        )

    def handle(self, *args, survey_id: int, output: str, image_format: str, **options):
        from reports.document import render_pdf
        from reports.services import next_final_version

        survey = Survey.objects.filter(pk=survey_id, status=Survey.Status.ACTIVE).first()
        if survey is None:
            raise CommandError(f"No active survey with id {survey_id}.")
        target = Path(output)
        if not target.parent.is_dir():
            raise CommandError(f"The folder {target.parent} does not exist.")
        report = survey.reports.first() or Report(
            organization=survey.organization, survey=survey, number="UNNUMBERED"
        )
        number = next_final_version(report) if report.pk else 1
        # An unsaved draft: the command renders what a draft would show and stores nothing.
        version = ReportVersion(report=report, version=number, is_draft=True)
        started = time.perf_counter()
        rendered = render_pdf(
            version,
            image_format=image_format,
            progress=lambda stage, pct: self.stderr.write(f"{pct:3d} % {stage}"),
        )
        elapsed = time.perf_counter() - started
        target.write_bytes(rendered.pdf)
        self.stdout.write(
            f"Wrote {target} ({rendered.page_count} pages, {len(rendered.pdf) / 1024:.0f} KiB) "
            f"in {elapsed:.2f} s ({elapsed / max(rendered.page_count, 1):.3f} s/page)."
        )
