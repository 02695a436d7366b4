"""Build rows for tests without going through the upload pipeline.

`make_thermogram` stores a real .npy original and its derived array exactly as the ingest
service would leave them, so tests of marks, findings and reports do not depend on it.
"""

import hashlib
import io

import numpy as np
from django.core.files.base import ContentFile

from survey.models import Survey, Thermogram


def synthetic_field(width: int = 160, height: int = 120, base_c: float = 20.0) -> np.ndarray:
    """A smooth invented field with a warm spot, float32 °C."""
    y, x = np.mgrid[0:height, 0:width].astype(np.float32)
    field = base_c + 0.02 * x + 0.01 * y
    spot = 15.0 * np.exp(-(((x - width * 0.7) ** 2) + (y - height * 0.4) ** 2) / (2 * 6.0**2))
    return (field + spot).astype(np.float32)


def npy_bytes(array: np.ndarray, variant: int = 0) -> bytes:
    """`array` as .npy; a `variant` above 0 pads the header with 64 × variant more spaces,
    which numpy allows: other bytes (another sha256), the same array when read."""
    buffer = io.BytesIO()
    np.save(buffer, array, allow_pickle=False)
    data = buffer.getvalue()
    if variant:
        length = int.from_bytes(data[8:10], "little")  # format 1.0: a 2-byte header length
        header = data[10 : 10 + length].rstrip(b"\n") + b" " * (64 * variant) + b"\n"
        data = data[:8] + len(header).to_bytes(2, "little") + header + data[10 + length :]
    return data


def make_thermogram(survey: Survey, array: np.ndarray | None = None, **fields) -> Thermogram:
    """A ready thermogram. The same array twice in one survey is stored as two different
    files of that array (a survey holds each original once, like the upload does)."""
    array = synthetic_field() if array is None else np.asarray(array, dtype=np.float32)
    variant, data = 0, npy_bytes(array)
    while survey.thermograms.filter(original_sha256=hashlib.sha256(data).hexdigest()).exists():
        variant += 1
        data = npy_bytes(array, variant)
    sequence = fields.pop("sequence", survey.thermograms.count() + 1)
    thermogram = Thermogram(
        organization=survey.organization,
        survey=survey,
        sequence=sequence,
        original_name=fields.pop("original_name", f"IMG_{sequence:04d}.npy"),
        original_sha256=hashlib.sha256(data).hexdigest(),
        original_size=len(data),
        file_format="npy",
        status=Thermogram.Status.READY,
        width=array.shape[1],
        height=array.shape[0],
        min_c=float(np.nanmin(array)),
        max_c=float(np.nanmax(array)),
        **fields,
    )
    thermogram.original.save(thermogram.original_name, ContentFile(data), save=False)
    thermogram.array.save(f"t{sequence}.npy", ContentFile(data), save=False)
    thermogram.full_clean()
    thermogram.save()
    return thermogram
