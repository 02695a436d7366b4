"""What the workspace draws with: the palettes, the overlay colours and a thermogram's span.

Views reach the physics through here (and survey/services/readings.py for temperatures), so
the page colours a thermogram exactly as the server's previews and reports do.
"""

import numpy as np

from survey.models import Thermogram
from survey.services.arrays import thermogram_temperatures
from survey.thermal import PALETTES, auto_span
from survey.thermal.drawing import CONDENSATION_COLOUR, ISOTHERM_COLOUR, MOULD_RISK_COLOUR
from survey.thermal.palettes import NO_DATA_COLOUR


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
    """The automatic span (°C) of a ready thermogram, None before it is processed."""
    if not thermogram.is_ready:
        return None
    low, high = auto_span(thermogram_temperatures(thermogram))
    return [round(float(low), 2), round(float(high), 2)]
