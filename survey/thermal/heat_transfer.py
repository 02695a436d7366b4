"""Heat lost from a surface to the air and the surroundings, from its measured temperature.

Radiation is exact for a grey surface seeing large surroundings; convection comes from the
published correlations of natural and forced convection with air properties at the film
temperature. Positive fluxes leave the surface.
"""

import numpy as np

from survey.thermal import _checks
from survey.thermal.constants import (
    DRY_AIR_CP_J_KG_K,
    DRY_AIR_GAS_CONSTANT_J_KG_K,
    STANDARD_GRAVITY_M_S2,
    STANDARD_PRESSURE_PA,
    STEFAN_BOLTZMANN_W_M2_K4,
    ZERO_CELSIUS_K,
)

GEOMETRIES = ("vertical", "horizontal_up", "horizontal_down", "cylinder")

# Sutherland's law for air [White2006]: reference viscosity and conductivity at 273.15 K
# with Sutherland constants S. Measured against the air table of [Incropera2007] (Table
# A.4, values from memory): μ within 0.7 % and k within 0.7 % from 250 to 400 K; μ within
# 2.2 % and k within 1.6 % from 200 to 1000 K.
_SUTHERLAND_VISCOSITY = (1.716e-5, 273.15, 110.4)
_SUTHERLAND_CONDUCTIVITY = (0.0241, 273.15, 194.0)

# Flat plate: laminar boundary layer up to this Reynolds number [Incropera2007].
_CRITICAL_REYNOLDS = 5e5
# Horizontal plate, hot side up: laminar correlation up to this Rayleigh number.
_PLATE_TURBULENT_RAYLEIGH = 1e7


def _sutherland(t_k, constants):
    reference, t_reference_k, s_k = constants
    return reference * (t_k / t_reference_k) ** 1.5 * (t_reference_k + s_k) / (t_k + s_k)


def air_properties(t_c):
    """Properties of dry air at atmospheric pressure for convection correlations.

    Parameters
    ----------
    t_c : float or array_like
        Air (film) temperature, °C.

    Returns
    -------
    dict
        ``conductivity_w_m_k`` (k), ``kinematic_viscosity_m2_s`` (ν),
        ``diffusivity_m2_s`` (α), ``prandtl`` (Pr) and ``expansion_1_k`` (β = 1/T).

    Notes
    -----
    μ and k from Sutherland's law [White2006], ρ = p/(R·T) at 101 325 Pa,
    c_p = 1006 J/(kg·K); ν = μ/ρ, α = k/(ρ·c_p), Pr = ν/α, β = 1/T (ideal gas). Measured
    against the air table of [Incropera2007] (Table A.4 at 250, 300, 350 and 400 K, values
    from memory): ν within 2.0 %, k within 0.7 %, α within 1.7 % and Pr within 0.9 %. The
    table's density is about 1.3 % below p/(R·T), which accounts for most of the ν and α
    difference.

    Examples
    --------
    >>> round(air_properties(26.85)["prandtl"], 3)
    0.708
    """
    t_k = _checks.temperature(t_c, "t_c") + ZERO_CELSIUS_K
    return _air(t_k)


def _air(t_k):
    viscosity = _sutherland(t_k, _SUTHERLAND_VISCOSITY)
    conductivity = _sutherland(t_k, _SUTHERLAND_CONDUCTIVITY)
    density = STANDARD_PRESSURE_PA / (DRY_AIR_GAS_CONSTANT_J_KG_K * t_k)
    diffusivity = conductivity / (density * DRY_AIR_CP_J_KG_K)
    kinematic = viscosity / density
    return {
        "conductivity_w_m_k": _checks.result(conductivity),
        "kinematic_viscosity_m2_s": _checks.result(kinematic),
        "diffusivity_m2_s": _checks.result(diffusivity),
        "prandtl": _checks.result(kinematic / diffusivity),
        "expansion_1_k": _checks.result(1.0 / t_k),
    }


def _churchill_chu(rayleigh, prandtl, lead, pr_constant):
    """Churchill–Chu form shared by the vertical plate and the horizontal cylinder."""
    shape = (1.0 + (pr_constant / prandtl) ** (9.0 / 16.0)) ** (8.0 / 27.0)
    return (lead + 0.387 * rayleigh ** (1.0 / 6.0) / shape) ** 2


def _natural_h(t_surface_k, t_air_k, geometry, size_m):
    """Natural-convection coefficient, W/(m²·K)."""
    air = _air((t_surface_k + t_air_k) / 2.0)
    difference = np.abs(t_surface_k - t_air_k)
    if geometry in ("horizontal_up", "horizontal_down"):
        # Characteristic length A/P of a square plate of side size_m [Incropera2007].
        length = size_m / 4.0
    else:
        length = size_m
    rayleigh = (
        STANDARD_GRAVITY_M_S2
        * air["expansion_1_k"]
        * difference
        * length**3
        / (air["kinematic_viscosity_m2_s"] * air["diffusivity_m2_s"])
    )
    prandtl = air["prandtl"]
    if geometry == "vertical":
        nusselt = _churchill_chu(rayleigh, prandtl, 0.825, 0.492)
    elif geometry == "cylinder":
        nusselt = _churchill_chu(rayleigh, prandtl, 0.60, 0.559)
    else:
        # Buoyant air rises off a warm upper face or a cold lower face ("hot side up").
        warmer = t_surface_k > t_air_k
        unstable = warmer if geometry == "horizontal_up" else ~warmer
        rising = np.where(
            rayleigh <= _PLATE_TURBULENT_RAYLEIGH,
            0.54 * rayleigh**0.25,
            0.15 * rayleigh ** (1.0 / 3.0),
        )
        nusselt = np.where(unstable, rising, 0.52 * rayleigh**0.2)
    return nusselt * air["conductivity_w_m_k"] / length


def _forced_h(t_surface_k, t_air_k, geometry, size_m, wind_m_s):
    """Forced-convection coefficient from wind, W/(m²·K)."""
    air = _air((t_surface_k + t_air_k) / 2.0)
    reynolds = wind_m_s * size_m / air["kinematic_viscosity_m2_s"]
    prandtl = air["prandtl"]
    if geometry == "cylinder":
        # Churchill & Bernstein (1977), all Re·Pr > 0.2.
        nusselt = 0.3 + (
            0.62
            * reynolds**0.5
            * prandtl ** (1.0 / 3.0)
            / (1.0 + (0.4 / prandtl) ** (2.0 / 3.0)) ** 0.25
            * (1.0 + (reynolds / 282_000.0) ** 0.625) ** 0.8
        )
    else:
        # Flat plate along the wind, average over the length: laminar, or mixed
        # laminar–turbulent above the critical Reynolds number [Incropera2007].
        nusselt = np.where(
            reynolds < _CRITICAL_REYNOLDS,
            0.664 * reynolds**0.5,
            0.037 * reynolds**0.8 - 871.0,
        ) * prandtl ** (1.0 / 3.0)
    return nusselt * air["conductivity_w_m_k"] / size_m


def surface_heat_flux(
    t_surface_c,
    t_air_c,
    emissivity,
    geometry,
    size_m,
    wind_m_s=0.0,
    t_surroundings_c=None,
):
    """Heat flux leaving a surface by convection and radiation.

    Parameters
    ----------
    t_surface_c : float or array_like
        Surface (object) temperature, °C.
    t_air_c : float or array_like
        Air temperature away from the surface, °C.
    emissivity : float or array_like
        Emissivity of the surface, in (0, 1].
    geometry : {"vertical", "horizontal_up", "horizontal_down", "cylinder"}
        Vertical plate (wall, panel side), horizontal plate facing up (roof, top of a
        duct) or down (ceiling, underside), or horizontal cylinder (pipe).
    size_m : float or array_like
        Height of a vertical plate, side of a horizontal plate (also the length along the
        wind), or outside diameter of a cylinder, m.
    wind_m_s : float or array_like
        Air speed over the surface, m/s, ≥ 0; 0 means still air.
    t_surroundings_c : float or array_like, optional
        Temperature of the surroundings the surface radiates to, °C; defaults to
        ``t_air_c``.

    Returns
    -------
    dict
        ``convective_w_m2``, ``radiative_w_m2``, ``total_w_m2`` (positive: heat leaves
        the surface) and ``h_convective_w_m2_k``. Per metre of pipe: multiply by π·D.

    Notes
    -----
    Radiation: q = ε·σ·(T_s⁴ − T_sur⁴), a grey surface small against its surroundings
    [CODATA2018]. Convection: q = h·(T_s − T_air), air properties at the film temperature
    (T_s + T_air)/2, β = 1/T_film.

    Natural convection: vertical plate Nu = {0.825 + 0.387·Ra^(1/6)/[1 + (0.492/Pr)^(9/16)]
    ^(8/27)}² [ChurchillChu1975a]; horizontal cylinder Nu = {0.60 + 0.387·Ra^(1/6)/[1 +
    (0.559/Pr)^(9/16)]^(8/27)}² [ChurchillChu1975b]; horizontal plate with L = A/P (a
    square of side a: a/4), when the buoyant air rises off the face (warm face up, or
    cold face down) Nu = 0.54·Ra^(1/4) up to Ra 10⁷ and 0.15·Ra^(1/3) above, otherwise
    Nu = 0.52·Ra^(1/5) [Incropera2007].

    Forced convection from wind: flat plate Nu = 0.664·Re^(1/2)·Pr^(1/3) (Re < 5·10⁵),
    (0.037·Re^(4/5) − 871)·Pr^(1/3) above [Incropera2007]; cylinder in cross-flow
    Churchill–Bernstein [ChurchillBernstein1977].

    Mixed convection: h = (h_natural³ + h_forced³)^(1/3), the rule for assisting and
    transverse flows [Churchill1977], [Incropera2007]. With wind 0 only natural convection
    counts.

    Examples
    --------
    >>> flux = surface_heat_flux(30.0, 20.0, 0.9, "vertical", 1.0)
    >>> round(flux["radiative_w_m2"], 1), round(flux["convective_w_m2"], 1)
    (54.1, 31.7)
    """
    t_surface = _checks.temperature(t_surface_c, "t_surface_c") + ZERO_CELSIUS_K
    t_air = _checks.temperature(t_air_c, "t_air_c") + ZERO_CELSIUS_K
    eps = _checks.in_range(emissivity, "emissivity", 0.0, 1.0, low_inclusive=False)
    geometry = _checks.choice(geometry, "geometry", GEOMETRIES)
    size = _checks.positive(size_m, "size_m", " m")
    wind = _checks.in_range(wind_m_s, "wind_m_s", 0.0, np.inf, unit=" m/s")
    if t_surroundings_c is None:
        t_surroundings = t_air
    else:
        t_surroundings = _checks.temperature(t_surroundings_c, "t_surroundings_c") + ZERO_CELSIUS_K

    h_natural = _natural_h(t_surface, t_air, geometry, size)
    h_forced = _forced_h(t_surface, t_air, geometry, size, wind)
    h = np.where(wind > 0.0, np.cbrt(h_natural**3 + h_forced**3), h_natural)
    convective = h * (t_surface - t_air)
    radiative = eps * STEFAN_BOLTZMANN_W_M2_K4 * (t_surface**4 - t_surroundings**4)
    return {
        "convective_w_m2": _checks.result(convective),
        "radiative_w_m2": _checks.result(radiative),
        "total_w_m2": _checks.result(convective + radiative),
        "h_convective_w_m2_k": _checks.result(h),
    }


def conduction_temperature_difference(heat_flow_w, thickness_m, conductivity_w_m_k, area_m2):
    """Temperature difference across a flat layer that carries a steady heat flow.

    Parameters
    ----------
    heat_flow_w : float or array_like
        Heat flow through the layer, W.
    thickness_m : float or array_like
        Layer thickness, m, > 0.
    conductivity_w_m_k : float or array_like
        Thermal conductivity, W/(m·K), > 0.
    area_m2 : float or array_like
        Area the heat flows through, m², > 0.

    Returns
    -------
    float or ndarray
        Temperature difference across the layer, K.

    Notes
    -----
    Fourier's law for a plane wall: ΔT = Q·L / (k·A) [Incropera2007].

    Examples
    --------
    >>> round(conduction_temperature_difference(1.0, 0.001, 6.0, 0.005 * 0.005), 2)
    6.67
    """
    heat_flow = _checks.as_array(heat_flow_w, "heat_flow_w")
    thickness = _checks.positive(thickness_m, "thickness_m", " m")
    conductivity = _checks.positive(conductivity_w_m_k, "conductivity_w_m_k", " W/(m·K)")
    area = _checks.positive(area_m2, "area_m2", " m²")
    return _checks.result(heat_flow * thickness / (conductivity * area))
