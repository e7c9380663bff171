"""Fermi-Dirac neutrino densities against direct quadrature and published normalisations."""

from __future__ import annotations

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy import special

from agepost.physics import constants
from agepost.physics.background import make_background
from agepost.physics.neutrinos import energy_density_ratio, reference_energy_density_ratio


@pytest.mark.parametrize("y", [0.0, 1e-7, 1e-3, 0.37, 1.0, 2.9, 11.0, 357.0, 6000.0, 3e5, 1e8])
def test_table_matches_direct_quadrature(y):
    # The fast table promises 1e-8 relative accuracy (linear interpolation on step 2.5e-4).
    expected = 1.0 if y == 0 else reference_energy_density_ratio(y)
    assert_allclose(energy_density_ratio(y), expected, rtol=1e-8)


def test_limits():
    # Closed forms: F(0) = 1; F -> 180 zeta(3) y / (7 pi^4) when non-relativistic.
    assert energy_density_ratio(0.0) == 1.0
    y = 1e9
    assert_allclose(energy_density_ratio(y), 180 * special.zeta(3) * y / (7 * np.pi**4), rtol=1e-12)


def test_non_relativistic_density_matches_mangano():
    # Mangano et al. 2005: Omega_nu h^2 = sum m_nu / 93.14 eV. Our convention (three species
    # sharing N_eff through their temperature) reproduces it to 0.2% at N_eff = 3.046; the
    # remainder is the T_cmb and decoupling convention.
    h = 0.7
    bg = make_background(h0=100 * h, omega_m=0.3, m_nu=0.3, n_eff=3.046)
    omega_nu_h2 = (bg.omega_m[0] - bg.omega_cb[0]) * h**2
    assert_allclose(omega_nu_h2, 0.3 / 93.14, rtol=2e-3)


def test_photon_density():
    # Omega_gamma h^2 = 2.473e-5 (T_cmb / 2.7255 K)^4 from the radiation constant (DESIGN.md).
    assert_allclose(constants.OMEGA_GAMMA_H2_PER_K4 * 2.7255**4, 2.473e-5, rtol=5e-4)


def test_massive_neutrinos_are_inside_omega_m():
    # Convention: the present massive-neutrino density is part of Omega_m, so the dark
    # energy density does not depend on m_nu.
    light = make_background(h0=70.0, omega_m=0.3, m_nu=0.05)
    heavy = make_background(h0=70.0, omega_m=0.3, m_nu=0.5)
    assert_allclose(light.omega_de, heavy.omega_de, rtol=1e-15)
    assert heavy.omega_cb[0] < light.omega_cb[0]


def test_zero_mass_neutrinos_are_radiation_not_matter():
    # With m_nu = 0 the "massive" species is radiation: nothing is taken out of Omega_m, and
    # the full model equals the massless model exactly (same Friedmann equation).
    full = make_background(h0=70.0, omega_m=[0.3, 0.0], omega_k=[0.0, 1.0], m_nu=0.0)
    massless = make_background(
        h0=70.0, omega_m=[0.3, 0.0], omega_k=[0.0, 1.0], radiation="massless"
    )
    assert_allclose(full.omega_cb, [0.3, 0.0], rtol=0, atol=0)
    a = np.geomspace(1e-6, 1.0, 50)
    assert_allclose(
        full.scaled_h2(np.tile(a, (2, 1))), massless.scaled_h2(np.tile(a, (2, 1))), rtol=1e-14
    )


@pytest.mark.parametrize("setting", [{"n_eff": 0.0}, {"t_cmb": 0.0}])
def test_no_relic_neutrinos_is_a_valid_universe(setting):
    # N_eff = 0 (or T_cmb = 0) removes the neutrinos; the age stays finite and close to
    # the no-radiation value (textbook flat matter + Lambda, arcsinh closed form).
    from agepost.physics.times import expansion_history

    history = expansion_history(make_background(h0=70.0, omega_m=0.3, **setting))
    omega_l = 0.7
    closed = 2 / (3 * np.sqrt(omega_l)) * np.arcsinh(np.sqrt(omega_l / 0.3)) * 977.792 / 70.0
    assert history.exclusion[0] == 0
    assert abs(history.age_gyr[0] - closed) < 0.01
