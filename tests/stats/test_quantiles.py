"""Weighted quantiles, moments and mode against closed forms and exact laws."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose
from scipy import stats

from agepost.errors import ComputationError, InputError
from agepost.stats.quantiles import (
    kish_ess,
    sort_weighted,
    weighted_mean_std,
    weighted_quantile,
)

PROBABILITIES = np.array([0.025, 0.16, 0.5, 0.84, 0.975])


def quantile_mcse(dist, p, ess):
    """Asymptotic standard error of a sample quantile, sqrt(p(1-p)/n) / f(Q(p)) (textbook)."""
    return np.sqrt(p * (1 - p) / ess) / dist.pdf(dist.ppf(p))


def test_midpoint_rule_small_cases():
    # Hand-computed from the documented rule: positions (i - 1/2)/n, linear in between.
    x = [4.0, 1.0, 3.0, 2.0]  # sorted 1,2,3,4 at 0.125, 0.375, 0.625, 0.875
    assert_allclose(
        weighted_quantile(x, [0.0, 0.125, 0.25, 0.5, 0.875, 1.0]), [1, 1, 1.5, 2.5, 4, 4]
    )
    # weights 3:1 put 1.0 at 0.375 and 2.0 at 0.875
    assert_allclose(
        weighted_quantile([1.0, 2.0], [0.375, 0.625, 0.875], weights=[3, 1]), [1.0, 1.5, 2.0]
    )


def test_equal_weights_match_hazen_rule_of_numpy():
    # numpy's method="hazen" is the same midpoint rule for unweighted data (numpy docs).
    rng = np.random.default_rng(11)
    x = rng.normal(size=101)
    p = np.linspace(0, 1, 41)
    assert_allclose(weighted_quantile(x, p), np.quantile(x, p, method="hazen"), rtol=0, atol=1e-12)


@pytest.mark.parametrize(
    "dist",
    [stats.norm(loc=13.8, scale=0.2), stats.gamma(a=2.5, scale=1.3), stats.beta(a=2.0, b=5.0)],
    ids=["normal", "gamma", "beta"],
)
def test_quantiles_of_known_distributions_unweighted(dist):
    # Closed-form quantiles from scipy.stats; tolerance 5 asymptotic standard errors.
    n = 200_000
    x = dist.rvs(size=n, random_state=np.random.default_rng(2))
    got = weighted_quantile(x, PROBABILITIES)
    assert np.all(np.abs(got - dist.ppf(PROBABILITIES)) < 5 * quantile_mcse(dist, PROBABILITIES, n))


@pytest.mark.parametrize(
    ("target", "proposal"),
    [
        (stats.norm(loc=0.0, scale=1.0), stats.norm(loc=0.5, scale=2.0)),
        (stats.gamma(a=2.5, scale=1.3), stats.gamma(a=2.0, scale=2.0)),
        (stats.beta(a=2.0, b=5.0), stats.uniform()),
    ],
    ids=["normal", "gamma", "beta"],
)
def test_quantiles_with_importance_weights(target, proposal):
    # Importance weights target/proposal make the weighted sample follow the target
    # (standard importance sampling); tolerance 5 standard errors at Kish's ESS.
    x = proposal.rvs(size=200_000, random_state=np.random.default_rng(3))
    w = target.pdf(x) / proposal.pdf(x)
    got = weighted_quantile(x, PROBABILITIES, weights=w)
    tolerance = 5 * quantile_mcse(target, PROBABILITIES, kish_ess(w))
    assert np.all(np.abs(got - target.ppf(PROBABILITIES)) < tolerance)


def test_mean_and_std_of_gamma():
    # Gamma(a, scale s): mean a s, std sqrt(a) s (textbook).
    a, s, n = 4.0, 0.5, 400_000
    x = stats.gamma(a=a, scale=s).rvs(size=n, random_state=np.random.default_rng(4))
    mean, std = weighted_mean_std(x)
    assert abs(mean - a * s) < 5 * np.sqrt(a) * s / np.sqrt(n)
    assert_allclose(std, np.sqrt(a) * s, rtol=0.01)  # std error of std ~ 0.2 % here


def test_kish_formula():
    # Kish (1965): (sum w)^2 / sum w^2.
    assert kish_ess([1, 1, 1, 1]) == pytest.approx(4.0)
    assert kish_ess([1, 0, 0, 0]) == pytest.approx(1.0)
    assert kish_ess([2, 1]) == pytest.approx(9 / 5)


@settings(max_examples=60, deadline=None)
@given(
    st.lists(st.floats(-1e3, 1e3), min_size=1, max_size=30),
    st.data(),
)
def test_weight_two_equals_duplicated_row(values, data):
    index = data.draw(st.integers(0, len(values) - 1))
    weights = np.ones(len(values))
    weights[index] = 2.0
    duplicated = np.append(values, values[index])
    p = np.linspace(0, 1, 21)
    scale = 1e-9 * (1 + np.ptp(values))
    assert_allclose(
        weighted_quantile(values, p, weights), weighted_quantile(duplicated, p), atol=scale
    )
    assert_allclose(weighted_mean_std(values, weights), weighted_mean_std(duplicated), atol=scale)


def test_ties_are_merged():
    # Ties merge; the zero-weight row (3.0) is not part of the distribution.
    sample = sort_weighted([2.0, 1.0, 2.0, 3.0], [1.0, 2.0, 1.0, 0.0])
    assert_allclose(sample.values, [1, 2])
    assert_allclose(sample.weights, [0.5, 0.5])
    assert_allclose(sample.positions, [0.25, 0.75])


@pytest.mark.parametrize(
    ("values", "weights", "error", "words"),
    [
        ([], None, ComputationError, "no samples"),
        ([1.0, 2.0], [0.0, 0.0], ComputationError, "every weight is zero"),
        ([1.0, np.nan], None, InputError, "row 1"),
        ([1.0, 2.0], [1.0, -1.0], InputError, "row 1"),
        ([1.0, 2.0], [1.0, np.inf], InputError, "row 1"),
        ([1.0, 2.0], [1.0], InputError, "shape"),
        ([[1.0, 2.0]], None, InputError, "one-dimensional"),
    ],
)
def test_bad_input_is_named(values, weights, error, words):
    with pytest.raises(error, match=words):
        weighted_quantile(values, 0.5, weights)


def test_probability_outside_unit_interval():
    with pytest.raises(InputError, match=r"\[0, 1\]"):
        weighted_quantile([1.0, 2.0], 1.5)


def test_zero_weight_rows_do_not_move_quantiles():
    # A zero weight removes the row from the distribution (common practice for multiplicities).
    assert np.allclose(weighted_quantile([1.0, 2.0, 3.0], [0.25, 0.5, 0.75], [0.0, 1.0, 0.0]), 2.0)
    with_zero = weighted_quantile([1.0, 2.9, 3.0], [0.5], [1.0, 0.0, 1.0])
    without = weighted_quantile([1.0, 3.0], [0.5], [1.0, 1.0])
    assert np.allclose(with_zero, without)
