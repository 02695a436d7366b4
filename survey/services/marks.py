"""Add, change and delete marks on a thermogram, and align its paired photo.

Every write validates the mark against the thermogram's temperature array before it is
saved, caches the apparent statistics on the mark (`Mark.stats`) and leaves an audit line.
"""

import math
from types import SimpleNamespace
from typing import Any

import numpy as np
from django.contrib.auth.models import AbstractBaseUser
from django.core.exceptions import ValidationError
from django.db import transaction
from django.db.models import Q

from survey.hooks import marks_changed
from survey.models import Mark, Thermogram, mark_label
from survey.services.arrays import ThermogramNotReady, thermogram_temperatures
from survey.services.audit import audit_record
from survey.services.locks import thermogram_check_unlocked
from survey.services.mark_stats import mark_stats
from survey.thermal.alignment import affine_from_pairs

MAX_MARKS_PER_THERMOGRAM = 200
MAX_POLYGON_VERTICES = 500
# Least and most points each kind is drawn with.
POINT_COUNTS = {
    Mark.Kind.POINT: (1, 1),
    Mark.Kind.RECTANGLE: (2, 2),
    Mark.Kind.ELLIPSE: (2, 2),
    Mark.Kind.LINE: (2, 2),
    Mark.Kind.POLYGON: (3, MAX_POLYGON_VERTICES),
}
EDITABLE_FIELDS = {
    "name",
    "rise_method",
    "points",
    "emissivity",
    "reflected_c",
    "note",
    "reference_kind",
    "reference_mark",
    "single_pixel",
    "load_current_a",
}


def _clean_kind(kind: Any) -> str:
    if kind not in Mark.Kind.values:
        raise ValidationError(
            {"kind": f"Unknown mark kind {kind!r}; use one of {', '.join(Mark.Kind.values)}."}
        )
    return kind


def _clean_points(thermogram: Thermogram, kind: str, points: Any) -> list[list[float]]:
    """Points as [[x, y], …] floats inside the image, with the right count for the kind."""
    least, most = POINT_COUNTS[kind]
    if not isinstance(points, (list, tuple)):
        raise ValidationError({"points": "Points must be a list of [x, y] pairs."})
    if not least <= len(points) <= most:
        wanted = str(least) if least == most else f"{least} to {most}"
        raise ValidationError(
            {"points": f"A {kind} needs {wanted} points; {len(points)} were given."}
        )
    cleaned = []
    for number, point in enumerate(points, start=1):
        if (
            not isinstance(point, (list, tuple))
            or len(point) != 2
            or not all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in point)
        ):
            raise ValidationError({"points": f"Point {number} is not an [x, y] pair of numbers."})
        x, y = float(point[0]), float(point[1])
        if not (math.isfinite(x) and math.isfinite(y)):
            raise ValidationError({"points": f"Point {number} is not a finite number."})
        if not (0 <= x <= thermogram.width - 1 and 0 <= y <= thermogram.height - 1):
            raise ValidationError(
                {
                    "points": f"Point {number} ({x:g}, {y:g}) is outside the image "
                    f"(0–{thermogram.width - 1} × 0–{thermogram.height - 1} pixels)."
                }
            )
        cleaned.append([round(x, 2), round(y, 2)])
    if kind != Mark.Kind.POINT and len({tuple(p) for p in cleaned}) < least:
        raise ValidationError({"points": f"The points of a {kind} must not coincide."})
    return cleaned


def mark_points_check(*, kind: Any, points: Any, width: int, height: int) -> list[list[float]]:
    """The cleaned points of a mark of `kind` on a width × height image (ValidationError
    saying why not); for marks that arrive before their thermogram is decoded."""
    return _clean_points(SimpleNamespace(width=width, height=height), _clean_kind(kind), points)


def _ready_temperatures(thermogram: Thermogram) -> np.ndarray:
    if not thermogram.is_ready or not thermogram.width or not thermogram.height:
        raise ValidationError(
            f"Thermogram {thermogram} is not ready for marking "
            f"(status: {thermogram.get_status_display()})."
        )
    try:
        return thermogram_temperatures(thermogram)
    except ThermogramNotReady as error:
        raise ValidationError(str(error)) from None


def _clean_reference(mark: Mark) -> None:
    if mark.reference_kind == Mark.ReferenceKind.MARK:
        other = mark.reference_mark
        if other is None:
            raise ValidationError({"reference_mark": "Choose the mark to compare against."})
        if other.thermogram_id != mark.thermogram_id:
            raise ValidationError(
                {"reference_mark": "The reference must be a mark on the same thermogram."}
            )
        if mark.pk is not None and other.pk == mark.pk:
            raise ValidationError({"reference_mark": "A mark cannot be its own reference."})
    else:
        mark.reference_mark = None


def _next_label(thermogram: Thermogram) -> str:
    taken = set(thermogram.marks.values_list("label", flat=True))
    index = 0
    while mark_label(index) in taken:
        index += 1
    return mark_label(index)


def _lock(thermogram: Thermogram) -> Thermogram:
    """Serialise mark writes of one thermogram (labels and the mark limit); refuse when an
    issued report shows the thermogram."""
    thermogram = Thermogram.objects.select_for_update().get(pk=thermogram.pk)
    thermogram_check_unlocked(thermogram)
    return thermogram


def _marks_changed(thermogram: Thermogram) -> None:
    """The automatic span covers the marks' extremes and follows them: redraw the previews."""
    if thermogram.span_low_c is None:
        marks_changed(thermogram.pk)


@transaction.atomic
def mark_add(
    *,
    thermogram: Thermogram,
    kind: str,
    points: list,
    user: AbstractBaseUser | None,
    emissivity: float | None = None,
    reflected_c: float | None = None,
    note: str = "",
    reference_kind: str = Mark.ReferenceKind.NONE,
    reference_mark: Mark | None = None,
    single_pixel: bool = False,
    name: str = "",
    rise_method: str = Mark.RiseMethod.HOTTEST_TO_HOTTEST,
    load_current_a: float | None = None,
) -> Mark:
    """Add a mark labelled with the next free letter, with its statistics cached."""
    thermogram = _lock(thermogram)
    kind = _clean_kind(kind)
    if thermogram.marks.count() >= MAX_MARKS_PER_THERMOGRAM:
        raise ValidationError(
            f"A thermogram holds at most {MAX_MARKS_PER_THERMOGRAM} marks; "
            "delete some before adding more."
        )
    temperatures = _ready_temperatures(thermogram)
    points = _clean_points(thermogram, kind, points)
    mark = Mark(
        thermogram=thermogram,
        label=_next_label(thermogram),
        kind=kind,
        points=points,
        single_pixel=bool(single_pixel),
        emissivity=emissivity,
        reflected_c=reflected_c,
        note=note or "",
        reference_kind=reference_kind,
        reference_mark=reference_mark,
        name=(name or "").strip(),
        rise_method=rise_method,
        load_current_a=load_current_a,
    )
    mark.full_clean()
    _clean_reference(mark)
    mark.stats = mark_stats(temperatures, kind, points, mark.single_pixel)
    mark.save()
    audit_record(
        organization=thermogram.organization,
        actor=user,
        action="mark_add",
        obj=mark,
        detail={"thermogram": thermogram.pk, "label": mark.label, "kind": kind},
    )
    _marks_changed(thermogram)
    return mark


class MarkChanged(Exception):
    """The mark was changed by someone else since the version the change was made to."""


def _locked_mark(mark: Mark) -> tuple[Thermogram, Mark]:
    """The thermogram locked and the mark read again under the lock; Mark.DoesNotExist
    when it was deleted meanwhile."""
    thermogram = _lock(mark.thermogram)
    current = Mark.objects.select_related("thermogram").filter(pk=mark.pk).first()
    if current is None:
        raise Mark.DoesNotExist(f"Mark {mark.label} was deleted meanwhile.")
    return thermogram, current


@transaction.atomic
def mark_update(
    *, mark: Mark, user: AbstractBaseUser | None, version: int | None = None, **changes: Any
) -> Mark:
    """Change a mark's points, emissivity, reflected temperature, note or reference.

    With `version` (the one the change was made to) a mark changed since is refused with
    MarkChanged; each change counts one version up.
    """
    unknown = set(changes) - EDITABLE_FIELDS
    if unknown:
        raise ValidationError({name: "This field cannot be changed." for name in sorted(unknown)})
    thermogram, mark = _locked_mark(mark)
    if version is not None and version != mark.version:
        raise MarkChanged(
            f"Mark {mark.label} was changed by someone else since you read it (version "
            f"{version}, now {mark.version}); reload to see their change, then make yours."
        )
    for name, value in changes.items():
        setattr(mark, name, value)
    if "note" in changes and mark.note is None:
        mark.note = ""
    if "name" in changes:
        mark.name = (mark.name or "").strip()
    if "points" in changes:
        mark.points = _clean_points(thermogram, mark.kind, changes["points"])
    mark.full_clean()
    _clean_reference(mark)
    if {"points", "single_pixel"} & set(changes) or not mark.stats:
        temperatures = _ready_temperatures(thermogram)
        mark.stats = mark_stats(temperatures, mark.kind, mark.points, mark.single_pixel)
    mark.version += 1
    mark.save()
    audit_record(
        organization=thermogram.organization,
        actor=user,
        action="mark_update",
        obj=mark,
        detail={"thermogram": thermogram.pk, "label": mark.label, "fields": sorted(changes)},
    )
    if {"points", "single_pixel"} & set(changes):
        _marks_changed(thermogram)
    return mark


class MarkInUse(ValidationError):
    """A mark a finding was judged on: deleting it would leave the finding citing nothing."""

    def __init__(self, mark: Mark, findings: list):
        self.findings = findings
        names = ", ".join(f"#{f.pk}" for f in findings)
        super().__init__(
            f"Mark {mark.title} is used by finding {names}: it cannot be deleted while the "
            "finding cites it. Change or delete the finding first."
        )


def mark_findings(mark: Mark) -> list:
    """The findings judged on a mark, as the judged place or as its reference."""
    from survey.models import Finding

    return list(
        Finding.objects.filter(Q(marks=mark) | Q(reference_mark=mark)).distinct().order_by("id")
    )


@transaction.atomic
def mark_delete(*, mark: Mark, user: AbstractBaseUser | None) -> None:
    """Delete a mark; marks that took it as their reference lose that reference.

    Raises MarkInUse (a ValidationError naming the findings) for a mark a finding uses.
    """
    thermogram, mark = _locked_mark(mark)
    used = mark_findings(mark)
    if used:
        raise MarkInUse(mark, used)
    Mark.objects.filter(reference_mark=mark).update(
        reference_mark=None, reference_kind=Mark.ReferenceKind.NONE
    )
    detail = {"thermogram": thermogram.pk, "label": mark.label, "kind": mark.kind}
    pk = mark.pk
    mark.delete()
    audit_record(
        organization=thermogram.organization,
        actor=user,
        action="mark_delete",
        object_type="Mark",
        detail=detail | {"id": pk},
    )
    _marks_changed(thermogram)


def _alignment_matrix(pairs: list) -> list[list[float]]:
    try:
        matrix = affine_from_pairs([pair[0] for pair in pairs], [pair[1] for pair in pairs])
    except ValueError as error:
        raise ValidationError({"pairs": str(error)}) from None
    return [[round(float(v), 8) for v in row] for row in matrix]


def _clean_pairs(thermogram: Thermogram, pairs: Any) -> list[list[list[float]]]:
    if not isinstance(pairs, (list, tuple)) or not 2 <= len(pairs) <= 3:
        raise ValidationError({"pairs": "Give two or three pairs of matching points."})
    cleaned = []
    for number, pair in enumerate(pairs, start=1):
        try:
            (px, py), (tx, ty) = pair
            values = [float(px), float(py), float(tx), float(ty)]
        except (TypeError, ValueError):
            raise ValidationError(
                {"pairs": f"Pair {number} must be [[photo x, photo y], [thermogram x, y]]."}
            ) from None
        if not all(math.isfinite(v) for v in values) or min(values) < 0:
            raise ValidationError({"pairs": f"Pair {number} has a negative or missing number."})
        if values[2] > thermogram.width - 1 or values[3] > thermogram.height - 1:
            raise ValidationError({"pairs": f"Pair {number} lies outside the thermogram."})
        cleaned.append([values[:2], values[2:]])
    return cleaned


@transaction.atomic
def thermogram_set_alignment(
    *, thermogram: Thermogram, pairs: list | None, user: AbstractBaseUser | None
) -> Thermogram:
    """Store (or with pairs None, clear) the photo-to-thermogram alignment."""
    thermogram = _lock(thermogram)
    if pairs is None:
        thermogram.photo_alignment = None
    else:
        if not thermogram.photo:
            raise ValidationError({"pairs": "This thermogram has no paired photo to align."})
        pairs = _clean_pairs(thermogram, pairs)
        thermogram.photo_alignment = {"matrix": _alignment_matrix(pairs), "pairs": pairs}
    # created_by is null once its user is deleted; that must not block an alignment.
    thermogram.full_clean()
    thermogram.save(update_fields=["photo_alignment"])
    audit_record(
        organization=thermogram.organization,
        actor=user,
        action="thermogram_align_photo" if pairs else "thermogram_clear_alignment",
        obj=thermogram,
        detail={"pairs": pairs},
    )
    return thermogram
