"""The only way a report's HTML can load anything: our media, our static files, our pictures.

WeasyPrint would otherwise follow any URL a template or a stored text puts in front of it
(http, file, data). Reports are rendered from data users typed, so every other URL is refused.
"""

import mimetypes
from pathlib import Path, PurePosixPath
from urllib.parse import unquote, urlsplit

from django.conf import settings
from django.contrib.staticfiles import finders
from django.core.exceptions import SuspiciousFileOperation
from django.core.files.storage import default_storage
from weasyprint.urls import URLFetcher, URLFetcherResponse

BASE_URL = "https://report.heatmark.invalid/"


class LocalOnlyFetcher(URLFetcher):
    """Serve `generated/<name>` from memory, `media/<path>` from the media storage and
    `static/<path>` from disk."""

    def __init__(self, generated: dict[str, tuple[bytes, str]] | None = None) -> None:
        super().__init__(timeout=1, allowed_protocols={"https"}, allow_redirects=False)
        self.generated = generated if generated is not None else {}

    def fetch(self, url: str, headers: dict | None = None) -> URLFetcherResponse:
        body, mime = self.resolve(url)
        return URLFetcherResponse(url, body=body, headers={"Content-Type": mime})

    def resolve(self, url: str) -> tuple[bytes, str]:
        if not url.startswith(BASE_URL):
            raise ValueError(f"reports load only their own files, not {url[:80]!r}")
        parts = urlsplit(url)
        relative = unquote(parts.path).lstrip("/")
        area, _, rest = relative.partition("/")
        if area == "generated" and rest in self.generated:
            return self.generated[rest]
        if area == "media":
            return _read_media(rest)
        if area == "static":
            found = finders.find(rest) if ".." not in Path(rest).parts else None
            if found:
                return _read_inside(Path(found).parent, Path(found).name)
            # Hashed names (DEBUG=0, ManifestStaticFilesStorage) exist only in STATIC_ROOT.
            return _read_inside(Path(settings.STATIC_ROOT), rest)
        raise ValueError(f"no such report file: {relative[:80]!r}")


def _read_media(relative: str) -> tuple[bytes, str]:
    """A stored media file through the storage API (a folder or a bucket alike)."""
    parts = PurePosixPath(relative).parts
    if not relative or relative.startswith("/") or ".." in parts or "\\" in relative:
        raise ValueError(f"no such report file: {relative[:80]!r}")
    try:
        with default_storage.open(relative, "rb") as handle:
            body = handle.read()
    except (FileNotFoundError, IsADirectoryError, PermissionError, SuspiciousFileOperation):
        raise ValueError(f"no such report file: {relative[:80]!r}") from None
    return body, mimetypes.guess_type(relative)[0] or "application/octet-stream"


def _read_inside(root: Path, relative: str) -> tuple[bytes, str]:
    root = root.resolve()
    path = (root / relative).resolve()
    if not relative or not path.is_relative_to(root) or not path.is_file():
        raise ValueError(f"no such report file: {relative[:80]!r}")
    mime = mimetypes.guess_type(path.name)[0] or "application/octet-stream"
    return path.read_bytes(), mime
