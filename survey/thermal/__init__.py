"""Physics and image maths of thermal surveys: pure numpy, no Django.

Every public name is re-exported here so a notebook can `from survey import thermal`.
Units are in the parameter names (_c °C, _pct percent, _m metres, _mrad, _w_m2).
"""

from survey.thermal.alignment import affine_from_pairs
from survey.thermal.decode import ThermogramFormatError, read_temperatures
from survey.thermal.drawing import render_picture
from survey.thermal.electrical import RiseClassification, classify_rise, load_corrected_rise
from survey.thermal.geometry import pixel_area_m2, pixel_footprint_m
from survey.thermal.heat_transfer import surface_heat_flux
from survey.thermal.marks import mark_statistics
from survey.thermal.palettes import PALETTES, auto_span, invert_palette, render
from survey.thermal.psychrometrics import (
    critical_temperature_factor,
    dew_point,
    frost_point,
    saturation_vapor_pressure,
    surface_rh,
    temperature_factor,
)
from survey.thermal.radiometry import (
    apparent_temperature,
    emissivity_warning,
    object_temperature,
    object_temperature_uncertainty,
)

__all__ = [
    "PALETTES",
    "RiseClassification",
    "ThermogramFormatError",
    "affine_from_pairs",
    "apparent_temperature",
    "auto_span",
    "classify_rise",
    "critical_temperature_factor",
    "dew_point",
    "emissivity_warning",
    "frost_point",
    "invert_palette",
    "load_corrected_rise",
    "mark_statistics",
    "object_temperature",
    "object_temperature_uncertainty",
    "pixel_area_m2",
    "pixel_footprint_m",
    "read_temperatures",
    "render",
    "render_picture",
    "saturation_vapor_pressure",
    "surface_heat_flux",
    "surface_rh",
    "temperature_factor",
]
