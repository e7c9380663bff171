"""Age-prior reweighting: analytic Gaussian products, truncations and the ESS it leaves."""

from __future__ import annotations

import math

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy import stats

from agepost.compare.reweight import AgeConstraint, reweight_run, reweight_weights
from agepost.errors import ComputationError, ConfigError
from agepost.stats.quantiles import kish_ess

MU, SIGMA = 13.8, 0.3
#: H0 = K / t0 ties a parameter to the age (as for a flat universe of fixed Omega_m).
K = 13.8 * 68.0


@pytest.fixture(scope="module")
def ages():
    # Deterministic samples of N(13.8, 0.3): its quantiles at (i - 1/2)/n (scipy.stats), in
    # a shuffled order so that, as one chain, they look like independent draws.
    grid = stats.norm.ppf((np.arange(40_000) + 0.5) / 40_000, MU, SIGMA)
    return np.random.default_rng(8).permutation(grid)


@pytest.fixture
def age_run(make_run, ages):
    return make_run({"H0": K / ages, "Omega_m": np.full(ages.size, 0.31)}, {"age": ages})


def test_gaussian_constraint_gives_the_analytic_product(age_run):
    # Textbook: N(mu1, s1) N(mu2, s2) is proportional to N(mu, s) with 1/s^2 = 1/s1^2 + 1/s2^2
    # and mu = s^2 (mu1/s1^2 + mu2/s2^2).
    constraint = AgeConstraint("gaussian", 13.5, 0.2)
    result = reweight_run(age_run, constraint, ess_floor=0)
    precision = 1 / SIGMA**2 + 1 / 0.2**2
    mu, s = (MU / SIGMA**2 + 13.5 / 0.2**2) / precision, precision**-0.5
    after = result.after["age"]
    # The 40000-point quantile grid reproduces a normal's moments to ~1e-5 relative.
    assert_allclose(after.mean, mu, rtol=1e-6)
    assert_allclose(after.std, s, rtol=1e-4)
    assert_allclose(after.median, mu, atol=1e-4 * s)
    assert_allclose(
        after.intervals["0.68"].equal_tail, mu + s * stats.norm.ppf([0.16, 0.84]), atol=2e-3 * s
    )
    assert_allclose(
        after.intervals["0.95"].equal_tail, mu + s * stats.norm.ppf([0.025, 0.975]), atol=2e-3 * s
    )
    # H0 = K / t0 is monotone in t0, so its median follows the age's.
    assert_allclose(result.after["H0"].median, K / after.median, rtol=1e-6)
    assert result.before["age"].median == pytest.approx(MU, abs=1e-6)
    # Kish ESS of the new weights, from its formula.
    assert_allclose(result.ess_kish_after, kish_ess(result.weights), rtol=1e-12)
    assert result.ess_kish_before == pytest.approx(40_000)


def test_hard_lower_limit_truncates(age_run):
    # A truncated normal (scipy.stats.truncnorm) is what a hard limit leaves.
    result = reweight_run(age_run, AgeConstraint("lower_limit", 13.9), ess_floor=0)
    a = (13.9 - MU) / SIGMA
    truncated = stats.truncnorm(a, np.inf, loc=MU, scale=SIGMA)
    assert_allclose(result.after["age"].median, truncated.median(), atol=1e-4)
    assert_allclose(result.after["age"].mean, truncated.mean(), atol=1e-5)
    # Kish ESS of 0/1 weights is the number kept: n P(t0 > 13.9).
    assert_allclose(result.ess_kish_after, 40_000 * stats.norm.sf(a), rtol=1e-3)


def test_soft_lower_limit_matches_gaussian_selection_formula(age_run):
    # N(mu, s) times Phi((t - T)/c) has mean mu + s^2/r phi(d)/Phi(d) with r = sqrt(s^2 + c^2),
    # d = (mu - T)/r (the normal-integral identity of Owen 1980, Commun. Stat. B 9, 389,
    # entry 10,010.8: integral phi(x) Phi(a + b x) dx = Phi(a / sqrt(1 + b^2))).
    limit, c = 14.0, 0.25
    result = reweight_run(age_run, AgeConstraint("lower_limit", limit, c), ess_floor=0)
    r = math.hypot(SIGMA, c)
    d = (MU - limit) / r
    expected = MU + SIGMA**2 / r * stats.norm.pdf(d) / stats.norm.cdf(d)
    assert_allclose(result.after["age"].mean, expected, rtol=1e-6)


def test_ess_floor_warning(age_run):
    narrow = AgeConstraint(
        "gaussian", 13.8, 0.002
    )  # keeps ~ n * 0.002 / 0.3 * sqrt(2) effective rows
    result = reweight_run(age_run, narrow, ess_floor=1000)
    assert result.ess_kish_after < 1000
    assert any("below the floor 1000" in text for text in result.warnings)
    assert not any("floor" in text for text in reweight_run(age_run, narrow, ess_floor=10).warnings)


@pytest.mark.parametrize(
    "constraint",
    [AgeConstraint("lower_limit", 16.0), AgeConstraint("gaussian", 40.0, 0.1)],
)
def test_constraint_leaving_nothing_is_an_error(age_run, constraint):
    with pytest.raises(ComputationError, match="leaves zero effective samples"):
        reweight_run(age_run, constraint)


def test_zero_weight_rows_stay_zero():
    new = reweight_weights([13.0, 14.0, 15.0], [0.0, 1.0, 2.0], AgeConstraint("lower_limit", 13.5))
    assert new.tolist() == [0.0, 1.0, 2.0]


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"kind": "gaussian", "age_gyr": 13.0}, "needs its one-sigma error"),
        ({"kind": "lower_limit", "age_gyr": -1.0}, "must be finite and > 0"),
        ({"kind": "lower_limit", "age_gyr": float("nan")}, "must be finite and > 0"),
        ({"kind": "lower_limit", "age_gyr": 12.0, "age_err_gyr": -0.1}, "must be finite and >= 0"),
        ({"kind": "upper_limit", "age_gyr": 12.0}, "unknown"),
    ],
)
def test_bad_constraints(kwargs, message):
    with pytest.raises(ConfigError, match=message):
        AgeConstraint(**kwargs)


def test_bad_floor(age_run):
    with pytest.raises(ConfigError, match="ESS floor"):
        reweight_run(age_run, AgeConstraint("lower_limit", 13.0), ess_floor=-1)
