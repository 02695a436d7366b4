"""Read PDFs back and compute expected numbers independently of the app's code."""

import re
import subprocess

import numpy as np
import psychrolib
from scipy import constants, integrate, optimize

psychrolib.SetUnitSystem(psychrolib.SI)


def pdf_text(pdf: bytes, *, layout: bool = True) -> str:
    """The PDF's text as poppler's pdftotext reads it."""
    args = ["pdftotext", "-enc", "UTF-8"] + (["-layout"] if layout else []) + ["-", "-"]
    return subprocess.run(args, input=pdf, capture_output=True, check=True).stdout.decode()


def flat(text: str) -> str:
    """Whitespace runs to one space, so wrapped sentences can be searched."""
    return re.sub(r"\s+", " ", text)


def band_radiance(t_c: float) -> float:
    """Planck's law integrated over 8–14 µm (W m⁻² sr⁻¹), with scipy's CODATA constants."""
    h, c, k = constants.h, constants.c, constants.k
    t_k = t_c + 273.15

    def spectral(wavelength_m: float) -> float:
        return 2 * h * c**2 / wavelength_m**5 / np.expm1(h * c / (wavelength_m * k * t_k))

    return integrate.quad(spectral, 8e-6, 14e-6, epsabs=0, epsrel=1e-10)[0]


def object_c(apparent_c: float, emissivity: float, reflected_c: float) -> float:
    """Solve ε·W(T) + (1 − ε)·W(T_refl) = W(T_app) for T (opaque surface, τ = 1)."""
    target = band_radiance(apparent_c)
    reflected = (1 - emissivity) * band_radiance(reflected_c)
    return optimize.brentq(
        lambda t: emissivity * band_radiance(t) + reflected - target, -80, 500, xtol=1e-9
    )


def dew_point_c(t_air_c: float, rh_pct: float) -> float:
    return psychrolib.GetTDewPointFromRelHum(t_air_c, rh_pct / 100)


def surface_rh_pct(t_air_c: float, rh_pct: float, t_surface_c: float) -> float:
    """φ_s = φ · p_sat(T_air) / p_sat(T_surface), ASHRAE saturation pressure via psychrolib."""
    return rh_pct * psychrolib.GetSatVapPres(t_air_c) / psychrolib.GetSatVapPres(t_surface_c)
