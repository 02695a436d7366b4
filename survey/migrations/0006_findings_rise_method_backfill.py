"""Findings judged before the rise method and load exponent were stored say how they were
judged: a rise over a like component was then the hottest of the place over the mean of
the reference (hottest to mean), corrected with the exponent kept in the suggestion.

Instruments are not made from the surveys' free-text camera field: it holds neither the
detector width nor the lens's field of view the pixel geometry needs, so those surveys
keep their text and recorded IFOV, which stay the fallback.
"""

from django.db import migrations

RISE_BASES = ("similar", "ambient")


def backfill(apps, schema_editor):
    Finding = apps.get_model("survey", "Finding")
    for finding in Finding.objects.filter(basis__in=RISE_BASES).iterator():
        values = (finding.suggestion or {}).get("values") or {}
        exponent = values.get("load_exponent")
        finding.load_exponent = exponent if isinstance(exponent, int | float) else 2.0
        if finding.basis == "similar" and not finding.rise_method:
            finding.rise_method = "hottest_to_mean"
        finding.save(update_fields=["load_exponent", "rise_method"])


class Migration(migrations.Migration):
    dependencies = [("survey", "0005_judgement_evidence_instruments")]

    operations = [migrations.RunPython(backfill, migrations.RunPython.noop)]
