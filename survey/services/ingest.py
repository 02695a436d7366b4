"""Uploads: a file becomes a stored original and a queued thermogram.

`thermogram_ingest` checks a file (size, recognisable format, not a duplicate) before
anything is written, stores the original unchanged with its sha256, creates the row in
status `queued` and enqueues `process_thermogram` once the transaction commits; the worker
then runs survey/services/processing.py.
"""

import contextlib
import datetime
import hashlib
import io
import logging
import warnings
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from django.conf import settings
from django.contrib.auth.models import AbstractBaseUser
from django.core.exceptions import ValidationError
from django.core.files.base import ContentFile
from django.core.files.storage import default_storage
from django.core.files.uploadedfile import UploadedFile
from django.db import IntegrityError, transaction
from django.db.models import Max, Q
from django.utils import timezone
from PIL import Image, ImageFile, ImageOps

from survey import thermal
from survey.models import Asset, Survey, Thermogram
from survey.services.audit import audit_record
from survey.services.locks import thermogram_check_unlocked
from survey.services.loggers import local_to_aware
from survey.services.surveys import check_same_org
from survey.tasks import process_thermogram
from survey.thermal import units
from survey.thermal.decode import declared_size, detect_format, size_comparison

logger = logging.getLogger(__name__)

# Photos are stored at most this many pixels on their long side: a full A4 page at about
# 250 dpi, room to zoom when aligning it with the thermogram, and 12 MB of RGB at most to
# draw (a 12000-pixel camera picture would cost 430 MB).
PHOTO_MAX_SIDE_PX = 2048


@contextlib.contextmanager
def _strict_pictures():
    """Refuse truncated pictures even if another library relaxed Pillow (WeasyPrint does)."""
    previous = ImageFile.LOAD_TRUNCATED_IMAGES
    ImageFile.LOAD_TRUNCATED_IMAGES = False
    try:
        yield
    finally:
        ImageFile.LOAD_TRUNCATED_IMAGES = previous


def sniff_format(head: bytes, name: str) -> str:
    """The container of an upload from its first bytes: tiff, png, jpeg, npy or text.

    Raises ValidationError with an inspector-readable reason when it is none of them.
    """
    try:
        return detect_format(head)
    except thermal.ThermogramFormatError as error:
        raise ValidationError(f"{name}: {error}") from None


def _png_is_false_colour(head: bytes) -> bool:
    """An 8-bit colour PNG (IHDR bit depth 8, colour type 2, 3 or 6) is a picture, not data."""
    if len(head) < 26:
        return False
    bit_depth, colour_type = head[24], head[25]
    return bit_depth <= 8 and colour_type in {2, 3, 6}


def _read_upload(uploaded_file: UploadedFile) -> bytes:
    uploaded_file.seek(0)
    return uploaded_file.read()


def _file_name(uploaded_file: UploadedFile) -> str:
    return Path(uploaded_file.name or "upload").name[:255]


def _validate_false_colour(palette_source: dict | None) -> dict | None:
    if not palette_source:
        return None
    palette = palette_source.get("palette") or None
    low, high = palette_source.get("low_c"), palette_source.get("high_c")
    box = _validate_scale_bar_box(palette_source.get("scale_bar_box"))
    if palette is None and box is None:
        raise ValidationError(
            "A false-colour picture needs its palette or the pixel box of its scale bar."
        )
    if palette is not None and palette not in thermal.PALETTES:
        raise ValidationError(f"Unknown palette {palette!r}.")
    if low is None or high is None or not float(low) < float(high):
        raise ValidationError(
            "A false-colour picture needs the temperatures of the bottom and top of its scale "
            "bar, the top warmer than the bottom."
        )
    source = {"palette": palette, "low_c": float(low), "high_c": float(high)}
    if box is not None:
        source["scale_bar_box"] = box
    return source


def _validate_scale_bar_box(box) -> list[int] | None:
    """(left, top, right, bottom) in pixels; whether it lies inside the picture is checked
    when the picture is decoded, where its size is known."""
    if box is None:
        return None
    if (
        not isinstance(box, list | tuple)
        or len(box) != 4
        or not all(isinstance(v, int) and not isinstance(v, bool) for v in box)
    ):
        raise ValidationError(
            "The scale bar box needs four whole numbers of pixels: left, top, right, bottom."
        )
    left, top, right, bottom = box
    if min(box) < 0 or not (left < right and top < bottom):
        raise ValidationError(
            "The scale bar box must have its left side before its right side and its top "
            "above its bottom, all at pixel positions of 0 or more."
        )
    return [int(v) for v in box]


# Text matrices up to this size are decoded once at upload, so a file the decoder refuses
# (an ambiguous decimal comma, a .tif that holds text, a header naming another unit) is
# refused at once with the decoder's message instead of failing later in the worker.
TEXT_CHECK_BYTES = 8 * 1024 * 1024


def _check_text(data: bytes, name: str, decode: dict) -> None:
    try:
        thermal.read_temperatures(
            data,
            name,
            unit=decode.get("unit", "C"),
            scale=decode.get("scale"),
            offset=decode.get("offset"),
            max_pixels=settings.THERMOGRAM_MAX_PIXELS,
            max_bytes=settings.THERMOGRAM_MAX_UPLOAD_BYTES,
            max_text_bytes=settings.THERMOGRAM_MAX_TEXT_BYTES,
        )
    except thermal.ThermogramFormatError as error:
        raise ValidationError(str(error)) from None


def thermogram_check_upload(
    *,
    survey: Survey,
    name: str,
    data: bytes,
    palette_source: dict | None,
    decode: dict | None = None,
) -> str:
    """Everything that can be known about an upload before it is stored; returns its format.

    `decode` holds the unit, scale and offset the file will be read with.
    """
    _check_size(name, data)
    kind = sniff_format(data[:4096], name)
    if kind == "text":
        _check_size(name, data, settings.THERMOGRAM_MAX_TEXT_BYTES, "a text table")
    false_colour = kind == "jpeg" or (kind == "png" and _png_is_false_colour(data[:64]))
    if false_colour and not palette_source:
        raise ValidationError(
            "This is a colour picture, not temperature data. To estimate temperatures from "
            "it, choose its palette (or give the box of the scale bar drawn in it) and the "
            "temperatures at the ends of its scale bar."
        )
    if palette_source and not false_colour:
        raise ValidationError(
            "False-colour options were given, but this file holds temperature data: "
            "upload it without them."
        )
    try:
        declared_size(data, name, max_pixels=settings.THERMOGRAM_MAX_PIXELS)
    except thermal.ThermogramFormatError as error:
        raise ValidationError(str(error)) from None
    if kind == "text" and len(data) <= TEXT_CHECK_BYTES:
        _check_text(data, name, decode or {})
    return "false-colour" if false_colour else kind


def _check_size(name: str, data: bytes, limit: int | None = None, what: str = "") -> None:
    limit = settings.THERMOGRAM_MAX_UPLOAD_BYTES if limit is None else limit
    if len(data) == 0:
        raise ValidationError(f"{name} is empty.")
    if len(data) > limit:
        size, most = size_comparison(len(data), limit)
        if what:
            raise ValidationError(f"{name} is {size}; {what} may be at most {most}.")
        raise ValidationError(f"{name} is {size}; the limit is {most}.")


def _check_photo(photo: UploadedFile) -> bytes:
    """The photo as it will be stored: checked with the thermogram limits (bytes, pixels,
    shape), decoded whole once, and shrunk to print size when larger."""
    name = _file_name(photo)
    data = _read_upload(photo)
    _check_size(name, data)
    if not data.startswith((b"\xff\xd8\xff", b"\x89PNG\r\n\x1a\n")):
        raise ValidationError(f"The photo {name} is not a JPEG or PNG picture.")
    try:
        if declared_size(data, name, max_pixels=settings.THERMOGRAM_MAX_PIXELS) is None:
            raise thermal.ThermogramFormatError(f"{name} could not be read as a picture.")
        return photo_at_print_size(data, name)
    except thermal.ThermogramFormatError as error:
        raise ValidationError(str(error)) from None


def photo_at_print_size(data: bytes, name: str) -> bytes:
    """`data` unchanged when its long side is at most PHOTO_MAX_SIDE_PX, else the picture
    turned upright (EXIF orientation) and shrunk to that size, as JPEG quality 90."""
    with warnings.catch_warnings(), _strict_pictures():
        warnings.simplefilter("ignore", Image.DecompressionBombWarning)
        try:
            with Image.open(io.BytesIO(data)) as image:
                if max(image.size) <= PHOTO_MAX_SIDE_PX:
                    image.load()  # a whole picture, not a truncated one
                    return data
                image.draft("RGB", (PHOTO_MAX_SIDE_PX, PHOTO_MAX_SIDE_PX))
                picture = ImageOps.exif_transpose(image).convert("RGB")
        except Exception:  # noqa: BLE001 - Pillow raises many kinds for damaged files
            raise thermal.ThermogramFormatError(
                f"{name} could not be read as a picture (damaged or cut short)."
            ) from None
    picture.thumbnail((PHOTO_MAX_SIDE_PX, PHOTO_MAX_SIDE_PX), Image.Resampling.LANCZOS)
    buffer = io.BytesIO()
    picture.save(buffer, "JPEG", quality=90)
    return buffer.getvalue()


def thermogram_ingest(
    *,
    survey: Survey,
    uploaded_file: UploadedFile,
    user: AbstractBaseUser | None,
    unit: str = "C",
    scale: float | None = None,
    offset: float | None = None,
    palette_source: dict | None = None,
    photo: UploadedFile | None = None,
    emissivity: float | None = None,
    reflected_c: float | None = None,
    distance_m: float | None = None,
    asset: Asset | None = None,
    captured_at: datetime.datetime | None = None,
) -> Thermogram:
    """Store one uploaded thermogram unchanged and queue its processing.

    `captured_at` (naive: the survey's local time) stands for files without a date-time
    tag of their own; the worker takes the file's tag when it has one.

    Raises ValidationError (nothing written) when the file is too big, empty, not a readable
    format, or already in this survey.
    """
    name = _file_name(uploaded_file)
    if unit not in units.UNITS:
        raise ValidationError(f"Unknown temperature unit {unit!r}; use C, F or K.")
    palette_source = _validate_false_colour(palette_source)
    data = _read_upload(uploaded_file)
    kind = thermogram_check_upload(
        survey=survey,
        name=name,
        data=data,
        palette_source=palette_source,
        decode={"unit": unit, "scale": scale, "offset": offset},
    )
    digest = hashlib.sha256(data).hexdigest()
    _refuse_duplicate(survey, digest)
    photo_data = _check_photo(photo) if photo is not None else None
    if asset is not None:
        check_same_org(survey.organization, asset=asset)

    decode_settings: dict[str, Any] = {"unit": unit, "scale": scale, "offset": offset}
    if palette_source:
        decode_settings["false_colour"] = palette_source
    thermogram = Thermogram(
        organization=survey.organization,
        survey=survey,
        asset=asset,
        span_rule=survey.default_span_rule,
        original_name=name,
        original_sha256=digest,
        original_size=len(data),
        decode_settings=decode_settings,
        file_format=kind,
        estimated=bool(palette_source),
        status=Thermogram.Status.QUEUED,
        created_by=user,
    )
    if captured_at is not None:
        thermogram.captured_at = local_to_aware(survey, captured_at)
    if survey.default_palette:
        thermogram.palette = survey.default_palette
    for attribute, value in (
        ("emissivity", emissivity if emissivity is not None else survey.default_emissivity),
        ("reflected_c", reflected_c if reflected_c is not None else survey.default_reflected_c),
        ("distance_m", distance_m),
    ):
        if value is not None:
            setattr(thermogram, attribute, value)
    saved_paths: list[str] = []
    try:
        # Files first, outside the lock below: storing 200 MB must not hold up the survey.
        thermogram.original.save(name, ContentFile(data), save=False)
        saved_paths.append(thermogram.original.name)
        if photo_data is not None:
            thermogram.photo.save(_file_name(photo), ContentFile(photo_data), save=False)
            saved_paths.append(thermogram.photo.name)
            thermogram.photo_sha256 = hashlib.sha256(photo_data).hexdigest()
        with transaction.atomic():
            # One upload of this survey at a time from here: its duplicate check and its
            # number cannot interleave with another's (a unique constraint backs the first).
            Survey.objects.select_for_update().filter(pk=survey.pk).values_list("pk").first()
            _refuse_duplicate(survey, digest)
            # Deleted thermograms keep their numbers: one restored never shares a number.
            numbered = Thermogram.all_objects.filter(survey=survey)
            thermogram.sequence = (numbered.aggregate(last=Max("sequence"))["last"] or 0) + 1
            thermogram.full_clean()
            thermogram.save()
            audit_record(
                organization=survey.organization,
                actor=user,
                action="upload",
                obj=thermogram,
                detail={"name": name, "sha256": digest, "size": len(data)},
            )
            thermogram_enqueue(thermogram.pk)
    except IntegrityError:
        for path in saved_paths:
            default_storage.delete(path)
        _refuse_duplicate(survey, digest)  # a copy that slipped past the lock
        raise
    except Exception:
        for path in saved_paths:
            default_storage.delete(path)
        raise
    return thermogram


def _refuse_duplicate(survey: Survey, digest: str) -> None:
    duplicate = Thermogram.all_objects.filter(survey=survey, original_sha256=digest).first()
    if duplicate is None:
        return
    if duplicate.deleted_at is not None:
        raise ValidationError(
            f"Already in this survey as {duplicate.original_name} (identical content), which "
            "was deleted: restore it from Deleted items instead of uploading it again."
        )
    raise ValidationError(
        f"Already in this survey as {duplicate.original_name} (identical content)."
    )


@dataclass
class BatchResult:
    created: list[Thermogram] = field(default_factory=list)
    rejected: list[tuple[str, str]] = field(default_factory=list)
    # Stored, but the broker could not be reached to start their processing.
    waiting_for_broker: int = 0


def _messages(error: ValidationError) -> str:
    return " ".join(error.messages)


def thermograms_ingest_batch(
    *,
    survey: Survey,
    files: list[UploadedFile],
    user: AbstractBaseUser | None,
    photos: list[UploadedFile] | None = None,
    **defaults: Any,
) -> BatchResult:
    """Ingest many files: each valid one is stored, each rejected one reported by name.

    Photos are paired with the thermogram of the same file stem (IR_0001.tif + IR_0001.jpg).
    """
    result = BatchResult()
    photo_by_stem = {Path(p.name or "").stem.lower(): p for p in photos or []}
    thermogram_stems = {Path(f.name or "").stem.lower() for f in files}
    for stem, photo in photo_by_stem.items():
        if stem not in thermogram_stems:
            result.rejected.append(
                (_file_name(photo), "No thermogram with the same name to pair this photo with.")
            )
    for uploaded in files:
        photo = photo_by_stem.get(Path(uploaded.name or "").stem.lower())
        try:
            result.created.append(
                thermogram_ingest(
                    survey=survey, uploaded_file=uploaded, user=user, photo=photo, **defaults
                )
            )
        except ValidationError as error:
            result.rejected.append((_file_name(uploaded), _messages(error)))
    created = [thermogram.pk for thermogram in result.created]
    result.waiting_for_broker = Thermogram.objects.filter(
        pk__in=created, waiting_for_broker=True
    ).count()
    return result


def thermogram_enqueue(thermogram_id: int) -> None:
    """Queue processing once the current transaction commits."""
    transaction.on_commit(lambda: thermogram_publish(thermogram_id))


def thermogram_publish(thermogram_id: int) -> bool:
    """Publish the task; when the broker is down the row is marked as waiting for it.

    The re-queue job (survey.jobs.requeue_thermograms, every minute) or
    `manage.py requeue_thermograms` sends it again once the broker answers.
    """
    rows = Thermogram.objects.filter(pk=thermogram_id)
    try:
        process_thermogram.apply_async(args=[thermogram_id], retry=False)
    except Exception as error:  # kombu/redis raise several connection error types
        logger.warning(
            "Could not queue thermogram %s (%s); it waits for the broker.", thermogram_id, error
        )
        rows.filter(status=Thermogram.Status.QUEUED).update(waiting_for_broker=True)
        return False
    rows.filter(waiting_for_broker=True).update(waiting_for_broker=False)
    return True


@dataclass
class RequeueResult:
    sent: int = 0
    failed: int = 0


def thermograms_requeue(
    *, survey_id: int | None = None, every_queued: bool = False
) -> RequeueResult:
    """Send again the jobs waiting for the broker and those whose worker was lost.

    A stalled job (processing, heartbeat older than the stall time) goes back to `queued`
    first so that the task's claim takes it. `every_queued` also re-sends queued jobs the
    broker has already accepted (after Redis lost its data); a duplicate task is harmless,
    as the claim lets only one through. Idempotent: run it as often as you like.
    """
    from survey.services.processing import stalled_after

    stalled = Q(status=Thermogram.Status.PROCESSING) & (
        Q(heartbeat_at__lt=timezone.now() - stalled_after()) | Q(heartbeat_at__isnull=True)
    )
    waiting = Q(status=Thermogram.Status.QUEUED)
    if not every_queued:
        waiting &= Q(waiting_for_broker=True)
    rows = Thermogram.objects.filter(stalled | waiting)
    if survey_id is not None:
        rows = rows.filter(survey_id=survey_id)
    result = RequeueResult()
    for thermogram_id in rows.order_by("pk").values_list("pk", flat=True):
        Thermogram.objects.filter(pk=thermogram_id).filter(stalled).update(
            status=Thermogram.Status.QUEUED, heartbeat_at=None
        )
        if thermogram_publish(thermogram_id):
            result.sent += 1
        else:
            result.failed += 1
    return result


@transaction.atomic
def thermogram_reprocess(
    *,
    thermogram: Thermogram,
    user: AbstractBaseUser | None,
    unit: str | None = None,
    scale: float | None = None,
    offset: float | None = None,
    palette_source: dict | None = None,
) -> Thermogram:
    """Decode again from the original with new settings (for a failed or wrongly scaled file)."""
    if thermogram.status == Thermogram.Status.DAMAGED:
        raise ValidationError("The original is damaged; upload the file again.")
    thermogram_check_unlocked(thermogram)
    decode_settings = dict(thermogram.decode_settings)
    if unit is not None:
        if unit not in units.UNITS:
            raise ValidationError(f"Unknown temperature unit {unit!r}; use C, F or K.")
        decode_settings["unit"] = unit
    decode_settings["scale"] = scale
    decode_settings["offset"] = offset
    if thermogram.estimated:
        decode_settings["false_colour"] = _validate_false_colour(
            palette_source
        ) or decode_settings.get("false_colour")
    thermogram.decode_settings = decode_settings
    thermogram.status = Thermogram.Status.QUEUED
    thermogram.error = ""
    thermogram.heartbeat_at = None
    thermogram.attempts = 0
    thermogram.waiting_for_broker = False
    thermogram.full_clean()
    thermogram.save()
    audit_record(
        organization=thermogram.organization,
        actor=user,
        action="reprocess",
        obj=thermogram,
        detail={"decode_settings": decode_settings},
    )
    thermogram_enqueue(thermogram.pk)
    return thermogram
