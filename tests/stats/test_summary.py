"""summarise(): consistency with the parts, warnings, bad input."""

from __future__ import annotations

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy import stats

from agepost.errors import ComputationError, ConfigError, InputError
from agepost.stats.intervals import equal_tail_interval, hpd_interval, lower_limit, upper_limit
from agepost.stats.quantiles import weighted_mean_std, weighted_quantile
from agepost.stats.summary import MIN_TAIL_ESS, level_key, summarise


def test_summary_agrees_with_the_interval_functions():
    rng = np.random.default_rng(31)
    x = stats.gamma(a=3.0).rvs(size=20_000, random_state=rng)
    w = rng.uniform(0.5, 1.5, size=x.size)
    s = summarise(x, w, levels=(0.68, 0.95, 0.997))
    assert list(s.intervals) == ["0.68", "0.95", "0.997"]
    mean, std = weighted_mean_std(x, w)
    assert (s.mean, s.std) == pytest.approx((mean, std), rel=1e-12)
    assert s.median == pytest.approx(weighted_quantile(x, 0.5, w), rel=1e-12)
    for key, interval in s.intervals.items():
        level = float(key)
        assert interval.level == level
        assert_allclose(interval.equal_tail, equal_tail_interval(x, w, level=level), rtol=1e-12)
        assert_allclose(interval.hpd, hpd_interval(x, w, level=level), rtol=1e-12)
        assert interval.upper == pytest.approx(upper_limit(x, w, level=level), rel=1e-12)
        assert interval.lower == pytest.approx(lower_limit(x, w, level=level), rel=1e-12)
    assert s.n_samples == x.size
    assert s.ess == s.ess_kish and s.ess_autocorr is None and s.rhat is None
    assert s.warnings == ()


def test_mcse_keys_and_values_for_independent_normal():
    # Independent N(0,1) draws: MCSE(mean) = 1/sqrt(n); MCSE(median) = sqrt(pi/2)/sqrt(n)
    # (asymptotic sample-median variance pi sigma^2 / (2 n), textbook). 10 % tolerance
    # covers the estimate's own noise at n = 40 000.
    n = 40_000
    x = np.random.default_rng(32).normal(size=n)
    s = summarise(x, chain_id=np.zeros(n, dtype=int))
    assert s.mcse["mean"] == pytest.approx(1 / np.sqrt(n), rel=0.1)
    assert s.mcse["median"] == pytest.approx(np.sqrt(np.pi / 2 / n), rel=0.1)
    expected_keys = {"mean", "median"} | {
        f"{k}:{end}"
        for k in ("0.68", "0.95")
        for end in ("equal_tail:lo", "equal_tail:hi", "hpd:lo", "hpd:hi", "upper", "lower")
    }
    assert set(s.mcse) == expected_keys
    assert s.ess_autocorr == pytest.approx(n, rel=0.1)
    assert s.rhat is None  # one chain


def test_zero_weight_rows_count_but_do_not_weigh():
    x = np.array([1.0, 2.0, 3.0, 100.0] * 100)
    w = np.array([1.0, 1.0, 1.0, 0.0] * 100)
    s = summarise(x, w)
    assert s.n_samples == 400
    assert s.ess_kish == pytest.approx(300)
    assert s.intervals["0.68"].equal_tail[1] < 4


def test_zero_spread_is_a_warning_not_a_crash():
    s = summarise(np.full(5000, 13.8), chain_id=np.repeat([0, 1], 2500))
    assert s.std == 0 and s.mode == 13.8 and s.median == 13.8
    assert s.intervals["0.95"].hpd == (13.8, 13.8)
    assert any("zero spread" in text for text in s.warnings)
    assert s.rhat is None and s.ess_autocorr is None


def test_too_few_samples_for_a_level_gives_warning_and_no_interval():
    x = np.random.default_rng(33).normal(size=150)
    s = summarise(x, levels=(0.68, 0.95))
    # 150 * 0.025 = 3.75 effective samples beyond each 95 % end < 5; 150 * 0.16 = 24 is enough.
    assert 150 * 0.025 < MIN_TAIL_ESS < 150 * 0.16
    assert np.isnan(s.intervals["0.95"].upper) and np.isnan(s.intervals["0.95"].equal_tail).all()
    assert np.isfinite(s.intervals["0.68"].hpd).all()
    assert np.isnan(s.mcse["0.95:hpd:lo"]) and np.isfinite(s.mcse["0.68:hpd:lo"])
    assert any("0.95 intervals are not quoted" in text for text in s.warnings)
    assert not any("0.68 intervals" in text for text in s.warnings)


def test_low_ess_warning():
    s = summarise(np.random.default_rng(34).normal(size=60), levels=(0.5,))
    assert any("effective sample size 60.0 is below 100" in text for text in s.warnings)


def test_shifted_chains_warn_about_rhat():
    rng = np.random.default_rng(35)
    x = np.concatenate([rng.normal(0.0, 1.0, 2000), rng.normal(0.5, 1.0, 2000)])
    s = summarise(x, chain_id=np.repeat([0, 1], 2000))
    assert s.rhat > 1.01
    assert any("split R-hat" in text for text in s.warnings)


@pytest.mark.parametrize(
    ("values", "weights", "error"),
    [
        (np.array([]), None, ComputationError),
        (np.ones(3), np.zeros(3), ComputationError),
        (np.array([1.0, np.nan]), None, InputError),
    ],
)
def test_bad_input(values, weights, error):
    with pytest.raises(error):
        summarise(values, weights)


def test_bad_level_and_chain_ids():
    with pytest.raises(ConfigError):
        summarise(np.arange(10.0), levels=(1.2,))
    with pytest.raises(InputError, match="chain ids"):
        summarise(np.arange(10.0), chain_id=np.zeros(3))


def test_level_key_is_shortest_decimal():
    assert [level_key(v) for v in (0.68, 0.95, 0.5, 0.9973)] == ["0.68", "0.95", "0.5", "0.9973"]
