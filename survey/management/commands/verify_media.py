from django.core.management.base import BaseCommand

from survey.models import Thermogram
from survey.services.processing import thermogram_verify_original


class Command(BaseCommand):
    help = "Recompute the sha256 of every stored original; mark mismatches as damaged."

    def handle(self, *args, **options):
        checked = damaged = 0
        for thermogram in Thermogram.objects.select_related("organization").iterator():
            checked += 1
            if not thermogram_verify_original(thermogram=thermogram):
                damaged += 1
                self.stdout.write(
                    f"DAMAGED thermogram {thermogram.pk} ({thermogram.original_name}) "
                    f"of survey {thermogram.survey_id}"
                )
        self.stdout.write(
            f"Checked {checked} original(s): {checked - damaged} intact, {damaged} damaged."
        )
        if damaged:
            raise SystemExit(1)
