"""The worker's side of a thermogram: claim it, check its original, decode, draw.

`thermogram_process` (run by survey.tasks.process_thermogram) claims the row, checks the
original against its sha256, decodes it to a °C array and renders the preview and
thumbnail. Derived files are replaced whole (survey/storage.py: a rename on a folder, one
PUT on a bucket), so a retry never leaves half a file.
"""

import datetime
import hashlib
import io
import logging
from typing import Any

import numpy as np
from django.conf import settings
from django.db.models import F
from django.utils import timezone
from PIL import Image

from survey import thermal
from survey.models import Mark, Thermogram
from survey.services import heartbeat
from survey.services.arrays import thermogram_temperatures
from survey.services.audit import audit_record
from survey.services.loggers import capture_time_from_file
from survey.services.mark_stats import marks_recompute
from survey.storage import media_read, media_remove_partial, media_replace
from survey.thermal.drawing import encode_png

logger = logging.getLogger(__name__)


def stalled_after() -> datetime.timedelta:
    """A job whose heartbeat is older than this has lost its worker: it is shown as stalled
    and may be claimed again (THERMOGRAM_STALLED_AFTER_SECONDS)."""
    return datetime.timedelta(seconds=settings.THERMOGRAM_STALLED_AFTER_SECONDS)


LOST_TOO_OFTEN = (
    "Processing was interrupted several times (its worker stopped, for example when it ran "
    "out of memory); the original is kept. Try again from its settings page, or tell your "
    "administrator."
)


THUMBNAIL_SIZE = 320


# Previews are rebuilt from the array at will: zlib level 1 encodes about four times faster
# than the default 6 for files about a quarter larger, which matters for a day's import.
PNG_COMPRESS_LEVEL = 1


def _claim(thermogram_id: int) -> bool:
    """Take the job: queued -> processing, or a processing job whose worker went silent."""
    now = timezone.now()
    taken = {
        "heartbeat_at": now,
        "attempts": F("attempts") + 1,
        "waiting_for_broker": False,
    }
    claimed = Thermogram.objects.filter(pk=thermogram_id, status=Thermogram.Status.QUEUED).update(
        status=Thermogram.Status.PROCESSING, error="", **taken
    )
    if claimed:
        return True
    stale = Thermogram.objects.filter(
        pk=thermogram_id,
        status=Thermogram.Status.PROCESSING,
        heartbeat_at__lt=now - stalled_after(),
    )
    return bool(stale.update(**taken))


# A job claimed before its thermogram was deleted still finishes cleanly (all_objects), so a
# restored thermogram is never left "processing"; a deleted one is never claimed.
def _heartbeat(thermogram_id: int) -> None:
    Thermogram.all_objects.filter(pk=thermogram_id, status=Thermogram.Status.PROCESSING).update(
        heartbeat_at=timezone.now()
    )


def _finish(thermogram_id: int, status: str, **fields: Any) -> None:
    Thermogram.all_objects.filter(pk=thermogram_id, status=Thermogram.Status.PROCESSING).update(
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
        max_text_bytes=settings.THERMOGRAM_MAX_TEXT_BYTES,
    )


def _derived_path(thermogram: Thermogram, name: str) -> str:
    return f"derived/{thermogram.organization_id}/{thermogram.pk}/{name}"


def _remove_partial_files(thermogram: Thermogram) -> None:
    """A worker killed while writing leaves its temporary file; the next claim holder clears
    it (no one else writes here: the time limit ends a worker before its job counts stalled)."""
    media_remove_partial(_derived_path(thermogram, ""))


def automatic_span(thermogram: Thermogram, temperatures: np.ndarray) -> tuple[float, float]:
    """The span used when none is fixed: the 1st to 99th percentile (thermal.auto_span)
    widened to the apparent minimum and maximum of every mark (cached on the marks), so no
    marked hot or cold spot is clipped to the end colour, whatever the span rule (issue 14:
    the survey page's thumbnails follow the printed report's rule)."""
    low, high = thermal.auto_span(temperatures)
    if thermogram.pk:
        extremes = []
        for stats in Mark.objects.filter(thermogram=thermogram).values_list("stats", flat=True):
            extremes += [(stats or {}).get("min_c"), (stats or {}).get("max_c")]
        low, high = thermal.widen_span(low, high, [v for v in extremes if v is not None])
    return float(low), float(high)


def display_span(thermogram: Thermogram, temperatures: np.ndarray) -> tuple[float, float]:
    if thermogram.span_low_c is not None and thermogram.span_high_c is not None:
        return thermogram.span_low_c, thermogram.span_high_c
    return automatic_span(thermogram, temperatures)


def write_images(thermogram: Thermogram, temperatures: np.ndarray) -> None:
    low, high = display_span(thermogram, temperatures)
    picture = Image.fromarray(thermal.render(temperatures, thermogram.palette, low, high))
    thermogram.preview.name = media_replace(
        _derived_path(thermogram, "preview.png"),
        encode_png(picture, compress_level=PNG_COMPRESS_LEVEL),
    )
    # Box filtering is exact for shrinking and several times faster than Lanczos here.
    picture.thumbnail((THUMBNAIL_SIZE, THUMBNAIL_SIZE), Image.Resampling.BOX)
    thermogram.thumbnail.name = media_replace(
        _derived_path(thermogram, "thumbnail.png"),
        encode_png(picture, compress_level=PNG_COMPRESS_LEVEL),
    )


def thermogram_render_previews(thermogram_id: int) -> bool:
    """Draw a ready thermogram's preview and thumbnail again (palette, span or marks changed).

    Returns False when there is nothing to draw (not ready, or deleted meanwhile).
    """
    thermogram = Thermogram.objects.filter(pk=thermogram_id, status=Thermogram.Status.READY).first()
    if thermogram is None:
        return False
    write_images(thermogram, thermogram_temperatures(thermogram))
    Thermogram.objects.filter(pk=thermogram.pk).update(
        preview=thermogram.preview.name, thumbnail=thermogram.thumbnail.name
    )
    return True


def thermogram_process(thermogram_id: int, *, keep_alive: bool = False) -> str | None:
    """Decode, store the °C array and render images; returns the final status, or None when
    another worker holds the job or it is already done (safe to call again).

    With `keep_alive` (a real worker) a thread refreshes the heartbeat while this runs.
    """
    if not _claim(thermogram_id):
        return None
    thermogram = Thermogram.all_objects.select_related("organization").get(pk=thermogram_id)
    logger.info(
        "Processing thermogram %s",
        thermogram_id,
        extra={"organization_id": thermogram.organization_id, "thermogram_id": thermogram_id},
    )
    if thermogram.attempts > settings.TASK_MAX_ATTEMPTS:
        _finish(thermogram_id, Thermogram.Status.FAILED, error=LOST_TOO_OFTEN)
        return Thermogram.Status.FAILED
    with heartbeat.keep_alive(
        Thermogram, thermogram_id, Thermogram.Status.PROCESSING, enabled=keep_alive
    ):
        return _process(thermogram)


def _process(thermogram: Thermogram) -> str:
    thermogram_id = thermogram.pk
    _remove_partial_files(thermogram)
    try:
        # One read serves the check and the decoding (one GET when media are in a bucket).
        data = media_read(thermogram.original.name)
        if hashlib.sha256(data).hexdigest() != thermogram.original_sha256:
            _finish(
                thermogram_id,
                Thermogram.Status.DAMAGED,
                error="The stored original no longer matches its sha256; upload it again.",
            )
            return Thermogram.Status.DAMAGED
        temperatures = decode_original(data, thermogram.original_name, thermogram.decode_settings)
        _check_array(temperatures)
        tagged = (
            {"captured_at": at} if (at := capture_time_from_file(thermogram.survey, data)) else {}
        )
        _heartbeat(thermogram_id)
        buffer = io.BytesIO()
        np.save(buffer, temperatures, allow_pickle=False)
        array_bytes = buffer.getvalue()
        array_name = media_replace(_derived_path(thermogram, "temperatures.npy"), array_bytes)
        write_images(thermogram, temperatures)
        # Marks read the new numbers, never the statistics of an earlier decoding.
        marks_recompute(thermogram=thermogram, temperatures=temperatures)
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
        array_sha256=hashlib.sha256(array_bytes).hexdigest(),
        preview=thermogram.preview.name,
        thumbnail=thermogram.thumbnail.name,
        height=int(temperatures.shape[0]),
        width=int(temperatures.shape[1]),
        min_c=float(np.nanmin(temperatures)),
        max_c=float(np.nanmax(temperatures)),
        **tagged,
    )
    return Thermogram.Status.READY


def _check_array(temperatures: np.ndarray) -> None:
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
        and thermogram.heartbeat_at < timezone.now() - stalled_after()
    )


def thermogram_status_text(thermogram: Thermogram) -> str:
    """The status as the survey page shows it, saying when and why a job waits."""
    if thermogram_is_stalled(thermogram):
        return "Stalled; it will be queued again"
    if thermogram.status == Thermogram.Status.QUEUED:
        if thermogram.waiting_for_broker:
            return "Stored; waiting for the processing queue"
        if thermogram.attempts:
            return "Stalled, re-queued"
    return thermogram.get_status_display()


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
