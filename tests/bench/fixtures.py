"""Rows the web figures need: one firm, one inspector, surveys full of real thermograms."""

import datetime
import hashlib

import numpy as np

from tests.bench.inputs import temperature_field, tiff_bytes

PASSWORD = "bench-password-not-secret"


def inspector():
    """An admin member of a fresh organization (admins may do everything we measure)."""
    from django.contrib.auth import get_user_model

    from survey.models import Client, Member, Organization, Site

    organization, _ = Organization.objects.get_or_create(
        slug="bench", defaults={"name": "Bench Thermal"}
    )
    user, created = get_user_model().objects.get_or_create(username="bench")
    if created:
        user.set_password(PASSWORD)
        user.save()
        Member.objects.create(user=user, organization=organization, role=Member.Role.ADMIN)
    client, _ = Client.objects.get_or_create(organization=organization, name="Bench Co-op")
    site, _ = Site.objects.get_or_create(
        organization=organization, client=client, name="Block B, 3 Bench Road"
    )
    return user.membership, site


def empty_survey(title: str):
    from survey.models import Conditions, Survey

    member, site = inspector()
    survey = Survey.objects.create(
        organization=member.organization,
        site=site,
        kind=Survey.Kind.ENVELOPE,
        title=title,
        date=datetime.date(2026, 1, 14),
        thermographer=member,
        ifov_mrad=1.309,
    )
    Conditions.objects.create(
        survey=survey, indoor_air_c=20.0, indoor_rh_pct=50.0, outdoor_air_c=-5.0, wind_m_s=2.0
    )
    return survey


def tiff_files(count: int, width: int = 640, height: int = 480, *, start: int = 0) -> list:
    """`count` distinct float TIFF uploads (each field shifted a little: no duplicates)."""
    from django.core.files.uploadedfile import SimpleUploadedFile

    base = temperature_field(width, height)
    return [
        SimpleUploadedFile(
            f"IR_{index:04d}.tif",
            tiff_bytes(base + np.float32(0.01 * index)),
            content_type="image/tiff",
        )
        for index in range(start, start + count)
    ]


def ingest(survey, files: list) -> list[int]:
    """Upload through the service; returns the new thermogram ids."""
    from survey.services.ingest import thermogram_ingest

    member = survey.thermographer
    return [
        thermogram_ingest(survey=survey, uploaded_file=upload, user=member.user).pk
        for upload in files
    ]


def survey_with_thermograms(
    title: str, count: int, *, distinct: int = 10, marks: int = 3, share_arrays: bool = False
):
    """A survey of `count` 640×480 thermograms with `marks` marks each.

    The first `distinct` go through the real (eager) upload pipeline and get their marks
    through the service; the others are copies of those rows, each with its own array file
    (a hard link on a folder, a server-side copy in a bucket: a separate name, so the array
    cache sees separate thermograms), or with `share_arrays` the template's own file (for
    pages that never read arrays). That builds a 200-thermogram survey in seconds instead of
    minutes; ingest is measured on its own.
    """
    from survey.models import Thermogram

    survey = empty_survey(title)
    ids = ingest(survey, tiff_files(min(count, distinct)))
    templates = list(Thermogram.objects.filter(pk__in=ids).order_by("sequence"))
    if any(not t.is_ready for t in templates):
        raise RuntimeError("a thermogram of the bench survey did not become ready")
    add_marks(survey, per_thermogram=marks)
    clones = [
        _copy(templates[i % len(templates)], i + 1, share_arrays=share_arrays)
        for i in range(len(templates), count)
    ]
    Thermogram.objects.bulk_create(clones, batch_size=500)
    _copy_marks(survey, templates)
    return survey


def _copy(template, sequence: int, *, share_arrays: bool = False):
    """An unsaved copy of a ready thermogram row, with its array under a new name."""
    import os
    import shutil
    from pathlib import Path

    from django.core.files.storage import default_storage

    from survey.storage import media_is_local

    clone = type(template).objects.get(pk=template.pk)
    clone.pk = None
    clone.sequence = sequence
    clone.original_name = f"IR_{sequence:04d}.tif"
    # A survey holds each original once: the copies stand for distinct files (their
    # originals are never read again in the bench).
    clone.original_sha256 = hashlib.sha256(
        f"{template.original_sha256}-{sequence}".encode()
    ).hexdigest()
    if share_arrays:
        return clone
    name = f"derived/{template.organization_id}/copy-{template.survey_id}-{sequence}/celsius.npy"
    if media_is_local():
        target = Path(default_storage.path(name))
        target.parent.mkdir(parents=True, exist_ok=True)
        try:
            os.link(default_storage.path(template.array.name), target)
        except OSError:
            shutil.copyfile(default_storage.path(template.array.name), target)
    else:
        bucket = default_storage.bucket_name
        default_storage.connection.meta.client.copy_object(
            Bucket=bucket, Key=name, CopySource={"Bucket": bucket, "Key": template.array.name}
        )
    clone.array.name = name
    return clone


def _copy_marks(survey, templates: list) -> None:
    """Give every copied thermogram the marks of the template it was copied from."""
    from survey.models import Mark

    fields = [f.attname for f in Mark._meta.concrete_fields if f.attname != "id"]
    template_marks = {t.pk: list(t.marks.values(*fields)) for t in templates}
    copies = [
        Mark(**{**values, "thermogram_id": thermogram.pk})
        for thermogram in survey.thermograms.exclude(pk__in=template_marks)
        for values in template_marks[templates[(thermogram.sequence - 1) % len(templates)].pk]
    ]
    Mark.objects.bulk_create(copies)


def add_marks(survey, per_thermogram: int = 3) -> None:
    """A few marks on each thermogram (a spot, an area, a line), as an inspector leaves them."""
    from survey.services.marks import mark_add

    user = survey.thermographer.user
    shapes = [
        ("point", [[320, 240]]),
        ("rectangle", [[100, 100], [220, 180]]),
        ("line", [[50, 400], [600, 380]]),
        ("ellipse", [[400, 120], [520, 200]]),
    ]
    for thermogram in survey.thermograms.all():
        for kind, points in shapes[:per_thermogram]:
            mark_add(thermogram=thermogram, kind=kind, points=points, user=user)
