"""Equal-tailed, HPD and one-sided intervals against closed forms and exact laws."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose
from scipy import optimize, stats

from agepost.errors import ConfigError
from agepost.stats.intervals import (
    check_level,
    equal_tail_interval,
    hpd_interval,
    lower_limit,
    upper_limit,
)
from agepost.stats.quantiles import kish_ess

DISTRIBUTIONS = {
    "normal": stats.norm(loc=13.8, scale=0.2),
    "gamma": stats.gamma(a=2.5, scale=1.3),
    "beta": stats.beta(a=2.0, b=5.0),
}


def shortest_interval(dist, level):
    """Analytic HPD of a unimodal density: minimise ppf(p + L) - ppf(p) over p (scipy)."""
    result = optimize.minimize_scalar(
        lambda p: dist.ppf(p + level) - dist.ppf(p),
        bounds=(0.0, 1.0 - level),
        method="bounded",
        options={"xatol": 1e-12},
    )
    return dist.ppf(result.x), dist.ppf(result.x + level)


def quantile_se(dist, p, ess):
    """Asymptotic standard error of a sample quantile, sqrt(p(1-p)/n) / f(Q(p)) (textbook)."""
    return np.sqrt(p * (1 - p) / ess) / dist.pdf(dist.ppf(p))


def draw(name, weighted, rng, n=200_000):
    """Samples of a target, directly or by importance weighting a uniform proposal."""
    dist = DISTRIBUTIONS[name]
    if not weighted:
        return dist.rvs(size=n, random_state=rng), None
    low, high = dist.ppf(1e-7), dist.ppf(1 - 1e-7)
    x = rng.uniform(low, high, size=2 * n)
    return x, dist.pdf(x)


@pytest.mark.parametrize("weighted", [False, True], ids=["unweighted", "weighted"])
@pytest.mark.parametrize("name", list(DISTRIBUTIONS))
@pytest.mark.parametrize("level", [0.68, 0.95])
def test_hpd_matches_analytic_shortest_interval(name, weighted, level):
    # The ends of an empirical shortest interval scatter more than fixed quantiles (their
    # position is fitted, a cube-root-rate estimate), so the Monte Carlo error is measured
    # here by replication: 30 independent runs; the mean end must lie within 4 standard
    # errors of the mean of the analytic shortest interval.
    dist = DISTRIBUTIONS[name]
    rng = np.random.default_rng(21)
    ends = np.array(
        [hpd_interval(*draw(name, weighted, rng, n=20_000), level=level) for _ in range(30)]
    )
    expected = np.array(shortest_interval(dist, level))
    standard_error = ends.std(axis=0, ddof=1) / np.sqrt(len(ends))
    assert np.all(np.abs(ends.mean(axis=0) - expected) < 4 * standard_error), (
        ends.mean(0),
        expected,
    )
    # And the replication scatter itself is small: below 3 % of the interval width.
    assert np.all(ends.std(axis=0, ddof=1) < 0.03 * (expected[1] - expected[0]))


@pytest.mark.parametrize("weighted", [False, True], ids=["unweighted", "weighted"])
@pytest.mark.parametrize("name", list(DISTRIBUTIONS))
def test_equal_tail_and_limits_match_ppf(name, weighted):
    # Closed-form quantiles from scipy.stats; tolerance 5 standard errors.
    dist = DISTRIBUTIONS[name]
    x, w = draw(name, weighted, np.random.default_rng(22))
    ess = kish_ess(np.ones_like(x) if w is None else w)
    level = 0.95
    p = np.array([0.025, 0.975, 0.95, 0.05])
    got = np.array(
        [
            *equal_tail_interval(x, w, level=level),
            upper_limit(x, w, level=level),
            lower_limit(x, w, level=level),
        ]
    )
    assert np.all(np.abs(got - dist.ppf(p)) < 5 * quantile_se(dist, p, ess))


def test_hpd_of_symmetric_density_is_equal_tailed():
    # For a symmetric unimodal density the shortest interval is the central one (textbook).
    x = stats.norm.rvs(size=100_000, random_state=np.random.default_rng(23))
    hpd = hpd_interval(x, level=0.68)
    et = equal_tail_interval(x, level=0.68)
    assert_allclose(hpd, et, atol=0.03)  # ~5 quantile standard errors (0.006 each)


def test_hpd_small_case_by_hand():
    # Positions 0.1..0.9 for 0, 1, 2, 3, 10; at level 0.5 the width Q(p+0.5)-Q(p) is smallest
    # at p = 0 (from 0 to Q(0.5) = 2), worked by hand from the interpolation rule.
    assert_allclose(hpd_interval([0.0, 1.0, 2.0, 3.0, 10.0], level=0.5), (0.0, 2.0), atol=1e-12)


def test_one_sided_limit_for_quantity_at_prior_edge():
    # Half-normal |N(0, 1)|: the 95 % upper limit is the 97.5 % normal point, 1.95996 (textbook).
    x = np.abs(stats.norm.rvs(size=200_000, random_state=np.random.default_rng(24)))
    assert abs(upper_limit(x, level=0.95) - 1.959964) < 0.02  # ~5 standard errors


@settings(max_examples=60, deadline=None)
@given(
    st.lists(st.floats(-1e3, 1e3), min_size=2, max_size=40),
    st.floats(0.05, 0.9),
    st.floats(0.01, 0.09),
)
def test_intervals_widen_as_level_grows(values, level, step):
    wider = level + step
    low, high = equal_tail_interval(values, level=level)
    wide_low, wide_high = equal_tail_interval(values, level=wider)
    slack = 1e-9 * (1 + np.ptp(values))
    assert wide_low <= low + slack and wide_high >= high - slack
    narrow = np.diff(hpd_interval(values, level=level))[0]
    broad = np.diff(hpd_interval(values, level=wider))[0]
    assert broad >= narrow - slack
    assert upper_limit(values, level=wider) >= upper_limit(values, level=level) - slack
    assert lower_limit(values, level=wider) <= lower_limit(values, level=level) + slack


@settings(max_examples=60, deadline=None)
@given(st.lists(st.floats(-1e3, 1e3), min_size=1, max_size=30), st.data(), st.floats(0.05, 0.95))
def test_weight_two_equals_duplicated_row(values, data, level):
    index = data.draw(st.integers(0, len(values) - 1))
    weights = np.ones(len(values))
    weights[index] = 2.0
    duplicated = np.append(values, values[index])
    slack = 1e-9 * (1 + np.ptp(values))
    assert_allclose(
        equal_tail_interval(values, weights, level=level),
        equal_tail_interval(duplicated, level=level),
        atol=slack,
    )
    width_weighted = np.diff(hpd_interval(values, weights, level=level))[0]
    width_duplicated = np.diff(hpd_interval(duplicated, level=level))[0]
    assert_allclose(width_weighted, width_duplicated, atol=slack)


@pytest.mark.parametrize("level", [0.0, 1.0, -0.1, 1.5, 68, float("nan"), "abc", None])
def test_level_outside_unit_interval_is_config_error(level):
    with pytest.raises(ConfigError, match="credible level"):
        check_level(level)
    with pytest.raises(ConfigError):
        hpd_interval([1.0, 2.0, 3.0], level=level)


def test_level_accepts_any_fraction():
    assert check_level(0.997) == pytest.approx(0.997)
    assert check_level(np.float32(0.5)) == pytest.approx(0.5)
