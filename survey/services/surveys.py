"""Writes of the survey domain: clients, sites, assets, surveys and the thermogram pipeline.

Upload path: `thermogram_ingest` checks a file (size, recognisable format, not a duplicate)
before anything is written, stores the original unchanged with its sha256, creates the row
in status `queued` and enqueues `process_thermogram` once the transaction commits.
`thermogram_process` (run by the worker) claims the row, checks the original against its
sha256, decodes it to a °C array and renders the preview and thumbnail. Derived files are
written under a temporary name and renamed, so a retry never leaves half a file.
"""

import datetime
import hashlib
import io
import logging
import os
import tempfile
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
from django.conf import settings
from django.contrib.auth.models import AbstractBaseUser
from django.core.exceptions import ValidationError
from django.core.files.base import ContentFile
from django.core.files.storage import default_storage
from django.core.files.uploadedfile import UploadedFile
from django.db import transaction
from django.db.models import Max
from django.utils import timezone

from survey.dependents import survey_hold
from survey.models import (
    Asset,
    Client,
    Conditions,
    Member,
    Organization,
    Site,
    Survey,
    Thermogram,
)
from survey.services.audit import audit_record

logger = logging.getLogger(__name__)

# A job whose heartbeat is older than this is shown as stalled and may be claimed again.
STALLED_AFTER = datetime.timedelta(seconds=settings.THERMOGRAM_STALLED_AFTER_SECONDS)
THUMBNAIL_SIZE = 320
# Previews are rebuilt from the array at will: zlib level 1 encodes about four times faster
# than the default 6 for files about a quarter larger, which matters for a day's import.
PNG_COMPRESS_LEVEL = 1
UNITS = {"C", "F", "K"}
SURVEY_FIELDS = (
    "site",
    "kind",
    "title",
    "date",
    "crew",
    "thermographer",
    "reviewer",
    "instrument",
    "ifov_mrad",
    "camera_accuracy_c",
    "camera_accuracy_pct",
    "scope_examined",
    "scope_not_examined",
    "notes",
)
CONDITIONS_FIELDS = tuple(f.name for f in Conditions._meta.concrete_fields if f.name != "survey")
THERMOGRAM_SETTINGS = (
    "emissivity",
    "reflected_c",
    "distance_m",
    "palette",
    "span_low_c",
    "span_high_c",
    "asset",
    "title",
    "note",
)


# --- clients, sites, assets ---------------------------------------------------------------


def client_create(
    *, organization: Organization, user: AbstractBaseUser | None, name: str, **fields: Any
) -> Client:
    client = Client(organization=organization, name=name, **fields)
    client.full_clean()
    client.save()
    audit_record(organization=organization, actor=user, action="create", obj=client)
    return client


def site_create(
    *, client: Client, user: AbstractBaseUser | None, name: str, address: str = ""
) -> Site:
    site = Site(organization=client.organization, client=client, name=name, address=address)
    site.full_clean()
    site.save()
    audit_record(organization=client.organization, actor=user, action="create", obj=site)
    return site


def asset_create(*, site: Site, user: AbstractBaseUser | None, name: str, **fields: Any) -> Asset:
    asset = Asset(organization=site.organization, site=site, name=name, **fields)
    asset.full_clean()
    asset.save()
    audit_record(organization=site.organization, actor=user, action="create", obj=asset)
    return asset


# --- surveys --------------------------------------------------------------------------------


def _check_same_org(organization: Organization, **rows: Any) -> None:
    for name, row in rows.items():
        if row is not None and row.organization_id != organization.pk:
            raise ValidationError({name: "Choose one of your organization's records."})


@transaction.atomic
def survey_create(
    *,
    organization: Organization,
    user: AbstractBaseUser | None,
    site: Site,
    kind: str,
    date: datetime.date,
    conditions: dict[str, Any] | None = None,
    **fields: Any,
) -> Survey:
    """Create a survey and its Conditions row (empty fields where nothing was recorded)."""
    unknown = set(fields) - set(SURVEY_FIELDS)
    if unknown:
        raise TypeError(f"survey_create() got unknown fields: {sorted(unknown)}")
    _check_same_org(
        organization,
        site=site,
        thermographer=fields.get("thermographer"),
        reviewer=fields.get("reviewer"),
    )
    survey = Survey(
        organization=organization, site=site, kind=kind, date=date, created_by=user, **fields
    )
    survey.full_clean()
    survey.save()
    _conditions_save(Conditions(survey=survey), conditions or {})
    audit_record(organization=organization, actor=user, action="create", obj=survey)
    return survey


@transaction.atomic
def survey_update(
    *,
    survey: Survey,
    user: AbstractBaseUser | None,
    conditions: dict[str, Any] | None = None,
    **changes: Any,
) -> Survey:
    """Change a survey, and its conditions when given, in one transaction."""
    unknown = set(changes) - set(SURVEY_FIELDS)
    if unknown:
        raise TypeError(f"survey_update() got unknown fields: {sorted(unknown)}")
    _check_same_org(
        survey.organization,
        site=changes.get("site"),
        thermographer=changes.get("thermographer"),
        reviewer=changes.get("reviewer"),
    )
    _apply_changes(survey, changes, user=user)
    if conditions is not None:
        conditions_update(survey=survey, user=user, **conditions)
    return survey


def _apply_changes(instance, changes: dict[str, Any], *, user: AbstractBaseUser | None) -> None:
    """Set the changed fields, validate, save and write the audit line of an update."""
    for name, value in changes.items():
        setattr(instance, name, value)
    instance.full_clean()
    instance.save()
    audit_record(
        organization=instance.organization,
        actor=user,
        action="update",
        obj=instance,
        detail={"fields": sorted(changes)},
    )


def _conditions_save(conditions: Conditions, values: dict[str, Any]) -> Conditions:
    unknown = set(values) - set(CONDITIONS_FIELDS)
    if unknown:
        raise TypeError(f"unknown conditions fields: {sorted(unknown)}")
    for name, value in values.items():
        setattr(conditions, name, value)
    conditions.full_clean()
    conditions.save()
    return conditions


@transaction.atomic
def conditions_update(
    *, survey: Survey, user: AbstractBaseUser | None, **values: Any
) -> Conditions:
    conditions, _ = Conditions.objects.get_or_create(survey=survey)
    _conditions_save(conditions, values)
    audit_record(
        organization=survey.organization,
        actor=user,
        action="update",
        obj=conditions,
        detail={"fields": sorted(values)},
    )
    return conditions


@transaction.atomic
def survey_soft_delete(*, survey: Survey, user: AbstractBaseUser | None) -> Survey:
    """Hide a survey (recoverable); refused while an app keeps it (an issued report)."""
    reason = survey_hold(survey)
    if reason:
        raise ValidationError(f"{reason} It cannot be deleted.")
    survey.status = Survey.Status.DELETED
    survey.deleted_at = timezone.now()
    survey.save(update_fields=["status", "deleted_at", "updated_at"])
    audit_record(organization=survey.organization, actor=user, action="delete", obj=survey)
    return survey


@transaction.atomic
def survey_restore(*, survey: Survey, user: AbstractBaseUser | None) -> Survey:
    survey.status = Survey.Status.ACTIVE
    survey.deleted_at = None
    survey.save(update_fields=["status", "deleted_at", "updated_at"])
    audit_record(organization=survey.organization, actor=user, action="restore", obj=survey)
    return survey


# --- thermogram upload -----------------------------------------------------------------------


def sniff_format(head: bytes, name: str) -> str:
    """The container of an upload from its first bytes: tiff, png, jpeg, npy or text.

    Raises ValidationError with an inspector-readable reason when it is none of them.
    """
    from survey.thermal.decode import ThermogramFormatError, detect_format

    try:
        return detect_format(head)
    except ThermogramFormatError as error:
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
    from survey import thermal

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


def thermogram_check_upload(
    *, survey: Survey, name: str, data: bytes, palette_source: dict | None
) -> str:
    """Everything that can be known about an upload before it is stored; returns its format."""
    limit = settings.THERMOGRAM_MAX_UPLOAD_BYTES
    if len(data) == 0:
        raise ValidationError("The file is empty.")
    if len(data) > limit:
        raise ValidationError(
            f"The file is {len(data) / 1e6:.1f} MB; the limit is {limit / 1e6:.0f} MB."
        )
    kind = sniff_format(data[:4096], name)
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
    return "false-colour" if false_colour else kind


def _check_photo(photo: UploadedFile) -> bytes:
    data = _read_upload(photo)
    if len(data) > settings.THERMOGRAM_MAX_UPLOAD_BYTES:
        raise ValidationError("The photo is larger than the upload limit.")
    if not data.startswith((b"\xff\xd8\xff", b"\x89PNG\r\n\x1a\n")):
        raise ValidationError(f"The photo {_file_name(photo)} is not a JPEG or PNG picture.")
    return data


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
) -> Thermogram:
    """Store one uploaded thermogram unchanged and queue its processing.

    Raises ValidationError (nothing written) when the file is too big, empty, not a readable
    format, or already in this survey.
    """
    name = _file_name(uploaded_file)
    if unit not in UNITS:
        raise ValidationError(f"Unknown temperature unit {unit!r}; use C, F or K.")
    palette_source = _validate_false_colour(palette_source)
    data = _read_upload(uploaded_file)
    kind = thermogram_check_upload(
        survey=survey, name=name, data=data, palette_source=palette_source
    )
    digest = hashlib.sha256(data).hexdigest()
    duplicate = survey.thermograms.filter(original_sha256=digest).first()
    if duplicate is not None:
        raise ValidationError(
            f"Already in this survey as {duplicate.original_name} (identical content)."
        )
    photo_data = _check_photo(photo) if photo is not None else None
    if asset is not None:
        _check_same_org(survey.organization, asset=asset)

    decode_settings: dict[str, Any] = {"unit": unit, "scale": scale, "offset": offset}
    if palette_source:
        decode_settings["false_colour"] = palette_source
    thermogram = Thermogram(
        organization=survey.organization,
        survey=survey,
        asset=asset,
        original_name=name,
        original_sha256=digest,
        original_size=len(data),
        decode_settings=decode_settings,
        file_format=kind,
        estimated=bool(palette_source),
        status=Thermogram.Status.QUEUED,
        created_by=user,
    )
    for attribute, value in (
        ("emissivity", emissivity),
        ("reflected_c", reflected_c),
        ("distance_m", distance_m),
    ):
        if value is not None:
            setattr(thermogram, attribute, value)
    saved_paths: list[str] = []
    try:
        with transaction.atomic():
            thermogram.sequence = (
                survey.thermograms.aggregate(last=Max("sequence"))["last"] or 0
            ) + 1
            thermogram.original.save(name, ContentFile(data), save=False)
            saved_paths.append(thermogram.original.name)
            if photo_data is not None:
                thermogram.photo.save(_file_name(photo), ContentFile(photo_data), save=False)
                saved_paths.append(thermogram.photo.name)
                thermogram.photo_sha256 = hashlib.sha256(photo_data).hexdigest()
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
    except Exception:
        for path in saved_paths:
            default_storage.delete(path)
        raise
    return thermogram


@dataclass
class BatchResult:
    created: list[Thermogram] = field(default_factory=list)
    rejected: list[tuple[str, str]] = field(default_factory=list)


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
    return result


def thermogram_enqueue(thermogram_id: int) -> None:
    """Queue processing once the current transaction commits."""
    transaction.on_commit(lambda: thermogram_publish(thermogram_id))


def thermogram_publish(thermogram_id: int) -> bool:
    """Publish the task; when the broker is down the row stays `queued` for requeue_thermograms."""
    from survey.tasks import process_thermogram

    try:
        process_thermogram.apply_async(args=[thermogram_id], retry=False)
    except Exception as error:  # kombu/redis raise several connection error types
        logger.warning(
            "Could not queue thermogram %s (%s); it stays queued until "
            "`manage.py requeue_thermograms` runs.",
            thermogram_id,
            error,
        )
        return False
    return True


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
    decode_settings = dict(thermogram.decode_settings)
    if unit is not None:
        if unit not in UNITS:
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


@transaction.atomic
def thermogram_update_settings(
    *, thermogram: Thermogram, user: AbstractBaseUser | None, **changes: Any
) -> Thermogram:
    """Change capture and display settings; the preview is re-rendered when it changes."""
    unknown = set(changes) - set(THERMOGRAM_SETTINGS)
    if unknown:
        raise TypeError(f"thermogram_update_settings() got unknown fields: {sorted(unknown)}")
    _check_same_org(thermogram.organization, asset=changes.get("asset"))
    low = changes.get("span_low_c", thermogram.span_low_c)
    high = changes.get("span_high_c", thermogram.span_high_c)
    if (low is None) != (high is None):
        raise ValidationError("Give both ends of the span, or neither for an automatic span.")
    if low is not None and not low < high:
        raise ValidationError("The top of the span must be warmer than the bottom.")
    if "palette" in changes:
        from survey import thermal

        if changes["palette"] not in thermal.PALETTES:
            raise ValidationError({"palette": f"Unknown palette {changes['palette']!r}."})
    display_changed = any(
        changes.get(name, getattr(thermogram, name)) != getattr(thermogram, name)
        for name in ("palette", "span_low_c", "span_high_c")
    )
    _apply_changes(thermogram, changes, user=user)
    if display_changed and thermogram.is_ready:
        from survey.services.arrays import thermogram_temperatures

        _write_images(thermogram, thermogram_temperatures(thermogram))
        thermogram.save(update_fields=["preview", "thumbnail"])
    return thermogram


# --- processing (worker side) ------------------------------------------------------------


def _claim(thermogram_id: int) -> bool:
    """Take the job: queued -> processing, or a processing job whose worker went silent."""
    now = timezone.now()
    claimed = Thermogram.objects.filter(pk=thermogram_id, status=Thermogram.Status.QUEUED).update(
        status=Thermogram.Status.PROCESSING, heartbeat_at=now, error=""
    )
    if claimed:
        return True
    stale = Thermogram.objects.filter(
        pk=thermogram_id,
        status=Thermogram.Status.PROCESSING,
        heartbeat_at__lt=now - STALLED_AFTER,
    )
    return bool(stale.update(heartbeat_at=now))


def _heartbeat(thermogram_id: int) -> None:
    Thermogram.objects.filter(pk=thermogram_id, status=Thermogram.Status.PROCESSING).update(
        heartbeat_at=timezone.now()
    )


def _finish(thermogram_id: int, status: str, **fields: Any) -> None:
    Thermogram.objects.filter(pk=thermogram_id, status=Thermogram.Status.PROCESSING).update(
        status=status, heartbeat_at=None, processed_at=timezone.now(), **fields
    )


def file_sha256(file_field) -> str:
    digest = hashlib.sha256()
    with file_field.storage.open(file_field.name, "rb") as handle:
        for chunk in iter(lambda: handle.read(1024 * 1024), b""):
            digest.update(chunk)
    return digest.hexdigest()


def decode_original(data: bytes, name: str, decode_settings: dict) -> np.ndarray:
    """The °C array of an original, decoded with its recorded settings."""
    from survey import thermal

    false_colour = decode_settings.get("false_colour") or {}
    return thermal.read_temperatures(
        data,
        name,
        unit=decode_settings.get("unit", "C"),
        scale=decode_settings.get("scale"),
        offset=decode_settings.get("offset"),
        palette_image=bool(false_colour),
        palette=false_colour.get("palette"),
        low_c=false_colour.get("low_c"),
        high_c=false_colour.get("high_c"),
        scale_bar_box=tuple(box) if (box := false_colour.get("scale_bar_box")) else None,
        max_pixels=settings.THERMOGRAM_MAX_PIXELS,
        max_bytes=settings.THERMOGRAM_MAX_UPLOAD_BYTES,
        max_text_bytes=settings.THERMOGRAM_MAX_UPLOAD_BYTES,
    )


def _replace_file(relative_path: str, data: bytes) -> str:
    """Write media atomically: a temporary file in the same folder, then a rename."""
    target = Path(default_storage.path(relative_path))
    target.parent.mkdir(parents=True, exist_ok=True)
    handle, temporary = tempfile.mkstemp(dir=target.parent, prefix=".tmp-", suffix=target.suffix)
    try:
        with os.fdopen(handle, "wb") as out:
            out.write(data)
        os.replace(temporary, target)
    except BaseException:
        Path(temporary).unlink(missing_ok=True)
        raise
    return relative_path


def _derived_path(thermogram: Thermogram, name: str) -> str:
    return f"derived/{thermogram.organization_id}/{thermogram.pk}/{name}"


def _remove_partial_files(thermogram: Thermogram) -> None:
    """A worker killed while writing leaves its temporary file; the next claim holder clears
    it (no one else writes here: the time limit ends a worker before its job counts stalled)."""
    folder = Path(default_storage.path(_derived_path(thermogram, "")))
    for leftover in folder.glob(".tmp-*"):
        leftover.unlink(missing_ok=True)


def display_span(thermogram: Thermogram, temperatures: np.ndarray) -> tuple[float, float]:
    from survey import thermal

    if thermogram.span_low_c is not None and thermogram.span_high_c is not None:
        return thermogram.span_low_c, thermogram.span_high_c
    low, high = thermal.auto_span(temperatures)
    return float(low), float(high)


def _write_images(thermogram: Thermogram, temperatures: np.ndarray) -> None:
    from PIL import Image

    from survey import thermal
    from survey.thermal.render import encode_png

    low, high = display_span(thermogram, temperatures)
    picture = Image.fromarray(thermal.render(temperatures, thermogram.palette, low, high))
    thermogram.preview.name = _replace_file(
        _derived_path(thermogram, "preview.png"),
        encode_png(picture, compress_level=PNG_COMPRESS_LEVEL),
    )
    # Box filtering is exact for shrinking and several times faster than Lanczos here.
    picture.thumbnail((THUMBNAIL_SIZE, THUMBNAIL_SIZE), Image.Resampling.BOX)
    thermogram.thumbnail.name = _replace_file(
        _derived_path(thermogram, "thumbnail.png"),
        encode_png(picture, compress_level=PNG_COMPRESS_LEVEL),
    )


def thermogram_process(thermogram_id: int) -> str | None:
    """Decode, store the °C array and render images; returns the final status, or None when
    another worker holds the job or it is already done (safe to call again)."""
    from survey import thermal

    if not _claim(thermogram_id):
        return None
    thermogram = Thermogram.objects.select_related("organization").get(pk=thermogram_id)
    _remove_partial_files(thermogram)
    try:
        if file_sha256(thermogram.original) != thermogram.original_sha256:
            _finish(
                thermogram_id,
                Thermogram.Status.DAMAGED,
                error="The stored original no longer matches its sha256; upload it again.",
            )
            return Thermogram.Status.DAMAGED
        with thermogram.original.open("rb") as handle:
            data = handle.read()
        temperatures = decode_original(data, thermogram.original_name, thermogram.decode_settings)
        _check_array(temperatures)
        _heartbeat(thermogram_id)
        buffer = io.BytesIO()
        np.save(buffer, temperatures, allow_pickle=False)
        array_name = _replace_file(_derived_path(thermogram, "temperatures.npy"), buffer.getvalue())
        _write_images(thermogram, temperatures)
    except FileNotFoundError:
        _finish(
            thermogram_id,
            Thermogram.Status.DAMAGED,
            error="The stored original is missing; upload it again.",
        )
        return Thermogram.Status.DAMAGED
    except thermal.ThermogramFormatError as error:
        _finish(thermogram_id, Thermogram.Status.FAILED, error=str(error))
        return Thermogram.Status.FAILED
    except Exception:
        logger.exception("Processing thermogram %s failed unexpectedly", thermogram_id)
        _finish(
            thermogram_id,
            Thermogram.Status.FAILED,
            error="Processing stopped on an unexpected error; the original is kept. "
            "Try again, or tell your administrator.",
        )
        return Thermogram.Status.FAILED
    _finish(
        thermogram_id,
        Thermogram.Status.READY,
        error="",
        array=array_name,
        preview=thermogram.preview.name,
        thumbnail=thermogram.thumbnail.name,
        height=int(temperatures.shape[0]),
        width=int(temperatures.shape[1]),
        min_c=float(np.nanmin(temperatures)),
        max_c=float(np.nanmax(temperatures)),
    )
    return Thermogram.Status.READY


def _check_array(temperatures: np.ndarray) -> None:
    from survey import thermal

    if temperatures.ndim != 2 or min(temperatures.shape) < 2:
        raise thermal.ThermogramFormatError(
            f"Expected a 2-D image of temperatures, got shape {temperatures.shape}."
        )
    if temperatures.size > settings.THERMOGRAM_MAX_PIXELS:
        raise thermal.ThermogramFormatError(
            f"The image has {temperatures.size:,} pixels; the limit is "
            f"{settings.THERMOGRAM_MAX_PIXELS:,}."
        )
    if not np.isfinite(temperatures).any():
        raise thermal.ThermogramFormatError("The file holds no temperature values.")


def thermogram_is_stalled(thermogram: Thermogram) -> bool:
    return (
        thermogram.status == Thermogram.Status.PROCESSING
        and thermogram.heartbeat_at is not None
        and thermogram.heartbeat_at < timezone.now() - STALLED_AFTER
    )


def thermogram_verify_original(*, thermogram: Thermogram) -> bool:
    """Recompute the original's sha256; mark the thermogram damaged when it differs."""
    try:
        intact = file_sha256(thermogram.original) == thermogram.original_sha256
    except FileNotFoundError:
        intact = False
    if not intact and thermogram.status != Thermogram.Status.DAMAGED:
        Thermogram.objects.filter(pk=thermogram.pk).update(
            status=Thermogram.Status.DAMAGED,
            error="The stored original no longer matches its sha256; upload it again.",
        )
        audit_record(
            organization=thermogram.organization,
            actor=None,
            action="damaged",
            obj=thermogram,
        )
    return intact


def member_update_preferences(*, member: Member, temperature_unit: str) -> Member:
    member.temperature_unit = temperature_unit
    member.full_clean()
    member.save(update_fields=["temperature_unit"])
    return member
