"""An organization's cameras, and the pixel geometry a survey takes from its camera.

A survey that names an Instrument gets its IFOV from the pinhole-lens geometry of that
camera, 2·tan(FOV/2)/N (survey.thermal.ifov_from_fov_mrad), with the lens's horizontal
field of view over the detector's width in pixels. Surveys recorded before instruments
existed keep their free-text camera and stored IFOV as the fallback.
"""

from typing import Any

from django.contrib.auth.models import AbstractBaseUser
from django.core.exceptions import ValidationError
from django.db import transaction

from survey.models import Instrument, Organization, Survey
from survey.services.audit import audit_record

INSTRUMENT_FIELDS = (
    "model_name",
    "serial_number",
    "detector_width_px",
    "detector_height_px",
    "lens_hfov_deg",
    "netd_mk",
    "accuracy_c",
    "accuracy_pct",
    "calibration_date",
    "calibration_due",
    "certificate_reference",
)


def _check(instrument: Instrument) -> None:
    due, done = instrument.calibration_due, instrument.calibration_date
    if due is not None and done is not None and due < done:
        raise ValidationError(
            {"calibration_due": "The calibration due date cannot be before the calibration."}
        )


@transaction.atomic
def instrument_create(
    *, organization: Organization, user: AbstractBaseUser | None, **fields: Any
) -> Instrument:
    unknown = set(fields) - set(INSTRUMENT_FIELDS)
    if unknown:
        raise TypeError(f"instrument_create() got unknown fields: {sorted(unknown)}")
    instrument = Instrument(organization=organization, **fields)
    instrument.full_clean()
    _check(instrument)
    instrument.save()
    audit_record(organization=organization, actor=user, action="create", obj=instrument)
    return instrument


@transaction.atomic
def instrument_update(
    *, instrument: Instrument, user: AbstractBaseUser | None, **changes: Any
) -> Instrument:
    """Change a camera record; surveys that use it take the new geometry."""
    unknown = set(changes) - set(INSTRUMENT_FIELDS)
    if unknown:
        raise TypeError(f"instrument_update() got unknown fields: {sorted(unknown)}")
    for name, value in changes.items():
        setattr(instrument, name, value)
    instrument.full_clean()
    _check(instrument)
    instrument.save()
    audit_record(
        organization=instrument.organization,
        actor=user,
        action="update",
        obj=instrument,
        detail={"fields": sorted(changes)},
    )
    return instrument


@transaction.atomic
def instrument_delete(*, instrument: Instrument, user: AbstractBaseUser | None) -> None:
    """Delete a camera record no survey uses; refused, with the surveys named, otherwise."""
    used = list(instrument.surveys.order_by("-date")[:3])
    if used:
        names = "; ".join(str(survey) for survey in used)
        more = instrument.surveys.count() - len(used)
        raise ValidationError(
            f"{instrument.model_name} is the camera of {names}"
            + (f" and {more} more" if more > 0 else "")
            + ": it cannot be deleted while surveys use it."
        )
    pk, name = instrument.pk, str(instrument)
    organization = instrument.organization
    instrument.delete()
    audit_record(
        organization=organization,
        actor=user,
        action="delete",
        object_type="Instrument",
        detail={"id": pk, "name": name},
    )


def instrument_ifov_mrad(instrument: Instrument) -> float:
    """IFOV of the camera's centre pixel, mrad: pinhole geometry over the detector width."""
    from survey.thermal import ifov_from_fov_mrad

    return float(ifov_from_fov_mrad(instrument.lens_hfov_deg, instrument.detector_width_px))


def survey_ifov(survey: Survey) -> tuple[float | None, str]:
    """(IFOV in mrad, where it came from) for a survey's footprint and area figures.

    The survey's camera gives it by the pinhole geometry; without one, the IFOV recorded on
    the survey (older surveys); None when neither is known.
    """
    if survey.camera_id is not None:
        camera = survey.camera
        return (
            instrument_ifov_mrad(camera),
            f"{camera.model_name}: {camera.lens_hfov_deg:g}° over {camera.detector_width_px} "
            "pixels, pinhole lens",
        )
    if survey.ifov_mrad:
        return survey.ifov_mrad, "IFOV recorded on the survey"
    return None, ""
