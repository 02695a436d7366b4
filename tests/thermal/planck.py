"""The tests' own solver of the radiometric measurement equation, independent of the app.

Planck's law is integrated over 8–14 µm by adaptive quadrature (scipy.integrate.quad) with
scipy's CODATA constants, and the measurement equation
W(apparent) = ε τ W(object) + (1 − ε) τ W(reflected) + (1 − τ) W(atmosphere)
is solved for the object temperature with scipy.optimize.brentq. It shares no code and no
table with survey/thermal; every test that checks a corrected temperature uses it.
"""

import math
from functools import cache

from scipy import constants
from scipy.integrate import quad
from scipy.optimize import brentq

C1 = 2.0 * constants.h * constants.c**2
C2 = constants.h * constants.c / constants.k


@cache
def reference_radiance(t_c: float, band: str = "lwir") -> float:
    """Band radiance of a blackbody, W m⁻² sr⁻¹ (lwir: 8–14 µm), or σT⁴ for ``total``."""
    t_k = t_c + 273.15
    if band == "total":
        return constants.sigma * t_k**4
    value, _ = quad(
        lambda wavelength: C1 / wavelength**5 / math.expm1(C2 / (wavelength * t_k)),
        8e-6,
        14e-6,
        epsabs=0.0,
        epsrel=1e-12,
    )
    return value


def reference_object_c(apparent, eps, reflected, tau=1.0, atmosphere=None, band="lwir"):
    """The object temperature, °C, that explains an apparent reading (brentq to 1e-9 K)."""
    atmosphere = reflected if atmosphere is None else atmosphere
    measured = reference_radiance(apparent, band)
    background = (1 - eps) * tau * reference_radiance(reflected, band) + (
        1 - tau
    ) * reference_radiance(atmosphere, band)
    return brentq(
        lambda t: eps * tau * reference_radiance(t, band) + background - measured,
        -99.0,
        999.0,
        xtol=1e-9,
    )
