"""Proposed marks: computed when a thermogram is processed and on demand, then accepted
(an ordinary mark is added) or rejected (remembered, so the place is not proposed again).

The detectors (survey/thermal/proposals.py) see the thermogram's *corrected* temperatures:
the radiometric correction with the thermogram's emissivity, reflected temperature,
transmittance and atmosphere, as the readings use. Envelope proposals need the indoor air
and RH (logged at the capture time, else the survey's recorded conditions). Settings come
from the product defaults per survey kind, overridden by the organization's settings for
that kind, overridden by the survey's own. A proposal never becomes a finding by itself.
"""

from __future__ import annotations

import logging
import math
from dataclasses import dataclass

import numpy as np
from django.contrib.auth.models import AbstractBaseUser
from django.core.exceptions import ValidationError
from django.db import transaction
from django.utils import timezone

from survey.models import Mark, Organization, Proposal, ProposalSettings, Survey, Thermogram
from survey.services.arrays import ThermogramNotReady, thermogram_temperatures
from survey.services.audit import audit_record
from survey.services.loggers import thermogram_air
from survey.services.marks import mark_add, mark_update
from survey.thermal import proposals as detectors

logger = logging.getLogger(__name__)

# The product's defaults per survey kind: the detectors' own, chosen on the benchmark
# scenes (docs/references.md § Anomaly proposals).
DEFAULTS: dict[str, dict] = {
    "envelope": {
        "enabled": True,
        "min_area_px": detectors.ENVELOPE_MIN_AREA_PX,
        "min_area_m2": None,
        "limit_rh_pct": detectors.MOULD_LIMIT_RH_PCT,
        "f_rsi_min": None,
    },
    "roof": {
        "enabled": True,
        "min_rise_c": detectors.ROOF_MIN_RISE_C,
        "min_area_px": detectors.ROOF_MIN_AREA_PX,
        "min_area_m2": None,
    },
    "electrical": {
        "enabled": True,
        "min_rise_c": detectors.HOT_SPOT_MIN_RISE_C,
        "hot_spot_shape": "ellipse",
    },
    "mechanical": {
        "enabled": True,
        "min_rise_c": detectors.HOT_SPOT_MIN_RISE_C,
        "hot_spot_shape": "ellipse",
    },
}
SETTING_FIELDS = ("enabled", "min_area_px", "min_area_m2", "min_rise_c", "limit_rh_pct")
SETTING_FIELDS += ("f_rsi_min", "hot_spot_shape")


# --- settings ------------------------------------------------------------------------------------


def _overrides(row: ProposalSettings | None, kind: str) -> dict:
    if row is None:
        return {}
    values = {}
    for name in DEFAULTS[kind]:
        value = getattr(row, name)
        if value is not None and value != "":
            values[name] = value
    return values


def organization_proposal_settings(organization: Organization, kind: str) -> ProposalSettings:
    """The organization's row for a survey kind (unsaved and blank when it has none)."""
    row = ProposalSettings.objects.filter(
        organization=organization, survey=None, survey_kind=kind
    ).first()
    return row or ProposalSettings(organization=organization, survey_kind=kind)


def survey_proposal_settings(survey: Survey) -> ProposalSettings:
    row = ProposalSettings.objects.filter(survey=survey).first()
    return row or ProposalSettings(
        organization=survey.organization, survey=survey, survey_kind=survey.kind
    )


def effective_settings(survey: Survey) -> dict:
    """Product defaults ← organization's settings for the kind ← the survey's own."""
    kind = survey.kind
    values = dict(DEFAULTS[kind])
    values |= _overrides(organization_proposal_settings(survey.organization, kind), kind)
    values |= _overrides(ProposalSettings.objects.filter(survey=survey).first(), kind)
    return values


@transaction.atomic
def proposal_settings_save(
    *, row: ProposalSettings, user: AbstractBaseUser | None, **values
) -> ProposalSettings:
    """Save an organization's or a survey's thresholds (blank values inherit)."""
    unknown = set(values) - set(SETTING_FIELDS)
    if unknown:
        raise TypeError(f"proposal_settings_save() got unknown fields: {sorted(unknown)}")
    kind = row.survey.kind if row.survey_id else row.survey_kind
    if kind not in DEFAULTS:
        raise ValidationError({"survey_kind": "Choose a kind of survey."})
    row.survey_kind = kind
    for name, value in values.items():
        setattr(row, name, value)
    row.full_clean()
    row.save()
    audit_record(
        organization=row.organization,
        actor=user,
        action="proposal_settings",
        obj=row,
        detail={"kind": kind, "survey": row.survey_id, "fields": sorted(values)},
    )
    return row


# --- computing -----------------------------------------------------------------------------------


@dataclass
class ProposalRun:
    """What a run left: the open proposals and, when none could be made, why."""

    proposals: list[Proposal]
    note: str = ""


def corrected_temperatures(thermogram: Thermogram, apparent: np.ndarray) -> np.ndarray:
    """Object temperatures of every pixel, NaN where the correction has no answer."""
    from survey.thermal import object_temperature

    return object_temperature(
        apparent,
        thermogram.emissivity,
        thermogram.reflected_c,
        transmittance=thermogram.transmittance,
        atmosphere_c=thermogram.atmosphere_c,
        out_of_range="nan",
    )


def _pixel_size_m(thermogram: Thermogram) -> float | None:
    from survey.thermal import pixel_footprint_m

    ifov = thermogram.survey.ifov_mrad
    if not thermogram.distance_m or not ifov:
        return None
    return float(pixel_footprint_m(thermogram.distance_m, ifov))


def detector_settings(thermogram: Thermogram) -> tuple[dict | None, str]:
    """Keyword arguments of survey.thermal.proposals.propose for this thermogram, or
    (None, why not)."""
    survey = thermogram.survey
    values = effective_settings(survey)
    pixel_size = _pixel_size_m(thermogram)
    if survey.kind == Survey.Kind.ENVELOPE:
        air = thermogram_air(thermogram)
        if air.indoor_c is None or air.indoor_rh_pct is None or air.indoor_rh_pct <= 0:
            return None, (
                "Envelope proposals need the indoor air temperature and RH: record them in the "
                "survey's conditions or import an inside logger covering the capture time."
            )
        kwargs = {
            "t_inside_c": air.indoor_c,
            "rh_inside_pct": air.indoor_rh_pct,
            "limit_rh_pct": values["limit_rh_pct"],
            "min_area_px": values["min_area_px"],
            "min_area_m2": values["min_area_m2"],
            "pixel_size_m": pixel_size,
        }
        if air.outdoor_c is not None and air.outdoor_c < air.indoor_c:
            kwargs["t_outside_c"] = air.outdoor_c
            kwargs["f_rsi_min"] = values["f_rsi_min"]
        return kwargs, ""
    if survey.kind == Survey.Kind.ROOF:
        return {
            "min_rise_c": values["min_rise_c"],
            "min_area_px": values["min_area_px"],
            "min_area_m2": values["min_area_m2"],
            "pixel_size_m": pixel_size,
        }, ""
    return {
        "min_rise_c": values["min_rise_c"],
        "shape": values["hot_spot_shape"],
        "pixel_size_m": pixel_size,
    }, ""


def _inside_image(points: list, width: int, height: int) -> list[list[float]]:
    """Points moved onto the image: an outline along a border pixel's outer edge lies half a
    pixel outside, which the marks (pixel centres 0 … size − 1) do not take."""

    def clamp(value, top: float) -> float:
        return round(min(max(float(value), 0.0), top), 2)

    return [[clamp(x, width - 1.0), clamp(y, height - 1.0)] for x, y in points]


def _finite(value):
    if isinstance(value, float) and not math.isfinite(value):
        return None
    if isinstance(value, dict):
        return {str(k): _finite(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [_finite(v) for v in value]
    if hasattr(value, "item"):
        return _finite(value.item())
    return value


@transaction.atomic
def thermogram_propose(
    *, thermogram: Thermogram, user: AbstractBaseUser | None = None
) -> ProposalRun:
    """Replace the thermogram's open proposals with freshly computed ones.

    Places already rejected, or already marked, are left out. Raises ValidationError when
    the thermogram is not ready or its settings make no proposal possible.
    """
    thermogram = Thermogram.objects.select_for_update().get(pk=thermogram.pk)
    if not thermogram.is_ready:
        raise ValidationError(
            f"Thermogram {thermogram} is not ready (status: {thermogram.get_status_display()})."
        )
    try:
        apparent = thermogram_temperatures(thermogram)
    except ThermogramNotReady as error:
        raise ValidationError(str(error)) from None
    Proposal.objects.filter(thermogram=thermogram, status=Proposal.Status.PROPOSED).delete()
    kwargs, note = detector_settings(thermogram)
    if kwargs is None:
        return ProposalRun([], note)
    found = detectors.propose(
        corrected_temperatures(thermogram, apparent), thermogram.survey.kind, **kwargs
    )
    shape = (thermogram.height, thermogram.width)
    rejected = [
        {"kind": kind, "points": points}
        for kind, points in thermogram.proposals.filter(
            status=Proposal.Status.REJECTED
        ).values_list("kind", "points")
    ]
    marked = [{"kind": m.kind, "points": m.points} for m in thermogram.marks.all()]
    kept = set(map(id, detectors.drop_rejected(found, rejected + marked, shape)))
    rows: dict[int, Proposal] = {}
    for index, found_one in enumerate(found):
        if id(found_one) not in kept:
            continue
        rows[index] = Proposal.objects.create(
            thermogram=thermogram,
            rank=index,
            category=found_one.category,
            kind=found_one.kind,
            points=_inside_image(found_one.points, thermogram.width, thermogram.height),
            reason=found_one.reason[:300],
            score=float(found_one.score),
            stats=_finite(found_one.stats),
        )
    for row in rows.values():
        reference_index = row.stats.get("reference_index")
        if row.category == Proposal.Category.HOT_SPOT and reference_index in rows:
            row.reference = rows[reference_index]
            row.save(update_fields=["reference"])
    audit_record(
        organization=thermogram.organization,
        actor=user,
        action="propose",
        obj=thermogram,
        detail={"proposed": len(rows), "found": len(found)},
    )
    if not rows:
        note = (
            "Nothing stands out at these settings."
            if not found
            else ("Everything found is already marked or was rejected before.")
        )
    return ProposalRun(list(rows.values()), note)


def thermogram_propose_after_processing(thermogram_id: int) -> int | None:
    """The processing task's step: propose when the survey's settings say so.

    A failure here is logged and never fails the thermogram, whose decoding succeeded.
    """
    try:
        thermogram = Thermogram.objects.select_related("survey__conditions").get(pk=thermogram_id)
        if not thermogram.is_ready or not effective_settings(thermogram.survey)["enabled"]:
            return None
        return len(thermogram_propose(thermogram=thermogram).proposals)
    except ValidationError as error:
        logger.info("No proposals for thermogram %s: %s", thermogram_id, error)
    except Exception:
        logger.exception("Proposing marks for thermogram %s failed", thermogram_id)
    return None


# --- deciding ------------------------------------------------------------------------------------


def _lock_open(proposal: Proposal) -> Proposal:
    proposal = (
        Proposal.objects.select_for_update(of=("self",))
        .select_related("thermogram__survey", "reference__mark")
        .get(pk=proposal.pk)
    )
    if proposal.status != Proposal.Status.PROPOSED:
        raise ValidationError(f"This proposal was already {proposal.get_status_display().lower()}.")
    return proposal


@transaction.atomic
def proposal_accept(*, proposal: Proposal, user: AbstractBaseUser | None) -> Mark:
    """Add the proposed mark; a hot spot whose proposed reference was accepted (or a
    reference whose hot spot was) takes that mark as its reference."""
    proposal = _lock_open(proposal)
    reference = {}
    if proposal.reference is not None and proposal.reference.mark is not None:
        reference = {
            "reference_kind": Mark.ReferenceKind.MARK,
            "reference_mark": proposal.reference.mark,
        }
    mark = mark_add(
        thermogram=proposal.thermogram,
        kind=proposal.kind,
        points=proposal.points,
        user=user,
        **reference,
    )
    if proposal.category == Proposal.Category.REFERENCE:
        for hot_spot in proposal.referenced_by.filter(
            status=Proposal.Status.ACCEPTED, mark__reference_kind=Mark.ReferenceKind.NONE
        ).select_related("mark"):
            mark_update(
                mark=hot_spot.mark,
                user=user,
                reference_kind=Mark.ReferenceKind.MARK,
                reference_mark=mark,
            )
    proposal.status = Proposal.Status.ACCEPTED
    proposal.mark = mark
    proposal.decided_by = user
    proposal.decided_at = timezone.now()
    proposal.save(update_fields=["status", "mark", "decided_by", "decided_at"])
    audit_record(
        organization=proposal.thermogram.organization,
        actor=user,
        action="proposal_accept",
        obj=proposal,
        detail={"thermogram": proposal.thermogram_id, "mark": mark.label},
    )
    return mark


@transaction.atomic
def proposal_reject(*, proposal: Proposal, user: AbstractBaseUser | None) -> Proposal:
    """Reject a proposal; it is kept so that the same place is not proposed again."""
    proposal = _lock_open(proposal)
    proposal.status = Proposal.Status.REJECTED
    proposal.decided_by = user
    proposal.decided_at = timezone.now()
    proposal.save(update_fields=["status", "decided_by", "decided_at"])
    audit_record(
        organization=proposal.thermogram.organization,
        actor=user,
        action="proposal_reject",
        obj=proposal,
        detail={"thermogram": proposal.thermogram_id, "category": proposal.category},
    )
    return proposal


# --- reading -------------------------------------------------------------------------------------


def open_proposals(thermogram: Thermogram) -> list[Proposal]:
    return list(
        thermogram.proposals.filter(status=Proposal.Status.PROPOSED).select_related("reference")
    )


def proposal_dict(proposal: Proposal, *, unit: str = "C") -> dict:
    """A proposal as the API shows it; the reason in the member's unit."""
    try:
        reason = detectors.proposal_reason(proposal.category, proposal.stats, unit=unit)
    except (KeyError, TypeError, ValueError):
        reason = proposal.reason
    return {
        "id": proposal.pk,
        "category": proposal.category,
        "category_label": proposal.get_category_display(),
        "kind": proposal.kind,
        "points": proposal.points,
        "reason": reason,
        "score": round(proposal.score, 3),
        "stats": proposal.stats,
        "status": proposal.status,
        "reference": proposal.reference_id,
    }


def proposals_note(thermogram: Thermogram) -> str:
    """Why a thermogram has no proposals, when the reason is its settings or conditions."""
    if not thermogram.is_ready:
        return ""
    kwargs, note = detector_settings(thermogram)
    return note if kwargs is None else ""
