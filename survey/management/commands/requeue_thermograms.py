from django.core.management.base import BaseCommand

from survey.services.ingest import thermograms_requeue


class Command(BaseCommand):
    help = (
        "Queue again every thermogram still waiting (for example uploaded while the broker "
        "was down, or lost when Redis lost its data) and every one whose processing stalled. "
        "The re-queue job of celery beat does the same every minute, except for queued jobs "
        "the broker had accepted."
    )

    def add_arguments(self, parser):
        parser.add_argument("--survey", type=int, help="Only this survey id.")

    def handle(self, *args, survey=None, **options):
        result = thermograms_requeue(survey_id=survey, every_queued=True)
        self.stdout.write(f"Queued {result.sent} thermogram(s).")
        if result.failed:
            self.stderr.write(f"Could not reach the broker for {result.failed} thermogram(s).")
