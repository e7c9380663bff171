"""Log-likelihoods and the distances they use, against independent references."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import integrate

from agepost.errors import ConfigError
from agepost.fit.data import DistanceData
from agepost.fit.likelihood import (
    ComovingDistance,
    FactoredCovariance,
    Posterior,
    gaussian_log_likelihood,
    offset_marginalised_log_likelihood,
)
from agepost.fit.priors import FitModel, FreeParameter, Prior
from agepost.physics.background import make_background
from agepost.physics.distances import distance_modulus, volume_averaged_distance


def random_covariance(rng, n):
    a = rng.standard_normal((n, n))
    return 0.01 * (a @ a.T / n + np.eye(n))


def test_offset_marginalisation_equals_numerical_integration(rng):
    # scipy.integrate.quad of exp(-chi^2(M) / 2) over the offset M, for two residual vectors
    n = 6
    covariance = random_covariance(rng, n)
    factored = FactoredCovariance.from_matrix(covariance)
    residuals = rng.normal(0.3, 0.2, (2, n))
    analytic = offset_marginalised_log_likelihood(residuals, factored)
    inverse = np.linalg.inv(covariance)
    for row, expected in zip(residuals, analytic, strict=True):

        def likelihood(m, r=row):
            d = r - m
            return math.exp(-0.5 * d @ inverse @ d)

        value, _ = integrate.quad(
            likelihood, -20, 20, points=[float(np.mean(row))], epsabs=0, epsrel=1e-12
        )
        assert expected == pytest.approx(math.log(value), abs=1e-9)


def test_gaussian_log_likelihood_is_minus_half_chi_squared(rng):
    # chi^2 = r^T C^-1 r with numpy's solver as reference
    covariance = random_covariance(rng, 8)
    residuals = rng.standard_normal((3, 8))
    expected = [-0.5 * r @ np.linalg.solve(covariance, r) for r in residuals]
    got = gaussian_log_likelihood(residuals, FactoredCovariance.from_matrix(covariance))
    np.testing.assert_allclose(got, expected, rtol=1e-12)


def test_interpolated_distance_matches_the_direct_calculation(rng):
    # the interpolation error bound stated in agepost.fit.likelihood: < 3e-6 relative for z <= 3
    # over the stated parameter box; the test allows 5e-6
    n = 48
    background = make_background(
        h0=rng.uniform(60, 80, n),
        omega_m=rng.uniform(0.05, 0.9, n),
        omega_k=rng.uniform(-0.3, 0.3, n),
        w0=rng.uniform(-2, -0.4, n),
        wa=rng.uniform(-2, 1, n),
    )
    z = np.concatenate([np.geomspace(1e-4, 3.0, 300), rng.uniform(0, 3.0, 200)])
    interpolated = ComovingDistance(z)
    assert interpolated.interpolated
    direct = ComovingDistance(z, direct=True)(background)
    got = interpolated(background)
    usable = np.all(np.isfinite(direct), axis=1)
    assert usable.sum() > n // 2
    np.testing.assert_allclose(got[usable], direct[usable], rtol=5e-6)
    np.testing.assert_array_equal(np.isfinite(got), np.isfinite(direct))


def test_few_redshifts_are_integrated_directly():
    assert not ComovingDistance(np.array([0.5, 1.0, 0.5])).interpolated


@pytest.mark.parametrize(
    ("omega_k", "w0", "wa"), [(0.0, -1.0, 0.0), (0.08, -0.8, 0.3), (-0.1, -1.2, -0.5)]
)
def test_distance_modulus_matches_astropy(omega_k, w0, wa):
    # astropy (independent reference) w0waCDM with Tcmb0 = 0 is the radiation model "none"
    from astropy.cosmology import w0waCDM

    z = np.linspace(0.01, 2.5, 400)
    background = make_background(
        h0=[70.0], omega_m=[0.3], omega_k=[omega_k], w0=[w0], wa=[wa], radiation="none"
    )
    chi = ComovingDistance(z)(background)
    mu = distance_modulus(background, z, chi)[0]
    reference = (
        w0waCDM(H0=70.0, Om0=0.3, Ode0=0.7 - omega_k, w0=w0, wa=wa, Tcmb0=0.0).distmod(z).value
    )
    np.testing.assert_allclose(
        mu, reference, rtol=0, atol=2e-5
    )  # 2e-5 mag ~ the 3e-6 interpolation bound


def test_ratio_predictions_match_astropy_distances():
    # D_M, D_H = c/H and D_V = (D_M^2 c z / H)^(1/3) from astropy (independent reference), over r_d
    from astropy.cosmology import FlatwCDM

    z = np.array([0.3, 0.7, 0.7, 1.2])
    quantities = ("DV", "DM", "DH", "DV")
    data = DistanceData("sound_horizon_ratio", "r", z, np.ones(4), np.eye(4), quantities, {})
    model = FitModel(
        (FreeParameter("r_d", Prior("uniform", 100, 200), 150.0),),
        {"H0": 70.0, "Omega_m": 0.3, "w0": -0.9},
        radiation="none",
    )
    posterior = Posterior([data], model)
    values = model.values(np.array([[150.0]]))
    background = make_background(h0=70.0, omega_m=0.3, w0=-0.9, radiation="none")
    predicted = (
        posterior._prediction(data, background, posterior.distances(background), values)[0] * 150.0
    )
    cosmo = FlatwCDM(H0=70.0, Om0=0.3, w0=-0.9, Tcmb0=0.0)
    d_m = cosmo.comoving_transverse_distance(z).value
    d_h = 299792.458 / cosmo.H(z).value
    d_v = np.cbrt(d_m**2 * z * d_h)
    np.testing.assert_allclose(predicted, [d_v[0], d_m[1], d_h[2], d_v[3]], rtol=1e-8)
    core = volume_averaged_distance(background, z[:1], posterior.distances(background)[:, :1])
    np.testing.assert_allclose(core[0, 0], d_v[0], rtol=1e-8)


def test_posterior_is_vectorised_and_minus_infinity_where_undefined(make_synthetic, rng, truth):
    model = FitModel(
        (
            FreeParameter("H0", Prior("uniform", 50, 90), 70.0),
            FreeParameter("Omega_m", Prior("uniform", 0.0, 3.0), 0.3),
            FreeParameter("Omega_k", Prior("uniform", -1.0, 1.0), 0.0),
            FreeParameter("r_d", Prior("uniform", 100, 200), 147.0),
        ),
        {"w0": -1.0},
    )
    posterior = Posterior(make_synthetic(rng), model)
    theta = np.array(
        [
            [68.0, 0.32, 0.0, 148.0],  # fine
            [95.0, 0.32, 0.0, 148.0],  # outside the H0 prior
            [68.0, 0.05, -0.9, 148.0],  # Omega_Lambda = 1.85 > boundary: no big bang
        ]
    )
    values = posterior(theta)
    assert values.shape == (3,)
    assert np.isfinite(values[0]) and values[1] == -np.inf and values[2] == -np.inf
    # one point alone gives the same answer (to the quadrature tolerance: the core shares
    # nodes within a batch)
    assert posterior(theta[0])[0] == pytest.approx(values[0], abs=1e-8)
    assert posterior.evaluations == 3  # the prior-excluded point cost no likelihood


def test_noise_free_data_peak_at_the_truth(make_synthetic, rng, truth):
    # with no noise the likelihood is largest at the generating parameters
    model = FitModel(
        (
            FreeParameter("Omega_m", Prior("uniform", 0.1, 0.6), 0.3),
            FreeParameter("w0", Prior("uniform", -2, 0), -1.0),
        ),
        {"H0": truth["H0"], "r_d": truth["r_d"]},
    )
    posterior = Posterior(make_synthetic(rng, noise=False), model)
    best = posterior(np.array([[truth["Omega_m"], truth["w0"]]]))[0]
    around = posterior(
        np.array(
            [
                [truth["Omega_m"] + d1, truth["w0"] + d2]
                for d1 in (-0.01, 0.01)
                for d2 in (-0.02, 0.02)
            ]
        )
    )
    assert np.all(around < best)


def test_sound_horizon_and_ratio_data_go_together(make_synthetic, rng):
    data = make_synthetic(rng)
    model = FitModel((FreeParameter("H0", Prior("uniform", 50, 90), 70.0),), {"Omega_m": 0.3})
    with pytest.raises(ConfigError, match="sound_horizon_ratio data need r_d"):
        Posterior(data, model)
    with_rd = FitModel(
        (FreeParameter("H0", Prior("uniform", 50, 90), 70.0),), {"Omega_m": 0.3, "r_d": 147.0}
    )
    with pytest.raises(ConfigError, match="r_d is only used by sound_horizon_ratio data"):
        Posterior(data[:2], with_rd)
    with pytest.raises(ConfigError, match="no data set given"):
        Posterior([], model)


@given(shift=st.floats(-30.0, 30.0), seed=st.integers(0, 2**32 - 1))
@settings(max_examples=40, deadline=None)
def test_marginalised_likelihood_ignores_a_common_offset(shift, seed):
    # law: the offset is integrated out, so adding one constant to every residual changes nothing
    rng = np.random.default_rng(seed)
    factored = FactoredCovariance.from_matrix(random_covariance(rng, 5))
    residuals = rng.standard_normal((1, 5))
    np.testing.assert_allclose(
        offset_marginalised_log_likelihood(residuals + shift, factored),
        offset_marginalised_log_likelihood(residuals, factored),
        rtol=0,
        atol=1e-8 * (1 + shift**2),  # rounding of A - B^2/E grows with the shift squared
    )
