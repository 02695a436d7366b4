from pathlib import Path

from django.contrib.auth import get_user_model
from django.core.exceptions import ValidationError
from django.core.management.base import BaseCommand, CommandError

from reports.archive import survey_import
from survey.models import Organization


class Command(BaseCommand):
    help = (
        "Import a survey archive written by export_survey into an organization; its "
        "thermograms are decoded again from their originals."
    )

    def add_arguments(self, parser):
        parser.add_argument("archive", help="Path of the .zip archive.")
        parser.add_argument("--organization", required=True, help="Slug of the organization.")
        parser.add_argument("--user", help="Username recorded as the importer.")

    def handle(self, *args, archive, organization, user=None, **options):
        target = Organization.objects.filter(slug=organization).first()
        if target is None:
            raise CommandError(f"No organization with the slug {organization!r}.")
        importer = None
        if user:
            importer = get_user_model().objects.filter(username=user).first()
            if importer is None:
                raise CommandError(f"No user {user!r}.")
        path = Path(archive)
        if not path.is_file():
            raise CommandError(f"No file {path}.")
        try:
            survey = survey_import(data=path, organization=target, user=importer)
        except ValidationError as error:
            raise CommandError(f"Nothing was imported: {' '.join(error.messages)}") from None
        survey.refresh_from_db()
        count = survey.thermograms.count()
        self.stdout.write(
            f"Imported survey {survey.pk} ({survey}) into {target}: {count} thermogram(s), "
            f"{survey.reports.count()} report(s)."
        )
