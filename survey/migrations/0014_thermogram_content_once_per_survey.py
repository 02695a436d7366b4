"""The same original once per survey, enforced by the database.

Uploads that raced each other before this constraint may have stored the same bytes twice.
A later copy with no marks and no findings is removed (its stored file stays on disk and
is harmless); if a copy carries work, the migration stops and names it, so that someone
decides which to keep rather than the migration deleting measurements.
"""

from django.db import migrations, models
from django.db.models import Count


def remove_idle_duplicates(apps, schema_editor):
    Thermogram = apps.get_model("survey", "Thermogram")
    Finding = apps.get_model("survey", "Finding")
    twice = (
        Thermogram.objects.values("survey_id", "original_sha256")
        .annotate(copies=Count("id"))
        .filter(copies__gt=1)
    )
    blocked = []
    for group in twice:
        copies = Thermogram.objects.filter(
            survey_id=group["survey_id"], original_sha256=group["original_sha256"]
        ).order_by("id")
        for copy in list(copies)[1:]:
            if copy.marks.exists() or Finding.objects.filter(thermogram_id=copy.pk).exists():
                blocked.append(f"thermogram {copy.pk} ({copy.original_name})")
            else:
                copy.delete()
    if blocked:
        raise RuntimeError(
            "These thermograms repeat an original already in their survey and carry marks "
            "or findings; delete the copy you do not need, then migrate again: "
            + ", ".join(blocked)
        )


class Migration(migrations.Migration):
    dependencies = [("survey", "0013_cap_line_profiles")]

    operations = [
        migrations.RunPython(remove_idle_duplicates, migrations.RunPython.noop),
        migrations.AddConstraint(
            model_name="thermogram",
            constraint=models.UniqueConstraint(
                fields=("survey", "original_sha256"), name="thermogram_content_once_per_survey"
            ),
        ),
    ]
