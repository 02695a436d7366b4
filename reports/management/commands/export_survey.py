from pathlib import Path

from django.core.exceptions import ValidationError
from django.core.management.base import BaseCommand, CommandError

from reports.archive import survey_export
from survey.models import Survey


class Command(BaseCommand):
    help = (
        "Write one survey as a zip archive: originals, photos, issued PDFs and a manifest of "
        "every setting, mark, finding, condition and result (import it with import_survey)."
    )

    def add_arguments(self, parser):
        parser.add_argument("survey_id", type=int)
        parser.add_argument("archive", help="Path of the .zip file to write.")

    def handle(self, *args, survey_id, archive, **options):
        survey = Survey.objects.select_related("site__client", "organization").filter(pk=survey_id)
        if not survey:
            raise CommandError(f"No survey {survey_id}.")
        try:
            data = survey_export(survey=survey[0], user=None)
        except ValidationError as error:
            raise CommandError(" ".join(error.messages)) from None
        path = Path(archive)
        temporary = path.with_name(f".{path.name}.part")
        temporary.write_bytes(data)
        temporary.replace(path)
        self.stdout.write(f"Wrote {path} ({len(data) / 1e6:.1f} MB).")
