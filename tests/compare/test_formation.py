"""Formation redshift: closed forms, scipy root-finding on scipy quadrature, edge cases."""

from __future__ import annotations

import math

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy import constants, integrate, optimize

from agepost.compare.formation import TOP_ONE_PLUS_Z, cosmic_time_table, formation_redshift
from agepost.errors import ComputationError
from agepost.physics.background import make_background

# 1/H0 in Gyr for H0 in km/s/Mpc, from the IAU parsec (648000/pi au, au = 149597870.7 km)
# and the Julian year (textbook unit conversion, written out independently of the package).
MPC_KM = 149_597_870.7 * 648_000 / math.pi * 1e6
HUBBLE_TIME = MPC_KM / (1e9 * 365.25 * 86_400)


def flat_lcdm_time(z, h0, omega_m):
    """Textbook flat matter + Lambda cosmic time: 2/(3 H0 sqrt(OL)) asinh(sqrt(OL/Om) a^1.5)."""
    omega_l = 1 - omega_m
    a = 1 / (1 + np.asarray(z, float))
    return (
        2
        / (3 * math.sqrt(omega_l))
        * HUBBLE_TIME
        / h0
        * np.arcsinh(math.sqrt(omega_l / omega_m) * a**1.5)
    )


def flat_lcdm_formation(target, h0, omega_m):
    """Inverse of :func:`flat_lcdm_time` in closed form."""
    omega_l = 1 - omega_m
    x = np.sinh(1.5 * math.sqrt(omega_l) * np.asarray(target) * h0 / HUBBLE_TIME)
    a = (x * math.sqrt(omega_m / omega_l)) ** (2 / 3)
    return 1 / a - 1


def test_flat_lcdm_matches_the_closed_form_over_many_decades():
    # Ages from 1% of the universe at z = 2 up to a hair below it: formation redshifts from
    # ~2 to beyond the table top (1 + z = 1e8), all against the textbook closed form.
    h0, om = 70.0, 0.3
    t_obj = flat_lcdm_time(2.0, h0, om)
    fractions = np.array([0.01, 0.3, 0.9, 0.999, 1 - 1e-9, 1 - 1e-14])
    ages = fractions * t_obj
    background = make_background(h0=np.full(ages.size, h0), omega_m=om, radiation="none")
    z_f, t_object = formation_redshift(background, 2.0, ages)
    assert_allclose(t_object, t_obj, rtol=1e-10)  # engine accuracy goal is 1e-8; observed 1e-13
    expected = flat_lcdm_formation(t_obj - ages, h0, om)
    assert expected[-1] > TOP_ONE_PLUS_Z  # the last root lies beyond the table
    # Relative accuracy of 1 + z_f stated in agepost.compare.formation: 1e-9. The last two
    # targets are 1e-9 and 1e-14 of t_obj: subtracting ages loses digits in float64 (a
    # relative error of ~1e-16 t_obj / target), so they are allowed that much more.
    assert_allclose((1 + z_f[:4]) / (1 + expected[:4]), 1.0, rtol=1e-9)
    assert_allclose((1 + z_f[4]) / (1 + expected[4]), 1.0, rtol=1e-6)
    assert_allclose((1 + z_f[5]) / (1 + expected[5]), 1.0, rtol=3e-2)


def _scaled_h2(a, omega_m, omega_k, w0, wa, omega_r=0.0):
    """a^4 E^2(a) with CPL dark energy (Chevallier-Polarski-Linder density law, textbook)."""
    omega_de = 1 - omega_m - omega_k - omega_r
    de = a ** (1 - 3 * (w0 + wa)) * math.exp(-3 * wa * (1 - a))
    return omega_r + omega_m * a + omega_k * a**2 + omega_de * de


def _quad_time(z, h0, *model):
    """Cosmic time by scipy quad over a: t(a) = integral_0^a a' da' / sqrt(a'^4 E^2)."""
    value, _ = integrate.quad(
        lambda a: a / math.sqrt(_scaled_h2(a, *model)),
        0.0,
        1 / (1 + z),
        epsabs=0,
        epsrel=1e-12,
        limit=400,
    )
    return HUBBLE_TIME / h0 * value


@pytest.mark.parametrize(
    ("h0", "model", "age"),
    [
        (67.0, (0.32, 0.05, -0.9, 0.3), 1.0),
        (73.0, (0.28, -0.03, -1.1, -0.4), 0.3),
        (60.0, (0.45, 0.0, -0.8, 0.0), 1.2),
    ],
)
def test_curved_w0wa_matches_brentq_on_quad(h0, model, age):
    # Reference: scipy.optimize.brentq on scipy.integrate.quad times, tolerances 1e-13.
    omega_m, omega_k, w0, wa = model
    background = make_background(
        h0=[h0], omega_m=omega_m, omega_k=omega_k, w0=w0, wa=wa, radiation="none"
    )
    z_f, t_object = formation_redshift(background, 3.2, age)
    t_ref = _quad_time(3.2, h0, *model)
    assert_allclose(t_object[0], t_ref, rtol=1e-10)
    root = optimize.brentq(
        lambda z: _quad_time(z, h0, *model) - (t_ref - age), 3.2, 1e5, xtol=1e-12, rtol=1e-14
    )
    assert_allclose((1 + z_f[0]) / (1 + root), 1.0, rtol=1e-9)


def test_radiation_model_matches_brentq_with_independent_photon_density():
    # Photons from the radiation constant (scipy.constants, CODATA) and N_eff = 3.044 massless
    # neutrinos at 7/8 (4/11)^(4/3) per species (textbook): the 'massless' radiation model.
    h0, omega_m, n_eff = 68.0, 0.31, 3.044
    a_rad = 4 * constants.Stefan_Boltzmann / constants.c
    rho_crit = 3 * (h0 * 1e3 / (MPC_KM * 1e3)) ** 2 / (8 * math.pi * constants.G)
    omega_gamma = a_rad * 2.7255**4 / constants.c**2 / rho_crit
    omega_r = omega_gamma * (1 + 7 / 8 * (4 / 11) ** (4 / 3) * n_eff)
    background = make_background(h0=[h0], omega_m=omega_m, n_eff=n_eff, radiation="massless")
    model = (omega_m, 0.0, -1.0, 0.0, omega_r)
    z_f, t_object = formation_redshift(background, 6.0, 0.6)
    t_ref = _quad_time(6.0, h0, *model)
    assert_allclose(t_object[0], t_ref, rtol=1e-9)
    root = optimize.brentq(
        lambda z: _quad_time(z, h0, *model) - (t_ref - 0.6), 6.0, 1e5, xtol=1e-12, rtol=1e-14
    )
    assert_allclose((1 + z_f[0]) / (1 + root), 1.0, rtol=1e-8)  # photon constants agree to ~1e-9


def test_objects_older_than_the_universe_have_no_formation():
    background = make_background(h0=[70.0, 70.0, 70.0], omega_m=0.3, radiation="none")
    t_obj = flat_lcdm_time(1.0, 70.0, 0.3)
    z_f, _ = formation_redshift(background, 1.0, np.array([t_obj + 0.1, t_obj, 0.5 * t_obj]))
    assert np.isnan(z_f[0]) and np.isnan(z_f[1])
    assert np.isfinite(z_f[2])


def test_one_table_serves_several_objects():
    background = make_background(h0=[65.0, 72.0], omega_m=[0.35, 0.28], radiation="none")
    table = cosmic_time_table(background, [0.0, 2.0, 6.0])
    scale_factors, times, _ = table
    assert scale_factors[0] == 0 and scale_factors[-1] == 1
    assert np.all(np.diff(times, axis=1) > 0)
    shared, _ = formation_redshift(background, 2.0, 1.0, table=table)
    alone, _ = formation_redshift(background, 2.0, 1.0)
    assert_allclose(shared, alone, rtol=1e-12)
    with pytest.raises(ComputationError, match="not a node"):
        formation_redshift(background, 3.0, 1.0, table=table)
