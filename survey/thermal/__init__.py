"""Physics and image maths of thermal surveys: pure numpy, no Django.

Every public name is re-exported here so a notebook can `from survey import thermal`.
Units are in the parameter names (_c °C, _pct percent, _m metres, _mrad, _w_m2).
"""

from survey.thermal.decision import (
    decide,
    decide_interval,
    expanded_from_limit,
    surface_margin_interval_k,
    surface_rh_interval,
    temperature_factor_interval,
)
from survey.thermal.decode import ThermogramFormatError, read_temperatures
from survey.thermal.electrical import (
    RISE_METHODS,
    RiseClassification,
    classify_rise,
    like_component_rise_c,
    load_corrected_rise,
    load_is_too_low,
    round_rise_c,
)
from survey.thermal.geometry import (
    MaskedArea,
    ifov_from_fov_mrad,
    masked_area_m2,
    pixel_area_m2,
    pixel_footprint_from_fov_m,
    pixel_footprint_m,
)
from survey.thermal.heat_transfer import surface_heat_flux
from survey.thermal.marks import mark_statistics
from survey.thermal.psychrometrics import (
    condensation_margin_k,
    critical_temperature_factor,
    dew_point,
    frost_point,
    saturation_vapor_pressure,
    surface_limit_temperature,
    surface_margin_k,
    surface_rh,
    temperature_factor,
)
from survey.thermal.radiometry import (
    apparent_temperature,
    emissivity_warning,
    object_temperature,
    object_temperature_uncertainty,
)
from survey.thermal.render import PALETTES, auto_span, invert_palette, render

__all__ = [
    "MaskedArea",
    "PALETTES",
    "RISE_METHODS",
    "RiseClassification",
    "ThermogramFormatError",
    "apparent_temperature",
    "auto_span",
    "classify_rise",
    "condensation_margin_k",
    "critical_temperature_factor",
    "decide",
    "decide_interval",
    "dew_point",
    "emissivity_warning",
    "expanded_from_limit",
    "frost_point",
    "ifov_from_fov_mrad",
    "invert_palette",
    "like_component_rise_c",
    "load_corrected_rise",
    "load_is_too_low",
    "mark_statistics",
    "masked_area_m2",
    "object_temperature",
    "object_temperature_uncertainty",
    "pixel_area_m2",
    "pixel_footprint_from_fov_m",
    "pixel_footprint_m",
    "read_temperatures",
    "render",
    "round_rise_c",
    "saturation_vapor_pressure",
    "surface_heat_flux",
    "surface_limit_temperature",
    "surface_margin_interval_k",
    "surface_margin_k",
    "surface_rh",
    "surface_rh_interval",
    "temperature_factor",
    "temperature_factor_interval",
]
