"""What the workspace draws with: the palettes, the overlay colours and a thermogram's span.

Views reach the physics through here (and survey/services/readings.py for temperatures), so
the page colours a thermogram exactly as the server's previews and reports do.
"""

import logging

import numpy as np
from django.db import transaction

from survey.models import Mark, Thermogram
from survey.services.arrays import thermogram_temperatures
from survey.services.processing import automatic_span, display_span
from survey.thermal import PALETTES
from survey.thermal.drawing import (
    CONDENSATION_COLOUR,
    ISOTHERM_COLOUR,
    MOULD_RISK_COLOUR,
    encode_png,
    render_picture,
)
from survey.thermal.palettes import NO_DATA_COLOUR

logger = logging.getLogger(__name__)


def palette_names() -> list[str]:
    return list(PALETTES)


def palette_ramps() -> dict[str, list[list[int]]]:
    """The server's colour ramps (256 × RGB each), so the page renders exactly like it."""
    return {name: np.asarray(ramp, dtype=int).tolist() for name, ramp in PALETTES.items()}


def overlay_colours() -> dict[str, list[int]]:
    return {
        "no_data": list(NO_DATA_COLOUR),
        "isotherm": list(ISOTHERM_COLOUR),
        "mould_risk": list(MOULD_RISK_COLOUR),
        "condensation": list(CONDENSATION_COLOUR),
    }


def thermogram_auto_span(thermogram: Thermogram) -> list[float] | None:
    """The automatic span (°C) of a ready thermogram by its span rule, None before it is
    processed."""
    if not thermogram.is_ready:
        return None
    low, high = automatic_span(thermogram, thermogram_temperatures(thermogram))
    return [round(float(low), 2), round(float(high), 2)]


MARKS_PICTURE_WIDTH_PX = 480


def marks_picture_png(thermogram: Thermogram, marks: list[Mark], unit: str = "C") -> bytes:
    """The thermogram in its saved view with only `marks` drawn, and its scale bar: the
    picture beside a finding being written from those marks."""
    temperatures = thermogram_temperatures(thermogram)
    low, high = display_span(thermogram, temperatures)
    drawn = [
        {"kind": m.kind, "points": m.points, "label": m.label, "single_pixel": m.single_pixel}
        for m in marks
    ]
    picture = render_picture(
        temperatures,
        thermogram.palette,
        low,
        high,
        marks=drawn,
        unit=unit,
        width_px=MARKS_PICTURE_WIDTH_PX,
    )
    return encode_png(picture, compress_level=1)


def previews_enqueue(thermogram_id: int) -> None:
    """Queue a redraw of the previews once the current transaction commits."""
    from survey.tasks import render_previews

    transaction.on_commit(lambda: _publish(render_previews, thermogram_id))


def _publish(task, thermogram_id: int) -> None:
    try:
        task.apply_async(args=[thermogram_id], retry=False)
    except Exception as error:  # kombu/redis raise several connection error types
        logger.warning("Could not queue a preview redraw of %s: %s", thermogram_id, error)
