"""Private media, served only after an access check.

Files are never served as HTML: originals go out as attachments with their own image type
or application/octet-stream. With MEDIA_ACCEL_REDIRECT_PREFIX set, the web server sends the
bytes (X-Accel-Redirect) after Django has checked access.
"""

import mimetypes
from pathlib import Path

from django.conf import settings
from django.contrib.auth.decorators import login_required
from django.db.models.fields.files import FieldFile
from django.http import FileResponse, Http404, HttpRequest, HttpResponse
from django.utils.http import content_disposition_header
from django.views.decorators.http import require_GET

from survey.access import get_thermogram_for_user
from survey.services.audit import audit_record

SAFE_TYPES = {
    "image/png",
    "image/jpeg",
    "image/tiff",
    "text/csv",
    "text/tab-separated-values",
}


def _content_type(name: str) -> str:
    guessed, _ = mimetypes.guess_type(name)
    if guessed in SAFE_TYPES:
        # Text matrices are served as downloads only, never rendered by the browser.
        return "application/octet-stream" if guessed.startswith("text/") else guessed
    return "application/octet-stream"


def serve_file(
    file: FieldFile, *, download_name: str, attachment: bool, content_type: str | None = None
) -> HttpResponse:
    if not file:
        raise Http404("No such file")
    content_type = content_type or _content_type(download_name)
    disposition = content_disposition_header(attachment, download_name)
    prefix = settings.MEDIA_ACCEL_REDIRECT_PREFIX
    if prefix:
        response = HttpResponse(content_type=content_type)
        response["X-Accel-Redirect"] = prefix.rstrip("/") + "/" + file.name.lstrip("/")
    else:
        try:
            handle = file.open("rb")
        except FileNotFoundError:
            raise Http404("The file is missing from storage") from None
        response = FileResponse(handle, content_type=content_type)
    response["Content-Disposition"] = disposition
    response["X-Content-Type-Options"] = "nosniff"
    response["Cache-Control"] = "private, max-age=300"
    return response


@login_required
@require_GET
def thermogram_original(request: HttpRequest, pk: int) -> HttpResponse:
    thermogram = get_thermogram_for_user(request, pk)
    response = serve_file(
        thermogram.original, download_name=thermogram.original_name, attachment=True
    )
    audit_record(
        organization=thermogram.organization, actor=request.user, action="download", obj=thermogram
    )
    return response


@login_required
@require_GET
def thermogram_preview(request: HttpRequest, pk: int) -> HttpResponse:
    thermogram = get_thermogram_for_user(request, pk)
    name = f"{Path(thermogram.original_name).stem}-preview.png"
    return serve_file(
        thermogram.preview, download_name=name, attachment=False, content_type="image/png"
    )


@login_required
@require_GET
def thermogram_thumbnail(request: HttpRequest, pk: int) -> HttpResponse:
    thermogram = get_thermogram_for_user(request, pk)
    name = f"{Path(thermogram.original_name).stem}-thumbnail.png"
    return serve_file(
        thermogram.thumbnail, download_name=name, attachment=False, content_type="image/png"
    )


@login_required
@require_GET
def thermogram_photo(request: HttpRequest, pk: int) -> HttpResponse:
    thermogram = get_thermogram_for_user(request, pk)
    name = Path(thermogram.photo.name).name if thermogram.photo else "photo"
    return serve_file(thermogram.photo, download_name=name, attachment=False)


@login_required
@require_GET
def thermogram_array(request: HttpRequest, pk: int) -> HttpResponse:
    """The decoded °C array as .npy (float32), for analysis in a notebook."""
    thermogram = get_thermogram_for_user(request, pk)
    name = f"{Path(thermogram.original_name).stem}-celsius.npy"
    return serve_file(
        thermogram.array,
        download_name=name,
        attachment=True,
        content_type="application/octet-stream",
    )
