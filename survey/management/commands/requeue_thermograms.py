from django.core.management.base import BaseCommand
from django.db.models import Q
from django.utils import timezone

from survey.models import Thermogram
from survey.services.ingest import thermogram_publish
from survey.services.processing import STALLED_AFTER


class Command(BaseCommand):
    help = (
        "Queue again every thermogram still waiting (for example uploaded while the broker "
        "was down) and every one whose processing stalled."
    )

    def add_arguments(self, parser):
        parser.add_argument("--survey", type=int, help="Only this survey id.")

    def handle(self, *args, survey=None, **options):
        stalled_before = timezone.now() - STALLED_AFTER
        waiting = Thermogram.objects.filter(
            Q(status=Thermogram.Status.QUEUED)
            | Q(status=Thermogram.Status.PROCESSING, heartbeat_at__lt=stalled_before)
            | Q(status=Thermogram.Status.PROCESSING, heartbeat_at__isnull=True)
        )
        if survey is not None:
            waiting = waiting.filter(survey_id=survey)
        sent = failed = 0
        for thermogram_id in waiting.values_list("pk", flat=True).order_by("pk"):
            # A stalled job goes back to queued so the task's claim succeeds.
            Thermogram.objects.filter(pk=thermogram_id, status=Thermogram.Status.PROCESSING).update(
                status=Thermogram.Status.QUEUED, heartbeat_at=None
            )
            if thermogram_publish(thermogram_id):
                sent += 1
            else:
                failed += 1
        self.stdout.write(f"Queued {sent} thermogram(s).")
        if failed:
            self.stderr.write(f"Could not reach the broker for {failed} thermogram(s).")
