"""Mark templates: the marks of one thermogram, saved under a name and placed on thermograms
of identical equipment.

A template keeps its marks and a copy of its source's °C array (through Django's storage
API), so that automatic alignment (phase correlation, survey/thermal/registration.py)
still works after the source thermogram is gone. Each target is aligned either
automatically or by two or three matching points the inspector clicks; each template mark
is carried across by the alignment, and the marks that land outside the target are
reported, not saved. The marks added are ordinary marks, with their readings.
"""

from __future__ import annotations

import io
from dataclasses import dataclass, field

import numpy as np
from django.contrib.auth.models import AbstractBaseUser
from django.core.exceptions import ValidationError
from django.core.files.base import ContentFile
from django.db import transaction

from survey.models import Mark, MarkTemplate, Thermogram
from survey.services.arrays import ThermogramNotReady, thermogram_temperatures
from survey.services.audit import audit_record
from survey.services.marks import mark_add, mark_update
from survey.thermal import registration

# Below this phase-correlation peak the thermograms are not taken to show the same
# equipment; the peak is 0.7–0.95 for identical equipment moved and 0.1–0.2 for unrelated
# thermograms on the benchmark scenes (docs/references.md § Anomaly proposals).
MIN_PEAK = 0.3
MAX_ROTATION_DEG = 10.0
METHODS = ("register", "points")


def _ready_array(thermogram: Thermogram) -> np.ndarray:
    if not thermogram.is_ready:
        raise ValidationError(
            f"Thermogram {thermogram} is not ready (status: {thermogram.get_status_display()})."
        )
    try:
        return thermogram_temperatures(thermogram)
    except ThermogramNotReady as error:
        raise ValidationError(str(error)) from None


def _template_mark(mark: Mark) -> dict:
    reference = None
    if mark.reference_kind == Mark.ReferenceKind.AMBIENT:
        reference = "ambient"
    elif mark.reference_kind == Mark.ReferenceKind.MARK and mark.reference_mark is not None:
        reference = mark.reference_mark.label
    return {
        "label": mark.label,
        "kind": mark.kind,
        "points": mark.points,
        "single_pixel": mark.single_pixel,
        "emissivity": mark.emissivity,
        "reflected_c": mark.reflected_c,
        "note": mark.note,
        "reference": reference,
    }


@transaction.atomic
def mark_template_create(
    *, thermogram: Thermogram, name: str, user: AbstractBaseUser | None
) -> MarkTemplate:
    """Save the thermogram's marks as a template named `name`."""
    array = _ready_array(thermogram)
    marks = sorted(
        thermogram.marks.select_related("reference_mark"), key=lambda m: (len(m.label), m.label)
    )
    if not marks:
        raise ValidationError("This thermogram has no marks to save as a template.")
    name = (name or "").strip()
    if MarkTemplate.objects.filter(organization=thermogram.organization, name=name).exists():
        raise ValidationError({"name": f"There is already a template named {name!r}."})
    template = MarkTemplate(
        organization=thermogram.organization,
        name=name,
        source_thermogram=thermogram,
        source_title=str(thermogram)[:255],
        width=thermogram.width,
        height=thermogram.height,
        marks=[_template_mark(mark) for mark in marks],
        created_by=user,
    )
    buffer = io.BytesIO()
    np.save(buffer, np.asarray(array, dtype=np.float32), allow_pickle=False)
    template.reference_array.save(
        f"template-{thermogram.pk}.npy", ContentFile(buffer.getvalue()), save=False
    )
    try:
        template.full_clean()
        template.save()
    except Exception:
        template.reference_array.delete(save=False)
        raise
    audit_record(
        organization=template.organization,
        actor=user,
        action="template_create",
        obj=template,
        detail={"name": name, "thermogram": thermogram.pk, "marks": len(marks)},
    )
    return template


@transaction.atomic
def mark_template_delete(*, template: MarkTemplate, user: AbstractBaseUser | None) -> None:
    detail = {"name": template.name, "id": template.pk}
    name = template.reference_array.name
    storage = template.reference_array.storage
    template.delete()
    transaction.on_commit(lambda: storage.delete(name) if name else None)
    audit_record(
        organization=template.organization,
        actor=user,
        action="template_delete",
        object_type="MarkTemplate",
        detail=detail,
    )


def template_array(template: MarkTemplate) -> np.ndarray:
    """The template's copy of its source's °C array."""
    with template.reference_array.open("rb") as handle:
        return np.load(io.BytesIO(handle.read()), allow_pickle=False)


def template_picture_png(template: MarkTemplate) -> bytes:
    """The template's thermogram drawn with its source's palette, for clicking points."""
    from PIL import Image

    from survey import thermal
    from survey.thermal.drawing import encode_png

    array = template_array(template)
    source = template.source_thermogram
    palette = source.palette if source is not None else "black-red-yellow"
    low, high = thermal.auto_span(array)
    picture = Image.fromarray(thermal.render(array, palette, float(low), float(high)))
    return encode_png(picture, compress_level=1)


# --- alignment -------------------------------------------------------------------------------


def template_registration(
    template: MarkTemplate, thermogram: Thermogram
) -> registration.Registration:
    """Automatic alignment of the template's thermogram onto `thermogram`."""
    target = _ready_array(thermogram)
    if (thermogram.width, thermogram.height) != (template.width, template.height):
        raise ValidationError(
            f"The thermogram is {thermogram.width}×{thermogram.height} pixels and the "
            f"template {template.width}×{template.height}: align it by points instead."
        )
    try:
        return registration.register(
            template_array(template), target, max_rotation_deg=MAX_ROTATION_DEG
        )
    except ValueError as error:
        raise ValidationError(str(error)) from None


def transform_from_pairs(pairs) -> registration.Transform:
    """[[template x, y], [thermogram x, y]] × 2 (similarity) or 3 (affine) → a transform."""
    if not isinstance(pairs, list | tuple) or not 2 <= len(pairs) <= 3:
        raise ValidationError("Give two or three pairs of matching points.")
    try:
        template_points = [list(map(float, pair[0])) for pair in pairs]
        image_points = [list(map(float, pair[1])) for pair in pairs]
        kind = "similarity" if len(pairs) == 2 else "affine"
        return registration.transform_from_points(template_points, image_points, kind=kind)
    except (TypeError, ValueError, IndexError) as error:
        raise ValidationError(f"The points do not give an alignment: {error}") from None


@dataclass
class TemplateResult:
    """What applying a template to one thermogram did."""

    thermogram: Thermogram
    added: list[Mark] = field(default_factory=list)
    outside: list[str] = field(default_factory=list)
    refused: list[tuple[str, str]] = field(default_factory=list)
    peak: float | None = None
    angle_deg: float | None = None
    shift: tuple[float, float] | None = None
    needs_points: str = ""

    @property
    def summary(self) -> str:
        if self.needs_points:
            return self.needs_points
        parts = [f"{len(self.added)} mark{'s' if len(self.added) != 1 else ''} placed"]
        if self.peak is not None:
            parts.append(
                f"aligned automatically (match {self.peak:.2f}, turned {self.angle_deg:.1f}°, "
                f"moved {self.shift[0]:.1f}, {self.shift[1]:.1f} px)"
            )
        if self.outside:
            parts.append(f"outside the image, not placed: {', '.join(self.outside)}")
        for label, reason in self.refused:
            parts.append(f"{label} not placed: {reason}")
        return "; ".join(parts)


def _inside(points: list, width: int, height: int) -> bool:
    tolerance = 1e-6
    return all(
        -tolerance <= x <= width - 1 + tolerance and -tolerance <= y <= height - 1 + tolerance
        for x, y in points
    )


def _clamped(points: list, width: int, height: int) -> list[list[float]]:
    return [[min(max(x, 0.0), width - 1.0), min(max(y, 0.0), height - 1.0)] for x, y in points]


@transaction.atomic
def mark_template_apply(
    *,
    template: MarkTemplate,
    thermogram: Thermogram,
    user: AbstractBaseUser | None,
    method: str = "register",
    pairs=None,
    min_peak: float = MIN_PEAK,
) -> TemplateResult:
    """Place the template's marks on a thermogram, aligned automatically or by points.

    With method "register" a weak match (peak below `min_peak`) places nothing and says to
    align by points. Marks that land outside the image are listed in `outside`.
    """
    if template.organization_id != thermogram.organization_id:
        raise ValidationError("Choose one of your organization's thermograms.")
    if method not in METHODS:
        raise ValidationError({"method": "Choose automatic alignment or matching points."})
    result = TemplateResult(thermogram=thermogram)
    if method == "register":
        found = template_registration(template, thermogram)
        result.peak, result.angle_deg = float(found.peak), float(found.angle_deg)
        result.shift = (float(found.shift_x), float(found.shift_y))
        if found.peak < min_peak:
            result.needs_points = (
                f"The automatic alignment is not sure of this one (match {found.peak:.2f}, "
                f"below {min_peak:.2f}): align it by points."
            )
            return result
        transform = found.transform
    else:
        _ready_array(thermogram)
        transform = transform_from_pairs(pairs)
    labels: dict[str, Mark] = {}
    for item in template.marks:
        kind, points = registration.transform_mark(item["kind"], item["points"], transform)
        if not _inside(points, thermogram.width, thermogram.height):
            result.outside.append(item["label"])
            continue
        try:
            mark = mark_add(
                thermogram=thermogram,
                kind=kind,
                points=_clamped(points, thermogram.width, thermogram.height),
                user=user,
                single_pixel=item.get("single_pixel", False),
                emissivity=item.get("emissivity"),
                reflected_c=item.get("reflected_c"),
                note=item.get("note") or "",
                reference_kind=Mark.ReferenceKind.AMBIENT
                if item.get("reference") == "ambient"
                else Mark.ReferenceKind.NONE,
            )
        except ValidationError as error:
            result.refused.append((item["label"], " ".join(error.messages)))
            continue
        labels[item["label"]] = mark
        result.added.append(mark)
    for item in template.marks:
        other = labels.get(item.get("reference") or "")
        mark = labels.get(item["label"])
        if mark is not None and other is not None and other.pk != mark.pk:
            mark_update(
                mark=mark, user=user, reference_kind=Mark.ReferenceKind.MARK, reference_mark=other
            )
    audit_record(
        organization=thermogram.organization,
        actor=user,
        action="template_apply",
        obj=thermogram,
        detail={
            "template": template.pk,
            "method": method,
            "added": [m.label for m in result.added],
            "outside": result.outside,
            "peak": result.peak,
        },
    )
    return result
