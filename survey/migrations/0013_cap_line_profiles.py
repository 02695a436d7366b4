"""Line profiles stored before they were capped: keep at most MAX_PROFILE_SAMPLES points.

The statistics of the line are unchanged (they were computed from every sample); only the
stored profile shrinks, keeping the coldest and hottest sample of each stretch.
"""

import numpy as np
from django.db import migrations


def cap_profiles(apps, schema_editor):
    from survey.thermal.marks import MAX_PROFILE_SAMPLES, profile_extremes

    Mark = apps.get_model("survey", "Mark")
    for mark in Mark.objects.filter(kind="line").only("id", "stats").iterator(chunk_size=200):
        profile = (mark.stats or {}).get("profile") or []
        if len(profile) <= MAX_PROFILE_SAMPLES:
            continue
        distances = np.array([point[0] for point in profile], dtype=np.float64)
        values = np.array(
            [np.nan if point[1] is None else point[1] for point in profile], dtype=np.float64
        )
        distances, values = profile_extremes(distances, values)
        mark.stats["profile"] = [
            [float(d), None if np.isnan(v) else float(v)]
            for d, v in zip(distances, values, strict=True)
        ]
        Mark.objects.filter(pk=mark.pk).update(stats=mark.stats)


class Migration(migrations.Migration):
    dependencies = [("survey", "0012_signin_throttle")]

    operations = [migrations.RunPython(cap_profiles, migrations.RunPython.noop)]
