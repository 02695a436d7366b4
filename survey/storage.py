"""Where files live: static files for WhiteNoise, and media on a folder or an S3 bucket.

Media always go through Django's storage API (`default_storage`), so the same code runs
on MEDIA_ROOT or on a bucket (MEDIA_STORAGE=s3, see settings.py). Derived files (°C array,
preview, thumbnail) are rewritten in place under fixed names: on a folder through a
temporary file and a rename, on a bucket by one PUT, which S3 makes visible whole or not at
all. Everything else is saved under a new name and never overwritten.
"""

import os
import tempfile
from pathlib import Path

from django.core.files.base import ContentFile
from django.core.files.storage import Storage, default_storage, storages
from whitenoise.storage import CompressedManifestStaticFilesStorage


class StaticStorage(CompressedManifestStaticFilesStorage):
    """Hashed, compressed static files; `import './x.js'` inside ES modules is rewritten
    to the hashed name as well, so a module never loads a stale neighbour from a cache."""

    support_js_module_import_aggregation = True


def media_is_local(storage: Storage | None = None) -> bool:
    """True when media are files on this host's disk (the storage has real paths)."""
    storage = storage or default_storage
    try:
        storage.path("")
    except NotImplementedError:
        return False
    return True


def _overwriting_storage() -> Storage:
    """The storage that may replace an existing name (STORAGES["derived"])."""
    return storages["derived"]


def media_replace(name: str, data: bytes) -> str:
    """Write `data` at exactly `name`, replacing what was there; nobody sees half a file."""
    if not media_is_local():
        return _overwriting_storage().save(name, ContentFile(data))
    target = Path(default_storage.path(name))
    target.parent.mkdir(parents=True, exist_ok=True)
    handle, temporary = tempfile.mkstemp(dir=target.parent, prefix=".tmp-", suffix=target.suffix)
    try:
        with os.fdopen(handle, "wb") as out:
            out.write(data)
        os.replace(temporary, target)
    except BaseException:
        Path(temporary).unlink(missing_ok=True)
        raise
    return name


def media_remove_partial(folder: str) -> None:
    """Remove temporary files a killed writer left in `folder` (a bucket never has any)."""
    if not media_is_local():
        return
    for leftover in Path(default_storage.path(folder)).glob(".tmp-*"):
        leftover.unlink(missing_ok=True)


def media_read(name: str) -> bytes:
    """The whole content of a stored file (FileNotFoundError when it is missing)."""
    with default_storage.open(name, "rb") as handle:
        return handle.read()


def media_check() -> None:
    """Raise when the media storage cannot be reached: the folder is not writable, or the
    bucket does not answer (one HEAD request)."""
    storage = default_storage
    if media_is_local(storage):
        root = Path(storage.path(""))
        root.mkdir(parents=True, exist_ok=True)
        if not os.access(root, os.W_OK):
            raise PermissionError(f"the media folder {root} is not writable")
        return
    storage.connection.meta.client.head_bucket(Bucket=storage.bucket_name)
