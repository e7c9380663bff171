"""Physical constants and unit conversions, each computed from its defining values.

Sources: IAU 2012 Resolution B2 (astronomical unit), IAU 2015 Resolution B2 (parsec from
the au), the Julian year (IAU), CODATA 2018 (G, and the exact SI values of c, h, k_B).
"""

from __future__ import annotations

import math

SPEED_OF_LIGHT_M_S = 299_792_458.0  # exact (SI)
SPEED_OF_LIGHT_KM_S = SPEED_OF_LIGHT_M_S / 1e3
PLANCK_J_S = 6.626_070_15e-34  # exact (SI 2019)
HBAR_J_S = PLANCK_J_S / (2.0 * math.pi)
BOLTZMANN_J_K = 1.380_649e-23  # exact (SI 2019)
BOLTZMANN_EV_K = BOLTZMANN_J_K / 1.602_176_634e-19  # eV per K, exact
GRAVITATIONAL_M3_KG_S2 = 6.674_30e-11  # CODATA 2018

ASTRONOMICAL_UNIT_M = 149_597_870_700.0  # exact (IAU 2012)
PARSEC_M = ASTRONOMICAL_UNIT_M * 648_000.0 / math.pi  # IAU 2015 B2
MEGAPARSEC_KM = PARSEC_M * 1e6 / 1e3
JULIAN_YEAR_S = 365.25 * 86_400.0
GIGAYEAR_S = 1e9 * JULIAN_YEAR_S

#: Hubble time 1/H0 in Gyr for H0 = 1 km/s/Mpc (about 977.79 Gyr).
HUBBLE_TIME_GYR_KM_S_MPC = MEGAPARSEC_KM / GIGAYEAR_S

#: Stefan-Boltzmann constant from its exact SI definition, W m^-2 K^-4.
STEFAN_BOLTZMANN = (
    2.0 * math.pi**5 * BOLTZMANN_J_K**4 / (15.0 * PLANCK_J_S**3 * SPEED_OF_LIGHT_M_S**2)
)

#: Critical density for H0 = 100 km/s/Mpc (h = 1), kg m^-3.
CRITICAL_DENSITY_H2_KG_M3 = (
    3.0 * (100.0 / MEGAPARSEC_KM) ** 2 / (8.0 * math.pi * GRAVITATIONAL_M3_KG_S2)
)

#: Photon density parameter times h^2 per K^4: Omega_gamma h^2 = this * T_cmb^4 (about 2.47e-5
#: at 2.7255 K). Energy density 4 sigma T^4 / c, divided by rho_crit c^2.
OMEGA_GAMMA_H2_PER_K4 = 4.0 * STEFAN_BOLTZMANN / SPEED_OF_LIGHT_M_S**3 / CRITICAL_DENSITY_H2_KG_M3

#: Ratio of one neutrino species' energy density to the photons' while relativistic,
#: (7/8)(4/11)^(4/3), for instantaneous decoupling (N_eff = 3 would give three of these).
NEUTRINO_TO_PHOTON_PER_SPECIES = 7.0 / 8.0 * (4.0 / 11.0) ** (4.0 / 3.0)

#: Neutrino to photon temperature ratio for instantaneous decoupling, (4/11)^(1/3).
NEUTRINO_TEMPERATURE_RATIO = (4.0 / 11.0) ** (1.0 / 3.0)

#: Number of neutrino species that share N_eff (the standard model's three).
N_NEUTRINO_SPECIES = 3
