"""Physical constants used by the calculations, each with its unit and source.

The SI defining constants (h, c, k) are exact since the 2019 redefinition of the SI;
the Stefan–Boltzmann constant follows from them [CODATA2018].
"""

import math

#: Offset between the Celsius and Kelvin scales, K (definition of the Celsius scale).
ZERO_CELSIUS_K = 273.15

#: Absolute zero in °C (definition of the Celsius scale).
ABSOLUTE_ZERO_C = -273.15

#: Planck constant h, J s (exact, SI 2019) [CODATA2018].
PLANCK_J_S = 6.62607015e-34

#: Speed of light in vacuum c, m/s (exact, SI 2019) [CODATA2018].
SPEED_OF_LIGHT_M_S = 299_792_458.0

#: Boltzmann constant k, J/K (exact, SI 2019) [CODATA2018].
BOLTZMANN_J_K = 1.380649e-23

#: Stefan–Boltzmann constant σ = 2π⁵k⁴/(15h³c²) = 5.670374419…e−8 W m⁻² K⁻⁴, exact in the
#: 2019 SI [CODATA2018]; computed so that no digits are lost.
STEFAN_BOLTZMANN_W_M2_K4 = (
    2.0 * math.pi**5 * BOLTZMANN_J_K**4 / (15.0 * PLANCK_J_S**3 * SPEED_OF_LIGHT_M_S**2)
)


#: First radiation constant for spectral radiance, 2hc², W m² sr⁻¹ [CODATA2018].
PLANCK_C1L_W_M2_SR = 2.0 * PLANCK_J_S * SPEED_OF_LIGHT_M_S**2

#: Second radiation constant hc/k, m K [CODATA2018].
PLANCK_C2_M_K = PLANCK_J_S * SPEED_OF_LIGHT_M_S / BOLTZMANN_J_K

#: Long-wave infrared band of thermal cameras (uncooled microbolometers), m [practice].
LWIR_BAND_M = (8.0e-6, 14.0e-6)

#: Standard acceleration of gravity, m/s² (CGPM 1901, exact).
STANDARD_GRAVITY_M_S2 = 9.80665

#: Standard atmosphere, Pa (exact, ISO 2533).
STANDARD_PRESSURE_PA = 101_325.0

#: Specific gas constant of dry air, J kg⁻¹ K⁻¹ (ISO 2533).
DRY_AIR_GAS_CONSTANT_J_KG_K = 287.05287

#: Specific heat of dry air at constant pressure near room temperature, J kg⁻¹ K⁻¹;
#: within 0.8 % of the air table of [Incropera2007] (Table A.4, values from memory) from
#: 250 to 400 K (−23 to +127 °C), as measured in the tests.
DRY_AIR_CP_J_KG_K = 1006.0
