from django.core.management.base import BaseCommand

from reports.services import reports_requeue


class Command(BaseCommand):
    help = (
        "Queue again every report render still waiting (requested or issued while the broker "
        "was down, or lost when Redis lost its data) and every one whose worker was lost. "
        "The re-queue job of celery beat does the same every minute, except for queued "
        "renders the broker had accepted."
    )

    def add_arguments(self, parser):
        parser.add_argument("--report", type=int, help="Only this report id.")

    def handle(self, *args, report=None, **options):
        result = reports_requeue(report_id=report, every_queued=True)
        self.stdout.write(f"Queued {result.sent} report render(s).")
        if result.failed:
            self.stderr.write(f"Could not reach the broker for {result.failed} render(s).")
