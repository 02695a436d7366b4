"""What a report says about the firm and its people: the letterhead and its logo, the level
times of the plain-language summary, each member's qualification record and signature.

Logos and signatures are small pictures printed in every report: an upload is checked with
Pillow (PNG or JPEG only, size and pixel limits read from the header before decoding),
decoded once and stored again as a PNG of at most `STORED_MAX_SIDE_PX`, so no camera-size
file or foreign metadata ends up in a PDF.
"""

import datetime
import hashlib
import io
import warnings
from typing import Any

from django.contrib.auth.models import AbstractBaseUser
from django.core.exceptions import ValidationError
from django.core.files.base import ContentFile
from django.db import transaction
from PIL import Image, ImageOps

from survey.models import Member, Organization
from survey.services.audit import audit_record

PICTURE_MAX_BYTES = 2 * 1024 * 1024
PICTURE_MAX_PIXELS = 16_000_000
STORED_MAX_SIDE_PX = 1200
PICTURE_FORMATS = {"PNG", "JPEG", "MPO"}  # MPO: a JPEG with a second picture (phones)

LETTERHEAD_FIELDS = (
    "name",
    "address",
    "phone",
    "email",
    "website",
    "reinspection_interval_months",
    "level_1_time",
    "level_2_time",
    "level_3_time",
    "level_4_time",
)
QUALIFICATION_FIELDS = (
    "qualification_scheme",
    "qualification_level",
    "certificate_number",
    "qualification_expires",
)


def picture_check(data: bytes, *, what: str) -> bytes:
    """The upload as a PNG of at most STORED_MAX_SIDE_PX a side, or ValidationError saying
    what is wrong with it in words a person understands."""
    if not data:
        raise ValidationError(f"The {what} file is empty.")
    if len(data) > PICTURE_MAX_BYTES:
        raise ValidationError(
            f"The {what} is {len(data) / 1048576:.1f} MB; the limit is "
            f"{PICTURE_MAX_BYTES / 1048576:.1f} MB. Save it smaller and upload it again."
        )
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("error", Image.DecompressionBombWarning)
            image = Image.open(io.BytesIO(data))
            if image.format not in PICTURE_FORMATS:
                raise ValidationError(f"The {what} must be a PNG or JPEG picture.")
            if image.width * image.height > PICTURE_MAX_PIXELS:
                raise ValidationError(
                    f"The {what} is {image.width} × {image.height} pixels; at most "
                    f"{PICTURE_MAX_PIXELS // 1_000_000} megapixels are accepted."
                )
            image.load()
            image = ImageOps.exif_transpose(image)
    except ValidationError:
        raise
    except Exception:  # noqa: BLE001 - Pillow raises many kinds for a damaged file
        raise ValidationError(
            f"The {what} could not be read as a PNG or JPEG picture; is the file damaged?"
        ) from None
    image = (
        image.convert("RGBA")
        if "A" in image.getbands() or "transparency" in image.info
        else image.convert("RGB")
    )
    image.thumbnail((STORED_MAX_SIDE_PX, STORED_MAX_SIDE_PX), Image.Resampling.LANCZOS)
    buffer = io.BytesIO()
    image.save(buffer, "PNG", optimize=True)
    return buffer.getvalue()


def _checked(data: bytes | None, *, what: str, field: str) -> bytes | None:
    if data is None:
        return None
    try:
        return picture_check(data, what=what)
    except ValidationError as error:
        raise ValidationError({field: error.messages}) from None


def _replace_picture(field, data: bytes | None, *, prefix: str, remove: bool) -> bool:
    """Store a new picture in `field` (or clear it with `remove`); the old file is deleted
    once the change is committed (an issued PDF holds its own copy). True when it changed."""
    old = field.name or ""
    if data is not None:
        field.save(
            f"{prefix}-{hashlib.sha256(data).hexdigest()[:16]}.png", ContentFile(data), save=False
        )
    elif remove and old:
        field.name = ""
    else:
        return False
    if old and old != field.name:
        storage = field.storage
        transaction.on_commit(lambda: storage.delete(old))
    return True


def _update_with_picture(
    row, fields: dict, allowed, picture_field: str, data: bytes | None, *, remove: bool
) -> list[str]:
    """Set `fields` (only names in `allowed`) and replace or drop the picture in
    `picture_field` (its bytes checked first); saves the row and returns what changed."""
    unknown = set(fields) - set(allowed)
    if unknown:
        raise TypeError(f"unknown fields for {type(row).__name__}: {sorted(unknown)}")
    picture = _checked(data, what=picture_field, field=picture_field)
    changed = sorted(name for name, value in fields.items() if getattr(row, name) != value)
    for name, value in fields.items():
        setattr(row, name, value)
    row.full_clean()
    if _replace_picture(getattr(row, picture_field), picture, prefix=picture_field, remove=remove):
        changed.append(picture_field)
    row.save()
    return changed


@transaction.atomic
def organization_update_letterhead(
    *,
    organization: Organization,
    user: AbstractBaseUser | None,
    logo: bytes | None = None,
    remove_logo: bool = False,
    **fields: Any,
) -> Organization:
    """Change the letterhead, the default re-inspection interval and the level times;
    `logo` is the uploaded file's bytes (checked here), `remove_logo` drops the logo."""
    changed = _update_with_picture(
        organization, fields, LETTERHEAD_FIELDS, "logo", logo, remove=remove_logo
    )
    if changed:
        audit_record(
            organization=organization,
            actor=user,
            action="organization_letterhead",
            obj=organization,
            detail={"fields": changed},
        )
    return organization


@transaction.atomic
def member_update_qualification(
    *,
    member: Member,
    actor: AbstractBaseUser | None,
    signature: bytes | None = None,
    remove_signature: bool = False,
    **fields: Any,
) -> Member:
    """Change a member's qualification record (scheme, level, certificate number, expiry)
    and the signature picture printed in the sign-off of the reports they issue."""
    changed = _update_with_picture(
        member, fields, QUALIFICATION_FIELDS, "signature", signature, remove=remove_signature
    )
    if changed:
        audit_record(
            organization=member.organization,
            actor=actor,
            action="member.qualification",
            obj=member,
            detail={"fields": changed},
        )
    return member


def qualification_warnings(members: list[Member | None], day: datetime.date) -> list[str]:
    """Sentences for the issue page: each person whose qualification has expired by `day`."""
    warnings_, seen = [], set()
    for member in members:
        if member is None or member.pk in seen:
            continue
        seen.add(member.pk)
        if member.qualification_expired_on(day):
            warnings_.append(
                f"The qualification of {member.display_name} ({member.qualification_text}) "
                f"expired on {member.qualification_expires:%-d %B %Y}."
            )
    return warnings_
