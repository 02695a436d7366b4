"""Roof surveys: the roof plan, thermograms placed on it, wet areas in total, and the core
or moisture-meter checks that confirm a finding."""

import datetime
import hashlib
import io
import warnings
from pathlib import Path

from django.contrib.auth.models import AbstractBaseUser
from django.core.exceptions import ValidationError
from django.core.files.base import ContentFile
from django.core.files.uploadedfile import UploadedFile
from django.db import transaction
from PIL import Image

from survey.models import Finding, MoistureCheck, Survey, Thermogram
from survey.services.audit import audit_record
from survey.services.ingest import _strict_pictures
from survey.thermal.decision import root_sum_square

# A plan is a drawing or an aerial photo: 20 MB and 40 megapixels hold any sensible scan,
# and bound what Pillow decodes (40 MP of RGB is 120 MB).
ROOF_PLAN_MAX_BYTES = 20 * 1024 * 1024
ROOF_PLAN_MAX_PIXELS = 40_000_000
PLAN_FORMATS = {"PNG": "png", "JPEG": "jpg"}


def _plan_picture(name: str, data: bytes) -> tuple[str, int, int]:
    """The extension, width and height of a plan; ValidationError on anything else."""
    if not data:
        raise ValidationError(f"{name} is empty.")
    if len(data) > ROOF_PLAN_MAX_BYTES:
        raise ValidationError(
            f"{name} is {len(data) / 1024 / 1024:.1f} MB; a roof plan may be at most "
            f"{ROOF_PLAN_MAX_BYTES // 1024 // 1024} MB."
        )
    # Strict: WeasyPrint, once imported, lets Pillow accept pictures cut short.
    with warnings.catch_warnings(), _strict_pictures():
        warnings.simplefilter("error", Image.DecompressionBombWarning)
        try:
            with Image.open(io.BytesIO(data)) as image:
                kind = image.format
                width, height = image.size
                if width * height > ROOF_PLAN_MAX_PIXELS:
                    raise ValidationError(
                        f"{name} is {width}×{height} pixels; a roof plan may have at most "
                        f"{ROOF_PLAN_MAX_PIXELS // 1_000_000} million pixels."
                    )
                image.load()  # a whole picture, not one cut short
        except ValidationError:
            raise
        except Exception:  # noqa: BLE001 - Pillow raises many kinds for damaged files
            raise ValidationError(
                f"{name} could not be read as a PNG or JPEG picture (damaged, cut short or "
                "another format)."
            ) from None
    if kind not in PLAN_FORMATS:
        raise ValidationError(f"{name} is a {kind} picture; give the plan as PNG or JPEG.")
    return PLAN_FORMATS[kind], width, height


@transaction.atomic
def roof_plan_upload(
    *, survey: Survey, uploaded_file: UploadedFile, user: AbstractBaseUser | None
) -> Survey:
    """Store a roof plan for the survey. A new plan is a new file: the one it replaces is
    left untouched in storage, and the thermograms keep their places (in percent)."""
    if survey.kind != Survey.Kind.ROOF:
        raise ValidationError("Only a roof survey has a roof plan.")
    name = Path(uploaded_file.name or "plan").name[:255]
    uploaded_file.seek(0)
    data = uploaded_file.read()
    extension, width, height = _plan_picture(name, data)
    digest = hashlib.sha256(data).hexdigest()
    survey.roof_plan.save(f"{digest[:16]}.{extension}", ContentFile(data), save=False)
    survey.roof_plan_name = name
    survey.roof_plan_sha256 = digest
    survey.roof_plan_width = width
    survey.roof_plan_height = height
    survey.full_clean()
    survey.save()
    audit_record(
        organization=survey.organization,
        actor=user,
        action="update",
        obj=survey,
        detail={"roof_plan": name, "sha256": digest},
    )
    return survey


@transaction.atomic
def thermogram_place_on_plan(
    *,
    thermogram: Thermogram,
    x_pct: float | None,
    y_pct: float | None,
    user: AbstractBaseUser | None,
) -> Thermogram:
    """Place a thermogram on its survey's roof plan (percent of the plan's width and
    height from the top-left corner), or take it off with both None."""
    if (x_pct is None) != (y_pct is None):
        raise ValidationError("Give both positions on the plan, or clear both.")
    if x_pct is not None and thermogram.survey.roof_plan == "":
        raise ValidationError("Upload the roof plan before placing thermograms on it.")
    thermogram.plan_x_pct = x_pct
    thermogram.plan_y_pct = y_pct
    thermogram.full_clean()
    thermogram.save(update_fields=["plan_x_pct", "plan_y_pct"])
    audit_record(
        organization=thermogram.organization,
        actor=user,
        action="update",
        obj=thermogram,
        detail={"fields": ["plan_x_pct", "plan_y_pct"]},
    )
    return thermogram


@transaction.atomic
def moisture_check_add(
    *,
    finding: Finding,
    user: AbstractBaseUser | None,
    method: str,
    checked_on: datetime.date,
    result: str,
    reading: str = "",
    note: str = "",
) -> MoistureCheck:
    """Record a core or moisture-meter check against a roof finding."""
    if finding.survey.kind != Survey.Kind.ROOF:
        raise ValidationError("Core and moisture-meter checks belong to roof findings.")
    check = MoistureCheck(
        finding=finding,
        method=method,
        checked_on=checked_on,
        result=result,
        reading=reading,
        note=note,
        created_by=user,
    )
    check.full_clean()
    check.save()
    audit_record(
        organization=finding.organization,
        actor=user,
        action="create",
        obj=check,
        detail={"finding": finding.pk},
    )
    return check


def wet_area_total(findings: list[Finding]) -> dict:
    """The wet areas of roof findings, one row each, and their total with a combined ±.

    Each finding's ± comes from its own edge pixels and viewing geometry; they are taken as
    independent and combined as the root of the sum of squares (JCGM 100, 5.1.2 with unit
    sensitivity coefficients).
    """
    rows = []
    for finding in findings:
        values = (finding.suggestion or {}).get("values") or {}
        area = values.get("wet_area_m2")
        if area is None:
            continue
        rows.append(
            {"finding": finding, "area_m2": area, "u_m2": values.get("wet_area_u_m2") or 0.0}
        )
    total = sum(row["area_m2"] for row in rows)
    total_u = float(root_sum_square([row["u_m2"] for row in rows])) if rows else 0.0
    return {"rows": rows, "total_m2": total, "total_u_m2": total_u}
