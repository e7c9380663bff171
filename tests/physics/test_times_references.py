"""The engine against independent numerical references: scipy quad and astropy."""

from __future__ import annotations

import warnings

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy import integrate

from agepost.exclusions import Exclusion
from agepost.physics.background import make_background
from agepost.physics.times import expansion_history, hubble_distance_mpc


def _quad(function, lower, upper):
    # scipy.integrate.quad at tight tolerance, with breakpoints where radiation and matter
    # hand over, as the independent numerical reference.
    # Its round-off warning near 1e-13 is expected and silenced; 1e-12 is far below 1e-8.
    points = [p for p in (1e-5, 1e-4, 1e-3, 1e-2, 0.1) if lower < p < upper]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", integrate.IntegrationWarning)
        value, _ = integrate.quad(
            function, lower, upper, epsabs=0.0, epsrel=1e-12, limit=2000, points=points or None
        )
    return value


@pytest.mark.slow
def test_random_box_against_scipy_quad():
    # Issue requirement: relative error <= 1e-8 over H0 50-90, Omega_m 0.05-0.6,
    # Omega_k -0.2-0.2, w0 -2-0, wa -2-2 (where a big bang exists), m_nu 0-1 eV, z 0-1100.
    rng = np.random.default_rng(20261202)
    n = 60
    bg = make_background(
        h0=rng.uniform(50, 90, n),
        omega_m=rng.uniform(0.05, 0.6, n),
        omega_k=rng.uniform(-0.2, 0.2, n),
        w0=rng.uniform(-2, 0, n),
        wa=rng.uniform(-2, 2, n),
        m_nu=rng.uniform(0, 1, n),
    )
    z = np.array([0.0, 0.02, 0.7, 3.0, 30.0, 1100.0])
    history = expansion_history(bg, z, distances=True)
    kept = np.flatnonzero(history.exclusion == Exclusion.KEPT)
    assert kept.size > 0.9 * n
    worst = 0.0
    with np.errstate(invalid="ignore"):
        for i in kept:
            one = bg.take(np.array([i]))

            def time_integrand(a, one=one):
                return a / np.sqrt(one.scaled_h2(np.array([a]))[0])

            def distance_integrand(a, one=one):
                return 1.0 / np.sqrt(one.scaled_h2(np.array([a]))[0])

            t_h = history.hubble_time_gyr[i]
            age = _quad(time_integrand, 0.0, 1.0)
            worst = max(worst, abs(history.age_gyr[i] / t_h / age - 1))
            for j, a in enumerate(1.0 / (1.0 + z[1:]), start=1):
                cosmic = _quad(time_integrand, 0.0, a)
                lookback = _quad(time_integrand, a, 1.0)
                distance = _quad(distance_integrand, a, 1.0)
                worst = max(
                    worst,
                    abs(history.cosmic_time_gyr[i, j] / t_h / cosmic - 1),
                    abs(history.lookback_gyr[i, j] / t_h / lookback - 1),
                    abs(
                        history.comoving_distance_mpc[i, j]
                        / hubble_distance_mpc(bg.h0[i])
                        / distance
                        - 1
                    ),
                )
    assert worst <= 1e-8, worst


def test_astropy_massless_neutrinos_agree_to_rounding():
    # astropy (independent library) with massless neutrinos integrates the same Friedmann
    # equation; its quad tolerance (~1.5e-8) bounds the agreement.
    cosmology = pytest.importorskip("astropy.cosmology")
    z = np.array([0.1, 0.5, 2.0, 10.0, 1100.0])
    bg = make_background(h0=67.66, omega_m=0.3111, n_eff=3.046, radiation="massless")
    history = expansion_history(bg, z, distances=True)
    reference = cosmology.FlatLambdaCDM(H0=67.66, Om0=0.3111, Tcmb0=2.7255, Neff=3.046)
    assert_allclose(history.age_gyr[0], reference.age(0).value, rtol=1e-8)
    assert_allclose(history.lookback_gyr[0], reference.lookback_time(z).value, rtol=1e-8)
    assert_allclose(
        history.comoving_distance_mpc[0], reference.comoving_distance(z).value, rtol=1e-8
    )


def test_astropy_curved_w0wa_agrees():
    cosmology = pytest.importorskip("astropy.cosmology")
    z = np.array([0.3, 1.0, 4.0])
    bg = make_background(h0=72.0, omega_m=0.28, omega_k=0.05, w0=-0.9, wa=0.3, radiation="massless")
    history = expansion_history(bg, z, distances=True)
    reference = cosmology.w0waCDM(
        H0=72.0, Om0=0.28, Ode0=float(bg.omega_de[0]), w0=-0.9, wa=0.3, Tcmb0=2.7255, Neff=3.044
    )
    assert_allclose(history.age_gyr[0], reference.age(0).value, rtol=1e-8)
    assert_allclose(history.lookback_gyr[0], reference.lookback_time(z).value, rtol=1e-8)


def test_astropy_massive_neutrinos_agree_within_convention_difference():
    # astropy computes massive-neutrino densities with a fitting formula (Komatsu et al.
    # 2011, eq. 26) and scales them by N_eff/3 at fixed temperature; agepost integrates the
    # Fermi-Dirac distribution with the temperature scaled by (N_eff/3)^(1/4). The two
    # differ by (N_eff/3)^(1/4) - 1 = 0.4% of the neutrino density, i.e. about 5e-6 of the
    # age for 0.06 eV: a tolerance of 2e-5 covers it and would catch a neutrino omitted
    # from Omega_m (a 1e-3 effect). astropy's Om0 excludes the massive neutrinos.
    cosmology = pytest.importorskip("astropy.cosmology")
    units = pytest.importorskip("astropy.units")
    z = np.array([0.5, 2.0, 1100.0])
    bg = make_background(h0=67.66, omega_m=0.3111, n_eff=3.046, m_nu=0.06)
    history = expansion_history(bg, z)
    reference = cosmology.FlatLambdaCDM(
        H0=67.66,
        Om0=float(bg.omega_cb[0]),
        Tcmb0=2.7255,
        Neff=3.046,
        m_nu=[0.06, 0.0, 0.0] * units.eV,
    )
    assert_allclose(history.age_gyr[0], reference.age(0).value, rtol=2e-5)
    assert_allclose(history.lookback_gyr[0], reference.lookback_time(z).value, rtol=2e-5)
