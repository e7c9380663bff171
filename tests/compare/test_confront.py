"""Object-age test against direct scipy integrals for a one-parameter flat LambdaCDM chain."""

from __future__ import annotations

import math

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy import integrate, stats

from agepost.compare.confront import confront_objects, probability_older
from agepost.compare.objects import AgedObject
from agepost.derive import ModelSettings
from agepost.errors import InputError
from agepost.stats.quantiles import weighted_quantile

# 1/H0 in Gyr for H0 in km/s/Mpc (IAU parsec and Julian year, textbook conversion).
HUBBLE_TIME = 149_597_870.7 * 648_000 / math.pi * 1e6 / (1e9 * 365.25 * 86_400)
OMEGA_M = 0.3
H0_MEAN, H0_SD = 70.0, 2.0


def flat_lcdm_time(z, h0):
    """Textbook flat matter + Lambda cosmic time (arcsinh form)."""
    omega_l = 1 - OMEGA_M
    a = 1 / (1 + z)
    return (
        2
        / (3 * math.sqrt(omega_l))
        * HUBBLE_TIME
        / np.asarray(h0)
        * np.arcsinh(math.sqrt(omega_l / OMEGA_M) * a**1.5)
    )


@pytest.fixture(scope="module")
def h0_grid():
    # One free parameter: H0 on a uniform grid over +-6 sigma, weights the normal pdf, so
    # weighted sums are the trapezoid rule of the posterior integral.
    h0 = np.linspace(H0_MEAN - 6 * H0_SD, H0_MEAN + 6 * H0_SD, 1201)
    return h0, stats.norm.pdf(h0, H0_MEAN, H0_SD)


@pytest.fixture
def grid_run(make_run, h0_grid):
    h0, weights = h0_grid
    return make_run(
        {"H0": h0, "Omega_m": np.full(h0.size, OMEGA_M)},
        {"age": flat_lcdm_time(0.0, h0)},
        weights=weights,
        model=ModelSettings(radiation="none"),
    )


def direct_probability(z, obj):
    """P(universe at z younger than object) = integral p(H0) P(A > t(z; H0)) dH0 (scipy quad)."""
    low, high = H0_MEAN - 6 * H0_SD, H0_MEAN + 6 * H0_SD
    mass = stats.norm.cdf(6) - stats.norm.cdf(-6)
    mu, sigma = obj.age_gyr, obj.age_err_gyr
    truncation = stats.norm.sf(-mu / sigma)

    def integrand(h0):
        return (
            stats.norm.pdf(h0, H0_MEAN, H0_SD)
            * stats.norm.sf((flat_lcdm_time(z, h0) - mu) / sigma)
            / truncation
        )

    value, _ = integrate.quad(integrand, low, high, epsabs=0, epsrel=1e-12)
    return value / mass


def test_gaussian_object_probability_matches_direct_integral(grid_run):
    objects = [AgedObject("Okapi-1", 3.2, 1.75, 0.3), AgedObject("Heron", 0.0, 13.2, 0.8)]
    verdicts = confront_objects(grid_run, objects, z_max=10, rng=3)
    for verdict, obj in zip(verdicts, objects, strict=True):
        # The trapezoid rule on a smooth integrand decaying to 1e-8 at both ends: agreement
        # to ~1e-10; 1e-7 leaves room.
        assert_allclose(verdict.p_universe_younger, direct_probability(obj.z, obj), atol=1e-7)
        # The universe's age at z is the closed form's, per sample and in summary.
        median = weighted_quantile(
            flat_lcdm_time(obj.z, grid_run.parameters["H0"]), 0.5, grid_run.weights
        )
        assert_allclose(verdict.universe_time.median, median, rtol=1e-9)


def test_lower_limit_probability_is_the_h0_tail(grid_run):
    # t(z) is proportional to 1/H0 here, so P(t(z) < T) = P(H0 > H0*) with H0* = 70 t70 / T.
    z, limit = 2.0, 3.0
    obj = AgedObject("Tern", z, limit, 0.0, "lower_limit")
    (verdict,) = confront_objects(grid_run, [obj], z_max=10, rng=0)
    h0_star = 70.0 * flat_lcdm_time(z, 70.0) / limit
    # Grid sum of a step function: wrong by at most one grid cell's weight (spacing
    # 0.02 sigma times the peak density 0.4 / sigma = 0.008).
    assert_allclose(verdict.p_universe_younger, stats.norm.sf(h0_star, H0_MEAN, H0_SD), atol=0.008)
    # For a hard limit the no-formation fraction is the same event, exactly.
    assert verdict.frac_no_formation == pytest.approx(verdict.p_universe_younger, abs=1e-14)
    # Formation redshift of each sample from the closed-form inverse; compare the median.
    h0 = grid_run.parameters["H0"].to_numpy()
    target = flat_lcdm_time(z, h0) - limit
    ok = target > 0
    x = np.sinh(1.5 * math.sqrt(1 - OMEGA_M) * target[ok] * h0[ok] / HUBBLE_TIME)
    z_f = (x * math.sqrt(OMEGA_M / (1 - OMEGA_M))) ** (-2 / 3) - 1
    assert_allclose(
        verdict.formation_z.median, weighted_quantile(z_f, 0.5, grid_run.weights[ok]), rtol=1e-8
    )


def test_gaussian_no_formation_fraction_estimates_the_probability(grid_run):
    # frac_no_formation pairs each sample with one drawn age: a Monte Carlo estimate of
    # p_universe_younger with standard error sqrt(p (1 - p) / ESS); Kish ESS ~ 340 here.
    obj = AgedObject("Okapi-1", 3.2, 1.75, 0.3)
    (verdict,) = confront_objects(grid_run, [obj], z_max=10, rng=11)
    p = verdict.p_universe_younger
    ess = grid_run.weights.sum() ** 2 / np.sum(grid_run.weights**2)
    assert abs(verdict.frac_no_formation - p) < 5 * math.sqrt(p * (1 - p) / ess)


def test_probability_mcse_of_independent_draws(make_run):
    # Independent draws in four chains: the autocorrelation ESS is about n, so the MCSE is
    # about std(q) / sqrt(n) (standard error of a mean).
    rng = np.random.default_rng(4)
    h0 = rng.normal(H0_MEAN, H0_SD, 400)
    run = make_run(
        {"H0": h0, "Omega_m": np.full(h0.size, OMEGA_M)},
        {"age": flat_lcdm_time(0.0, h0)},
        chain_id=np.repeat(np.arange(4), 100),
        model=ModelSettings(radiation="none"),
    )
    obj = AgedObject("Okapi-1", 3.2, 1.75, 0.3)
    (verdict,) = confront_objects(run, [obj], z_max=10, rng=1)
    q = probability_older(flat_lcdm_time(3.2, h0), obj)
    assert 0.6 < verdict.p_universe_younger_mcse / (q.std() / math.sqrt(h0.size)) < 1.6


def test_probability_older_uses_the_truncated_normal():
    # An age 1 +- 1 Gyr truncated at zero: P(A > 0.5) = sf(-0.5) / sf(-1) (scipy.stats).
    obj = AgedObject("x", 1.0, 1.0, 1.0)
    assert_allclose(
        probability_older(np.array([0.5]), obj), stats.norm.sf(-0.5) / stats.norm.sf(-1.0)
    )
    limit = AgedObject("y", 1.0, 2.0, 0.0, "lower_limit")
    assert probability_older(np.array([1.9, 2.1]), limit).tolist() == [1.0, 0.0]


def test_objects_older_than_every_sample(make_run):
    h0 = np.array([69.0, 70.0, 71.0])
    run = make_run(
        {"H0": h0, "Omega_m": np.full(3, OMEGA_M)},
        {"age": flat_lcdm_time(0.0, h0)},
        model=ModelSettings(radiation="none"),
    )
    (verdict,) = confront_objects(
        run, [AgedObject("Ancient", 1.0, 9.0, 0.0, "lower_limit")], z_max=5, rng=0
    )
    assert verdict.p_universe_younger == 1.0
    assert verdict.frac_no_formation == 1.0
    assert verdict.formation_z is None
    assert any("older than every sampled universe" in text for text in verdict.warnings)


def test_object_beyond_the_range_is_refused(grid_run):
    with pytest.raises(InputError, match="beyond the computed range"):
        confront_objects(grid_run, [AgedObject("Far", 12.0, 0.2, 0.05)], z_max=10)


def test_stored_ages_that_the_model_does_not_reproduce_are_refused(make_run):
    h0 = np.array([69.0, 70.0, 71.0])
    run = make_run(
        {"H0": h0, "Omega_m": np.full(3, OMEGA_M)},
        {"age": flat_lcdm_time(0.0, h0)},
        model=ModelSettings(radiation="full"),
    )  # the ages were made without radiation
    with pytest.raises(InputError, match="do not describe its samples"):
        confront_objects(run, [AgedObject("Okapi-1", 3.2, 1.6, 0.3)], z_max=10)


def test_results_do_not_depend_on_the_chunking(grid_run, monkeypatch):
    import agepost.compare.confront as confront_module

    objects = [
        AgedObject("Okapi-1", 3.2, 1.75, 0.3),
        AgedObject("Tern", 2.0, 3.0, 0.0, "lower_limit"),
    ]
    whole = confront_objects(grid_run, objects, z_max=10, rng=5)
    monkeypatch.setattr(confront_module, "CHUNK_ROWS", 97)
    pieces = confront_objects(grid_run, objects, z_max=10, rng=5)
    for a, b in zip(whole, pieces, strict=True):
        assert_allclose(a.p_universe_younger, b.p_universe_younger, rtol=1e-12)  # rounding only
        assert_allclose(a.formation_z.median, b.formation_z.median, rtol=1e-12)
        assert a.frac_no_formation == b.frac_no_formation
