"""Deleted surveys: recoverable for a while, then purged with their files.

Deleting a survey only hides it (survey_soft_delete); `manage.py purge_deleted` removes
those deleted more than N days ago, rows and media, and leaves a line in the audit log.
A survey an app keeps (one with an issued report) is never deleted in the first place.
"""

import datetime

from django.contrib.auth.models import AbstractBaseUser
from django.core.exceptions import ValidationError
from django.core.files.storage import default_storage
from django.db import transaction
from django.db.models import QuerySet
from django.utils import timezone

from survey.dependents import survey_hold, survey_release
from survey.models import Survey, Thermogram
from survey.services.audit import audit_record

THERMOGRAM_FILES = ("original", "photo", "array", "preview", "thumbnail")


def surveys_due_for_purge(*, days: int) -> QuerySet[Survey]:
    """Surveys deleted (recoverably) more than `days` days ago."""
    if days < 0:
        raise ValueError("days must be zero or more")
    cutoff = timezone.now() - datetime.timedelta(days=days)
    return Survey.objects.filter(status=Survey.Status.DELETED, deleted_at__lt=cutoff)


def survey_purge(*, survey: Survey, user: AbstractBaseUser | None) -> int:
    """Delete a deleted survey for good, with its thermograms' files; returns files removed."""
    if survey.status != Survey.Status.DELETED:
        raise ValidationError("Only a deleted survey can be purged; delete it first.")
    reason = survey_hold(survey)
    if reason:
        raise ValidationError(f"{reason} It is kept for good.")
    paths = []
    # Thermograms deleted on their own before the survey go with it too.
    for thermogram in Thermogram.all_objects.filter(survey=survey):
        paths += [getattr(thermogram, name).name for name in THERMOGRAM_FILES]
    with transaction.atomic():
        paths += survey_release(survey)
        paths = [path for path in paths if path]
        detail = {"title": str(survey), "date": survey.date.isoformat(), "files": len(paths)}
        audit_record(
            organization=survey.organization, actor=user, action="purge", obj=survey, detail=detail
        )
        survey.delete()
        remove_files_on_commit(paths)
    return len(paths)


def remove_files_on_commit(paths: list[str]) -> None:
    """Delete media files once the rows naming them are gone for good (on commit)."""
    transaction.on_commit(lambda: [default_storage.delete(path) for path in paths])
