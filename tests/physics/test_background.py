"""The density budget against an independent Friedmann equation written in the test."""

from __future__ import annotations

import math

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy import constants, integrate

from agepost.physics.background import make_background


def independent_scaled_h2(a, *, h0, omega_m, omega_k, w0, wa, m_nu, n_eff, t_cmb):
    """a^4 E^2(a) from scipy.constants (CODATA) and direct Fermi-Dirac quadrature.

    Conventions of DESIGN.md: one massive species holding m_nu, three species sharing
    N_eff through T_nu = (4/11)^(1/3) (N_eff/3)^(1/4) T_cmb, massive-neutrino density today
    inside Omega_m, dark energy closing the budget.
    """
    h0_si = h0 * 1e3 / (1e6 * constants.parsec)
    rho_crit = 3 * h0_si**2 / (8 * math.pi * constants.G)  # kg m^-3
    # Photon energy density: (pi^2/15) (kT)^4 / (hbar c)^3, as a mass density.
    rho_gamma = math.pi**2 / 15 * (constants.k * t_cmb) ** 4 / (constants.hbar * constants.c) ** 3
    omega_gamma = rho_gamma / constants.c**2 / rho_crit
    species = omega_gamma * 7 / 8 * (4 / 11) ** (4 / 3) * n_eff / 3
    t_nu = (4 / 11) ** (1 / 3) * (n_eff / 3) ** 0.25 * t_cmb
    y0 = m_nu * constants.eV / (constants.k * t_nu)

    def fermi_dirac_ratio(y):
        def integrand(x):
            return x**2 * math.sqrt(x * x + y * y) / (math.exp(x) + 1.0) if x < 700 else 0.0

        top = integrate.quad(integrand, 0, np.inf, epsabs=0, epsrel=1e-12, limit=400)[0]
        return top / (7 * math.pi**4 / 120)

    omega_nu_today = species * fermi_dirac_ratio(y0)
    omega_cb = omega_m - omega_nu_today
    omega_de = 1 - omega_k - omega_m - omega_gamma - 2 * species
    de = omega_de * a ** (1 - 3 * (w0 + wa)) * math.exp(-3 * wa * (1 - a))
    return (
        omega_gamma
        + 2 * species
        + species * fermi_dirac_ratio(y0 * a)
        + omega_cb * a
        + omega_k * a**2
        + de
    )


@pytest.mark.parametrize(
    "parameters",
    [
        dict(
            h0=67.66,
            omega_m=0.3111,
            omega_k=0.0,
            w0=-1.0,
            wa=0.0,
            m_nu=0.06,
            n_eff=3.046,
            t_cmb=2.7255,
        ),
        dict(h0=55.0, omega_m=0.45, omega_k=-0.15, w0=-1.6, wa=1.2, m_nu=0.9, n_eff=3.5, t_cmb=2.7),
        dict(h0=85.0, omega_m=0.1, omega_k=0.2, w0=-0.4, wa=-1.5, m_nu=0.2, n_eff=2.8, t_cmb=2.8),
    ],
)
def test_budget_against_independent_friedmann_equation(parameters):
    # Independent implementation above (scipy.constants CODATA values, textbook photon
    # energy density, Fermi-Dirac integral by scipy quad). The tolerance covers CODATA
    # 2018 vs our exact-SI constants and the 1e-8 neutrino table.
    bg = make_background(**parameters)
    a = np.geomspace(1e-7, 1.0, 15)
    ours = bg.scaled_h2(a[None, :])[0]
    reference = np.array([independent_scaled_h2(v, **parameters) for v in a])
    assert_allclose(ours, reference, rtol=2e-8)
