"""Read PDFs back and compute expected numbers independently of the app's code."""

import re
import subprocess

import psychrolib

from tests.thermal.planck import reference_object_c

psychrolib.SetUnitSystem(psychrolib.SI)


def pdf_text(pdf: bytes, *, layout: bool = True) -> str:
    """The PDF's text as poppler's pdftotext reads it."""
    args = ["pdftotext", "-enc", "UTF-8"] + (["-layout"] if layout else []) + ["-", "-"]
    return subprocess.run(args, input=pdf, capture_output=True, check=True).stdout.decode()


def flat(text: str) -> str:
    """Whitespace runs to one space, so wrapped sentences can be searched."""
    return re.sub(r"\s+", " ", text)


def object_c(apparent_c: float, emissivity: float, reflected_c: float) -> float:
    """Solve ε·W(T) + (1 − ε)·W(T_refl) = W(T_app) for T (opaque surface, τ = 1)."""
    return reference_object_c(apparent_c, emissivity, reflected_c)


def dew_point_c(t_air_c: float, rh_pct: float) -> float:
    return psychrolib.GetTDewPointFromRelHum(t_air_c, rh_pct / 100)


def surface_rh_pct(t_air_c: float, rh_pct: float, t_surface_c: float) -> float:
    """φ_s = φ · p_sat(T_air) / p_sat(T_surface), ASHRAE saturation pressure via psychrolib."""
    return rh_pct * psychrolib.GetSatVapPres(t_air_c) / psychrolib.GetSatVapPres(t_surface_c)
