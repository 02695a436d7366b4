"""Deleted surveys: recoverable for a while, then purged with their files.

Deleting a survey only hides it (survey_soft_delete); `manage.py purge_deleted` removes
those deleted more than N days ago, rows and media, and leaves a line in the audit log.
A survey an app keeps (one with an issued report) is never deleted in the first place.
"""

import datetime
import logging

from django.contrib.auth.models import AbstractBaseUser
from django.core.exceptions import ValidationError
from django.core.files.storage import default_storage
from django.db import transaction
from django.db.models import QuerySet
from django.utils import timezone

from survey.dependents import survey_hold, survey_release
from survey.models import Survey, Thermogram
from survey.services.audit import audit_record

logger = logging.getLogger(__name__)

THERMOGRAM_FILES = ("original", "photo", "array", "preview", "thumbnail")


def surveys_due_for_purge(*, days: int) -> QuerySet[Survey]:
    """Surveys deleted (recoverably) more than `days` days ago."""
    if days < 0:
        raise ValueError("days must be zero or more")
    cutoff = timezone.now() - datetime.timedelta(days=days)
    return Survey.objects.filter(status=Survey.Status.DELETED, deleted_at__lt=cutoff)


def survey_purge(*, survey: Survey, user: AbstractBaseUser | None) -> int:
    """Delete a deleted survey for good, with its thermograms' files; returns files removed.

    The row is locked first (skipping one another purge holds), so two purges of the same
    survey at once remove it, and write its audit line, once; the second returns 0.
    """
    if survey.status != Survey.Status.DELETED:
        raise ValidationError("Only a deleted survey can be purged; delete it first.")
    return _purge(survey.pk, user) or 0


def _purge(survey_id: int, user: AbstractBaseUser | None) -> int | None:
    """Files removed, or None when the survey is gone or another purge holds it."""
    with transaction.atomic():
        survey = (
            Survey.objects.select_for_update(skip_locked=True, of=("self",))
            .select_related("organization", "site")
            .filter(pk=survey_id, status=Survey.Status.DELETED)
            .first()
        )
        if survey is None:
            return None
        reason = survey_hold(survey)
        if reason:
            raise ValidationError(f"{reason} It is kept for good.")
        paths = []
        # Thermograms deleted on their own before the survey go with it too.
        for thermogram in Thermogram.all_objects.filter(survey=survey):
            paths += [getattr(thermogram, name).name for name in THERMOGRAM_FILES]
        paths += survey_release(survey)
        paths = [path for path in paths if path]
        detail = {"title": str(survey), "date": survey.date.isoformat(), "files": len(paths)}
        audit_record(
            organization=survey.organization, actor=user, action="purge", obj=survey, detail=detail
        )
        survey.delete()
        remove_files_on_commit(paths)
    return len(paths)


def surveys_purge_due(*, days: int) -> int:
    """Purge every survey deleted more than `days` days ago; returns how many went.

    The periodic job (survey.tasks.purge_deleted_surveys). A survey some app keeps is left
    in place and logged; it never stops the others.
    """
    purged = 0
    for survey in surveys_due_for_purge(days=days).order_by("pk"):
        try:
            removed = _purge(survey.pk, None)
        except ValidationError as error:
            logger.warning("Survey %s is not purged: %s", survey.pk, " ".join(error.messages))
            continue
        purged += removed is not None
    return purged


def remove_files_on_commit(paths: list[str]) -> None:
    """Delete media files once the rows naming them are gone for good (on commit)."""
    transaction.on_commit(lambda: [default_storage.delete(path) for path in paths])
