"""Difference of two independent posteriors: analytic Gaussian answers, exact sign law, bounds."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose
from scipy import stats

from agepost.errors import ComputationError, ConfigError
from agepost.stats.difference import (
    difference_summary,
    sign_probabilities,
    tension_from_probability,
)


def quantile_grid(mean: float, sigma: float, n: int) -> np.ndarray:
    """Deterministic 'samples' of a normal: its quantiles at (i - 1/2)/n (scipy.stats)."""
    return stats.norm.ppf((np.arange(n) + 0.5) / n, loc=mean, scale=sigma)


@pytest.fixture(scope="module")
def gaussians():
    first = quantile_grid(13.80, 0.020, 20_000)
    second = quantile_grid(13.86, 0.032, 20_000)
    return first, second


def test_two_gaussians_give_the_analytic_difference_and_tension(gaussians):
    # Textbook: the difference of independent normals is normal with mean mu2 - mu1 and
    # variance s1^2 + s2^2; P(D < 0) = Phi(-delta / s_d) and the tension is delta / s_d.
    first, second = gaussians
    delta, s_d = 0.06, float(np.hypot(0.020, 0.032))
    result = difference_summary(first, None, second, None, levels=(0.68, 0.95), rng=7)
    # Sign probability is exact over the pairs; the only error is the 20000-point quantile
    # grid standing in for each normal (CDF error <= 1/(2n) = 2.5e-5 per side).
    assert_allclose(result.prob_same_sign, stats.norm.cdf(delta / s_d), atol=3e-5)
    assert_allclose(result.tension_sigma, delta / s_d, atol=3e-4)  # 3e-5 / phi(1.59) ~ 2.7e-4
    assert not result.tension_is_lower_bound
    # Mean and std are exact moments; the grid's std is short of sigma by ~3e-5 relative
    # (its tails stop at the 1/(2n) quantiles).
    assert_allclose(result.mean, delta, rtol=1e-9)
    assert_allclose(result.std, s_d, rtol=1e-4)
    assert_allclose(result.tension_sigma_gaussian, delta / s_d, rtol=1e-4)
    # Median and interval ends come from 200000 resampled pairs: the Monte Carlo standard
    # error of a normal quantile is sqrt(p(1-p))/phi(z_p)/sqrt(N) s_d (<= 0.006 s_d at 2.5%);
    # tolerances are about four of those.
    assert_allclose(result.median, delta, atol=0.012 * s_d)
    for key, level in (("0.68", 0.68), ("0.95", 0.95)):
        half = stats.norm.ppf((1 + level) / 2) * s_d
        low, high = result.intervals[key].equal_tail
        assert_allclose([low, high], [delta - half, delta + half], atol=0.025 * s_d)
        hpd_low, hpd_high = result.intervals[key].hpd  # symmetric: HPD = equal-tailed
        assert_allclose([hpd_low, hpd_high], [delta - half, delta + half], atol=0.03 * s_d)
        assert_allclose(
            result.intervals[key].upper, delta + stats.norm.ppf(level) * s_d, atol=0.025 * s_d
        )


def test_weighted_sets_agree_with_the_same_gaussians():
    # Uniform draws importance-weighted by normal pdfs stand for the same two normals.
    rng = np.random.default_rng(5)
    x = rng.uniform(-1.0, 1.0, 400_000)
    y = rng.uniform(-1.0, 1.5, 400_000)
    u, v = stats.norm.pdf(x, 0.0, 0.1), stats.norm.pdf(y, 0.3, 0.15)
    result = difference_summary(x, u, y, v, levels=(0.68,), rng=1, n_draws=100_000)
    s_d = np.hypot(0.1, 0.15)
    # Kish ESS of these weights is about 1e5; the sign probability's sampling error is
    # then ~ sqrt(p(1-p)/ESS) ~ 1e-3 (tolerance 5e-3).
    assert_allclose(result.prob_same_sign, stats.norm.cdf(0.3 / s_d), atol=5e-3)
    assert_allclose(result.mean, 0.3, atol=5e-3)
    assert_allclose(result.median, 0.3, atol=0.02 * s_d)


def test_difference_has_second_minus_first_sign(gaussians):
    first, second = gaussians
    forward = difference_summary(first, None, second, None, rng=2, n_draws=20_000)
    backward = difference_summary(second, None, first, None, rng=2, n_draws=20_000)
    assert forward.median > 0 > backward.median
    assert_allclose(forward.prob_same_sign, backward.prob_same_sign, rtol=1e-12)


def test_seeded_draws_are_reproducible(gaussians):
    first, second = gaussians
    one = difference_summary(first, None, second, None, rng=11, n_draws=5000)
    two = difference_summary(first, None, second, None, rng=11, n_draws=5000)
    other = difference_summary(first, None, second, None, rng=12, n_draws=5000)
    assert one.median == two.median
    assert one.median != other.median


def test_disjoint_sets_give_a_lower_bound():
    first = np.linspace(0.0, 1.0, 50)
    second = np.linspace(2.0, 3.0, 40)
    result = difference_summary(first, None, second, None, rng=0, n_draws=1000)
    assert result.prob_same_sign == 1.0
    assert result.tension_is_lower_bound
    # Bound from the resolution 1/(ESS_1 ESS_2) with equal weights (ESS = n).
    assert_allclose(result.tension_sigma, stats.norm.isf(1.0 / (50 * 40)), rtol=1e-12)
    assert any("at least" in text for text in result.warnings)


def test_intervals_not_quoted_without_effective_samples():
    result = difference_summary([0.0, 1.0, 2.0], None, [1.0, 2.0, 4.0], None, levels=(0.95,), rng=0)
    assert np.isnan(result.intervals["0.95"].equal_tail).all()
    assert any("not quoted" in text for text in result.warnings)


def test_tension_from_probability_matches_normal_cdf():
    # scipy.stats.norm: Phi(2) -> 2 sigma, Phi(0) -> 0.
    assert_allclose(tension_from_probability(stats.norm.cdf(2.0)), 2.0, rtol=1e-10)
    assert tension_from_probability(0.5) == 0.0
    assert tension_from_probability(1.0) == np.inf
    with pytest.raises(ConfigError):
        tension_from_probability(0.3)


def test_ties_count_half():
    assert sign_probabilities([1.0], None, [1.0], None) == (0.5, 0.5)
    p_pos, p_neg = sign_probabilities([0.0, 1.0], [1.0, 3.0], [1.0], None)
    assert_allclose([p_pos, p_neg], [0.25 + 0.75 * 0.5, 0.75 * 0.5])


@settings(max_examples=40, deadline=None)
@given(
    st.lists(st.integers(-5, 5), min_size=1, max_size=12),
    st.lists(st.integers(-5, 5), min_size=1, max_size=12),
    st.lists(st.integers(1, 3), min_size=12, max_size=12),
)
def test_sign_law_matches_brute_force_and_duplication(xs, ys, multiplicity):
    # Law: exact over all pairs, and a weight of k equals the row written k times.
    x = np.array(xs, float)
    y = np.array(ys, float)
    w = np.array(multiplicity[: x.size], float)
    d = y[None, :] - x[:, None]
    weight = w[:, None] * np.ones(y.size)[None, :]
    expected_neg = (weight * ((d < 0) + 0.5 * (d == 0))).sum() / weight.sum()
    p_pos, p_neg = sign_probabilities(x, w, y, None)
    assert_allclose(p_neg, expected_neg, atol=1e-12)
    assert_allclose(p_pos + p_neg, 1.0, atol=1e-12)
    duplicated = np.repeat(x, w.astype(int))
    assert_allclose(sign_probabilities(duplicated, None, y, None), (p_pos, p_neg), atol=1e-12)
    assert_allclose(sign_probabilities(y, None, x, w), (p_neg, p_pos), atol=1e-12)


@pytest.mark.parametrize("n_draws", [0, -1, 2.5])
def test_bad_number_of_draws(n_draws):
    with pytest.raises(ConfigError):
        difference_summary([0.0, 1.0], None, [1.0, 2.0], None, n_draws=n_draws)


def test_all_zero_weights_refused():
    with pytest.raises(ComputationError):
        difference_summary([0.0, 1.0], [0.0, 0.0], [1.0, 2.0], None)
