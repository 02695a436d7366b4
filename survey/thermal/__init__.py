"""Physics and image maths of thermal surveys: pure numpy, no Django.

Every public name is re-exported here so a notebook can `from survey import thermal`.
Units are in the parameter names (_c °C, _pct percent, _m metres, _mrad, _w_m2).
"""

from survey.thermal.decode import ThermogramFormatError, read_temperatures
from survey.thermal.electrical import RiseClassification, classify_rise, load_corrected_rise
from survey.thermal.geometry import pixel_area_m2, pixel_footprint_m
from survey.thermal.heat_transfer import surface_heat_flux
from survey.thermal.logger import LoggerFileError, LoggerSeries, RowError, read_logger_csv
from survey.thermal.marks import mark_statistics
from survey.thermal.proposals import Proposal, drop_rejected, proposal_reason, propose, same_place
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
from survey.thermal.registration import Registration, Transform, register, transform_from_points
from survey.thermal.render import PALETTES, auto_span, invert_palette, render
from survey.thermal.timeseries import conditions_at, held_difference, outdoor_extremes

__all__ = [
    "LoggerFileError",
    "LoggerSeries",
    "PALETTES",
    "Proposal",
    "Registration",
    "RiseClassification",
    "RowError",
    "ThermogramFormatError",
    "Transform",
    "apparent_temperature",
    "auto_span",
    "classify_rise",
    "conditions_at",
    "critical_temperature_factor",
    "dew_point",
    "drop_rejected",
    "emissivity_warning",
    "frost_point",
    "held_difference",
    "invert_palette",
    "load_corrected_rise",
    "mark_statistics",
    "object_temperature",
    "object_temperature_uncertainty",
    "outdoor_extremes",
    "pixel_area_m2",
    "pixel_footprint_m",
    "proposal_reason",
    "propose",
    "read_logger_csv",
    "read_temperatures",
    "register",
    "render",
    "same_place",
    "saturation_vapor_pressure",
    "surface_heat_flux",
    "surface_rh",
    "temperature_factor",
    "transform_from_points",
]
