from django.core.management.base import BaseCommand, CommandError

from survey.services.deletion import items_purge
from survey.services.retention import survey_purge, surveys_due_for_purge


class Command(BaseCommand):
    help = (
        "Remove for good the surveys deleted more than --days days ago (default 30), with "
        "their thermograms, marks, findings and files, and the clients, sites, assets, "
        "thermograms and findings deleted on their own that long ago. Until then they can be "
        "restored."
    )

    def add_arguments(self, parser):
        parser.add_argument("--days", type=int, default=30)
        parser.add_argument("--dry-run", action="store_true", help="Only list what would go.")

    def handle(self, *args, days, dry_run=False, **options):
        if days < 0:
            raise CommandError("--days must be zero or more.")
        surveys = list(surveys_due_for_purge(days=days).select_related("site"))
        files = 0
        for survey in surveys:
            self.stdout.write(
                f"{'Would purge' if dry_run else 'Purging'} survey {survey.pk}: {survey}"
            )
            if not dry_run:
                files += survey_purge(survey=survey, user=None)
        verb = "Would purge" if dry_run else "Purged"
        self.stdout.write(f"{verb} {len(surveys)} survey(s) deleted more than {days} day(s) ago.")
        counts = items_purge(days=days, dry_run=dry_run)
        listed = ", ".join(f"{count} {kind}(s)" for kind, count in counts.items())
        self.stdout.write(f"{verb} also {listed} deleted on their own.")
        if not dry_run:
            self.stdout.write(f"Removed {files} file(s).")
