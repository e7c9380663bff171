"""Ages, cosmic and lookback times checked against closed forms, tables and independent codes."""

from __future__ import annotations

import numpy as np
import pytest
from numpy.testing import assert_allclose

from agepost.exclusions import Exclusion
from agepost.physics import constants
from agepost.physics.background import make_background
from agepost.physics.times import expansion_history, hubble_time_gyr

H0 = 70.0
T_H = constants.HUBBLE_TIME_GYR_KM_S_MPC / H0
# The engine promises 1e-8; closed forms are exact, so a tighter check still leaves
# room only for floating-point rounding of the quadrature sums.
EXACT = 1e-9


def age(**parameters):
    history = expansion_history(make_background(**parameters))
    assert history.exclusion[0] == Exclusion.KEPT
    return history.age_gyr[0]


def test_einstein_de_sitter_age_is_two_thirds_hubble_time():
    # Textbook closed form: matter only, flat, t0 = 2 / (3 H0).
    assert_allclose(age(h0=H0, omega_m=1.0, radiation="none"), 2.0 / 3.0 * T_H, rtol=EXACT)


def test_empty_universe_age_is_hubble_time():
    # Textbook closed form: no matter, Omega_k = 1 (Milne), t0 = 1 / H0.
    assert_allclose(age(h0=H0, omega_m=0.0, omega_k=1.0, radiation="none"), T_H, rtol=EXACT)


def test_radiation_only_age_is_half_hubble_time():
    # Textbook closed form: radiation only, t0 = 1 / (2 H0). The CMB temperature is chosen
    # so that photons plus massless neutrinos fill the budget exactly.
    probe = make_background(h0=H0, omega_m=0.0, radiation="massless", t_cmb=1.0)
    t_cmb = probe.omega_radiation[0] ** -0.25
    bg = make_background(h0=H0, omega_m=0.0, radiation="massless", t_cmb=t_cmb)
    assert abs(bg.omega_de[0]) < 1e-12
    assert_allclose(expansion_history(bg).age_gyr[0], 0.5 * T_H, rtol=EXACT)


@pytest.mark.parametrize("omega_m", [0.05, 0.3, 0.6])
def test_flat_matter_lambda_arcsinh_formula(omega_m):
    # Textbook closed form for flat matter + Lambda without radiation:
    # t(a) = 2 / (3 H0 sqrt(OL)) * asinh(sqrt(OL / Om) a^1.5).
    omega_l = 1.0 - omega_m
    z = np.array([0.0, 0.3, 1.0, 5.0, 1100.0])
    history = expansion_history(make_background(h0=H0, omega_m=omega_m, radiation="none"), z)
    a = 1.0 / (1.0 + z)
    expected = (
        2.0 / (3.0 * np.sqrt(omega_l)) * np.arcsinh(np.sqrt(omega_l / omega_m) * a**1.5) * T_H
    )
    assert_allclose(history.cosmic_time_gyr[0], expected, rtol=EXACT)
    assert_allclose(history.lookback_gyr[0][1:], expected[0] - expected[1:], rtol=1e-8)


@pytest.mark.parametrize("omega_m", [0.1, 0.3, 0.5])
def test_open_matter_only_parametric_form(omega_m):
    # Textbook parametric solution for matter + negative curvature (Omega_k = 1 - Omega_m):
    # H0 t0 = 1/(1-Om) - Om / (2 (1-Om)^1.5) arccosh(2/Om - 1).
    expected = 1 / (1 - omega_m) - omega_m / (2 * (1 - omega_m) ** 1.5) * np.arccosh(
        2 / omega_m - 1
    )
    got = age(h0=H0, omega_m=omega_m, omega_k=1 - omega_m, radiation="none")
    assert_allclose(got, expected * T_H, rtol=EXACT)


@pytest.mark.parametrize("omega_m", [1.5, 3.0])
def test_closed_matter_only_parametric_form(omega_m):
    # Textbook parametric solution for matter + positive curvature (Omega_k = 1 - Omega_m):
    # H0 t0 = Om / (2 (Om-1)^1.5) arccos(2/Om - 1) - 1/(Om-1).
    expected = omega_m / (2 * (omega_m - 1) ** 1.5) * np.arccos(2 / omega_m - 1) - 1 / (omega_m - 1)
    got = age(h0=H0, omega_m=omega_m, omega_k=1 - omega_m, radiation="none")
    assert_allclose(got, expected * T_H, rtol=EXACT)


def test_flat_matter_radiation_exact_formula():
    # Textbook closed form for flat matter + radiation (no Lambda):
    # H0 t(a) = 2 / (3 Om^2) [ (Om a - 2 Or) sqrt(Om a + Or) + 2 Or^1.5 ].
    probe = make_background(h0=H0, omega_m=0.5, radiation="massless")
    omega_r = probe.omega_radiation[0]
    bg = make_background(h0=H0, omega_m=1.0 - omega_r, radiation="massless")
    omega_m = bg.omega_m[0]
    z = np.array([0.0, 10.0, 1100.0, 1e5])
    a = 1.0 / (1.0 + z)
    expected = (
        2
        / (3 * omega_m**2)
        * ((omega_m * a - 2 * omega_r) * np.sqrt(omega_m * a + omega_r) + 2 * omega_r**1.5)
    )
    history = expansion_history(bg, z)
    assert_allclose(history.cosmic_time_gyr[0], expected * T_H, rtol=EXACT)


@pytest.mark.parametrize(
    ("omega_m", "omega_k", "table_age_gyr"),
    [
        (
            1.0,
            0.0,
            9.3,
        ),  # Lahav & Suto 2004, Living Rev. Relativ. 7, 8, Table 1 (Einstein-de Sitter)
        (0.3, 0.0, 13.5),  # Lahav & Suto 2004, Table 1, flat Lambda model, Omega_m = 0.3
    ],
)
def test_lahav_suto_table_ages(omega_m, omega_k, table_age_gyr):
    # The table quotes ages to 0.1 Gyr for H0 = 70 km/s/Mpc and matter-only budgets.
    got = age(h0=70.0, omega_m=omega_m, omega_k=omega_k, radiation="none")
    assert abs(got - table_age_gyr) <= 0.05


def test_planck_2018_age():
    # Planck 2018 results VI, Table 2, TT,TE,EE+lowE+lensing+BAO column (from memory):
    # H0 = 67.66, Omega_m = 0.3111, age 13.787 Gyr, N_eff = 3.046, one 0.06 eV neutrino.
    got = age(h0=67.66, omega_m=0.3111, n_eff=3.046, m_nu=0.06, t_cmb=2.7255)
    assert abs(got - 13.787) <= 0.003


def test_common_practice_flat_lcdm_age_and_radiation_shift():
    # Common practice: H0 = 67.5, Omega_m = 0.315, no radiation gives 13.776 Gyr to 4
    # digits; adding radiation changes the age by about 0.005 Gyr.
    no_radiation = age(h0=67.5, omega_m=0.315, radiation="none")
    assert round(no_radiation, 3) == 13.776
    with_radiation = age(h0=67.5, omega_m=0.315, radiation="massless")
    assert 0.003 <= no_radiation - with_radiation <= 0.007


def test_cosmic_plus_lookback_is_age_for_general_model():
    # Identity of the definitions: t(z) + lookback(z) = t0.
    bg = make_background(
        h0=[60.0, 75.0],
        omega_m=[0.25, 0.4],
        omega_k=[0.1, -0.1],
        w0=[-0.8, -1.2],
        wa=[0.5, -0.5],
        m_nu=[0.1, 0.5],
    )
    history = expansion_history(bg, [0.1, 1.0, 3.0, 1100.0])
    assert_allclose(
        history.cosmic_time_gyr + history.lookback_gyr,
        np.repeat(history.age_gyr[:, None], 4, axis=1),
        rtol=1e-12,
    )


def test_unordered_and_repeated_redshifts_keep_the_given_order():
    bg = make_background(h0=70.0, omega_m=0.3)
    z = [2.0, 0.5, 2.0, 0.0]
    history = expansion_history(bg, z)
    single = [expansion_history(bg, [value]).lookback_gyr[0, 0] for value in z]
    assert_allclose(history.lookback_gyr[0], single, rtol=1e-10)
    assert history.lookback_gyr[0, 3] == 0.0


def test_batch_equals_one_by_one():
    # Vectorisation must not change any sample's result (each sample is integrated alone
    # when it falls off the shared nodes, so both paths are exercised here).
    rng = np.random.default_rng(5)
    n = 50
    parameters = dict(
        h0=rng.uniform(50, 90, n),
        omega_m=rng.uniform(0.05, 0.6, n),
        omega_k=rng.uniform(-0.2, 0.2, n),
        w0=rng.uniform(-2, 0, n),
        wa=rng.uniform(-2, 2, n),
        m_nu=rng.uniform(0, 1, n),
    )
    batch = expansion_history(make_background(**parameters), [0.5, 3.0])
    for i in range(0, n, 7):
        one = expansion_history(
            make_background(**{k: v[i] for k, v in parameters.items()}), [0.5, 3.0]
        )
        assert_allclose(one.lookback_gyr[0], batch.lookback_gyr[i], rtol=1e-8)


def test_hubble_time_constant():
    # 1/H0 = 977.79 Gyr for H0 = 1 km/s/Mpc (IAU parsec and Julian year; from memory to 5 digits).
    assert_allclose(hubble_time_gyr(1.0), 977.79, rtol=1e-5)


def test_excluded_parameters_give_nan_with_reason():
    bg = make_background(
        h0=[70.0, -5.0, np.nan, 70.0], omega_m=[0.3, 0.3, 0.3, 0.0001], m_nu=[0.06, 0.06, 0.06, 1.0]
    )
    history = expansion_history(bg, [1.0])
    assert list(history.exclusion) == [
        Exclusion.KEPT,
        Exclusion.INVALID_PARAMETERS,
        Exclusion.NON_FINITE_INPUT,
        Exclusion.MATTER_BELOW_NEUTRINOS,
    ]
    assert np.isfinite(history.age_gyr[0]) and np.all(np.isnan(history.age_gyr[1:]))
    assert np.all(np.isnan(history.lookback_gyr[1:]))
