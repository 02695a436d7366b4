"""Sending a stored file as a response, once a view has checked access to it.

Files are never served as HTML: originals go out as attachments with their own image type
or application/octet-stream. With MEDIA_ACCEL_REDIRECT_PREFIX set, the web server sends the
bytes (X-Accel-Redirect) after Django has checked access. Used by survey and report pages.
"""

import mimetypes

from django.conf import settings
from django.db.models.fields.files import FieldFile
from django.http import FileResponse, Http404, HttpResponse
from django.utils.http import content_disposition_header

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
