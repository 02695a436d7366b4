"""Physics and image maths of thermal surveys: pure numpy, no Django.

Every public name is re-exported here so a notebook can `from survey import thermal`.
Units are in the parameter names (_c °C, _pct percent, _m metres, _mrad, _w_m2).
"""

from survey.thermal.alignment import affine_from_pairs, thermogram_to_photo
from survey.thermal.bands import band_index, check_bands, stepped_interval
from survey.thermal.decision import (
    decide,
    decide_interval,
    expanded_from_limit,
    root_sum_square,
    surface_margin_interval_k,
    surface_rh_interval,
    temperature_factor_interval,
)
from survey.thermal.decode import ThermogramFormatError, read_temperatures
from survey.thermal.drawing import render_picture
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
from survey.thermal.logger import LoggerFileError, LoggerSeries, RowError, read_logger_csv
from survey.thermal.marks import mark_statistics
from survey.thermal.palettes import PALETTES, auto_span, invert_palette, render, widen_span
from survey.thermal.proposals import Proposal, drop_rejected, proposal_reason, propose, same_place
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
from survey.thermal.registration import Registration, Transform, register, transform_from_points
from survey.thermal.timeseries import conditions_at, held_difference, outdoor_extremes

__all__ = [
    "MaskedArea",
    "PALETTES",
    "RISE_METHODS",
    "LoggerFileError",
    "LoggerSeries",
    "Proposal",
    "Registration",
    "RiseClassification",
    "RowError",
    "ThermogramFormatError",
    "Transform",
    "affine_from_pairs",
    "thermogram_to_photo",
    "apparent_temperature",
    "auto_span",
    "band_index",
    "check_bands",
    "widen_span",
    "classify_rise",
    "condensation_margin_k",
    "conditions_at",
    "critical_temperature_factor",
    "decide",
    "decide_interval",
    "dew_point",
    "drop_rejected",
    "emissivity_warning",
    "expanded_from_limit",
    "root_sum_square",
    "frost_point",
    "ifov_from_fov_mrad",
    "held_difference",
    "invert_palette",
    "like_component_rise_c",
    "stepped_interval",
    "load_corrected_rise",
    "load_is_too_low",
    "mark_statistics",
    "masked_area_m2",
    "object_temperature",
    "object_temperature_uncertainty",
    "outdoor_extremes",
    "pixel_area_m2",
    "pixel_footprint_from_fov_m",
    "pixel_footprint_m",
    "proposal_reason",
    "propose",
    "read_logger_csv",
    "read_temperatures",
    "register",
    "render",
    "round_rise_c",
    "same_place",
    "render_picture",
    "saturation_vapor_pressure",
    "surface_heat_flux",
    "surface_limit_temperature",
    "surface_margin_interval_k",
    "surface_margin_k",
    "surface_rh",
    "surface_rh_interval",
    "temperature_factor",
    "temperature_factor_interval",
    "transform_from_points",
]
