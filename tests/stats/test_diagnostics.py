"""Autocorrelation time, effective sample size and split R-hat against known answers."""

from __future__ import annotations

import emcee
import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy import signal, special, stats

from agepost.errors import InputError
from agepost.stats.diagnostics import (
    autocorr_ess,
    autocorrelation,
    combined_ess,
    integrated_time,
    split_chains,
    split_rhat,
)


def ar1(n, rho, rng, n_chains=1):
    """AR(1) chains x_t = rho x_{t-1} + e_t, started in the stationary distribution."""
    noise = rng.normal(size=(n_chains, n))
    noise[:, 0] /= np.sqrt(1 - rho**2)
    return signal.lfilter([1.0], [1.0, -rho], noise, axis=1)


def test_autocorrelation_of_ar1_is_geometric():
    # AR(1): rho(t) = rho^t (textbook); at n = 200 000 the estimate scatters by ~1/sqrt(n/tau).
    x = ar1(200_000, 0.7, np.random.default_rng(61))[0]
    assert_allclose(autocorrelation(x)[:6], 0.7 ** np.arange(6), atol=0.02)


@pytest.mark.parametrize("rho", [0.0, 0.5, 0.9])
def test_ar1_ess_matches_analytic_value(rho):
    # AR(1): tau = (1 + rho) / (1 - rho), so ESS = n (1 - rho) / (1 + rho) (textbook).
    # Four chains of 100 000 rows: the windowed estimator's relative scatter is about
    # sqrt(2 (2M + 1) / n) per chain with M ~ 5 tau, i.e. under 4 % for the sum; 12 % is
    # more than three of those.
    n, n_chains = 100_000, 4
    x = ar1(n, rho, np.random.default_rng(62), n_chains=n_chains)
    result = autocorr_ess(x.ravel(), np.repeat(np.arange(n_chains), n))
    expected = n_chains * n * (1 - rho) / (1 + rho)
    assert result.ess == pytest.approx(expected, rel=0.12)
    assert_allclose(result.tau, (1 + rho) / (1 - rho), rtol=0.2)
    assert result.reliable


def test_integrated_time_agrees_with_emcee():
    # emcee.autocorr.integrated_time implements the same Sokal windowing (c = 5): an
    # independent implementation of the same estimator, so agreement is to rounding.
    x = ar1(20_000, 0.8, np.random.default_rng(63))[0]
    reference = emcee.autocorr.integrated_time(x, c=5, tol=0, quiet=True)[0]
    assert integrated_time(x) == pytest.approx(reference, rel=1e-9)


def test_constant_chain_counts_as_one_sample():
    assert integrated_time(np.full(50, 2.0)) == 50.0
    result = autocorr_ess(np.r_[np.full(50, 2.0), np.full(30, 3.0)], np.repeat([0, 1], [50, 30]))
    assert result.ess == pytest.approx(2.0)


def test_short_chain_is_flagged_unreliable():
    x = ar1(300, 0.95, np.random.default_rng(64))[0]  # tau ~ 39, 50 tau ~ 2000 rows
    assert not autocorr_ess(x, np.zeros(300, dtype=int)).reliable


def test_kish_governs_when_smaller():
    rng = np.random.default_rng(65)
    x = rng.normal(size=4000)
    w = np.where(np.arange(4000) % 10 == 0, 50.0, 1.0)  # a few heavy rows
    kish = w.sum() ** 2 / np.sum(w**2)  # Kish (1965)
    assert combined_ess(x, w, np.zeros(4000, dtype=int)) == pytest.approx(kish)
    assert combined_ess(x, w, None) == pytest.approx(kish)


def test_split_chains_keeps_order_within_each_chain():
    parts = split_chains([1.0, 10.0, 2.0, 20.0, 3.0], [0, 1, 0, 1, 0])
    assert [p.tolist() for p in parts] == [[1.0, 2.0, 3.0], [10.0, 20.0]]
    with pytest.raises(InputError, match="chain ids"):
        split_chains([1.0, 2.0], [0])


def reference_rhat(chains):
    """Rank-normalised split R-hat written out from Vehtari et al. (2021), eqs. (1)-(4) and
    section 3, for equal-length chains (loops, no code shared with the package)."""

    def basic(halves):
        n = halves.shape[1]
        means = halves.mean(axis=1)
        b = n * means.var(ddof=1)
        w = halves.var(axis=1, ddof=1).mean()
        return np.sqrt(((n - 1) / n * w + b / n) / w)

    def normal_scores(values):
        ranks = stats.rankdata(values.ravel()).reshape(values.shape)
        return special.ndtri((ranks - 0.375) / (values.size + 0.25))

    half = chains.shape[1] // 2
    split = np.concatenate([chains[:, :half], chains[:, -half:]])
    folded = np.abs(split - np.median(split))
    return max(basic(normal_scores(split)), basic(normal_scores(folded)))


def test_rhat_matches_written_out_reference():
    chains = np.random.default_rng(66).normal(size=(4, 500)) + np.array([[0], [0], [0], [0.3]])
    got = split_rhat(chains.ravel(), np.repeat(np.arange(4), 500))
    assert got == pytest.approx(reference_rhat(chains), rel=1e-12)


def test_rhat_passes_chains_from_one_distribution():
    # Independent draws from one normal: R-hat -> 1; with 4 x 5000 rows it stays well
    # below the 1.01 warning threshold (its scatter is ~ 1 / n).
    chains = np.random.default_rng(67).normal(size=(4, 5000))
    rhat = split_rhat(chains.ravel(), np.repeat(np.arange(4), 5000))
    assert rhat < 1.005


def test_rhat_flags_shifted_means():
    # One of four chains shifted by 0.5 sigma: expected R-hat ~ sqrt(1 + var(half means))
    # = sqrt(1 + 0.054) ~ 1.026 (Gelman-Rubin formula), clearly above 1.01.
    rng = np.random.default_rng(68)
    chains = rng.normal(size=(4, 5000)) + np.array([[0.0], [0.0], [0.0], [0.5]])
    assert split_rhat(chains.ravel(), np.repeat(np.arange(4), 5000)) > 1.01


def test_rhat_flags_a_drifting_chain_through_the_split():
    # One chain whose mean drifts: only the split halves can reveal it (Vehtari et al. 2021).
    rng = np.random.default_rng(69)
    chains = rng.normal(size=(2, 4000))
    chains[0] += np.linspace(-0.5, 0.5, 4000)
    assert split_rhat(chains.ravel(), np.repeat([0, 1], 4000)) > 1.01


def test_rhat_flags_different_spread_through_the_folded_draws():
    # Same mean, one chain twice as wide: the tail (folded) R-hat catches it.
    rng = np.random.default_rng(70)
    chains = rng.normal(size=(4, 5000)) * np.array([[1.0], [1.0], [1.0], [2.0]])
    assert split_rhat(chains.ravel(), np.repeat(np.arange(4), 5000)) > 1.01


def test_rhat_not_defined():
    assert split_rhat(np.arange(10.0), np.zeros(10)) is None  # one chain
    assert split_rhat(np.arange(6.0), [0, 0, 0, 1, 1, 1]) is None  # halves of one row


def test_rhat_ignores_a_very_short_converged_chain():
    # Converged iid chains of very different lengths must not raise the 1.01 alarm
    # (the classical statistic assumes equal lengths; Vehtari et al. 2021).
    rng = np.random.default_rng(11)
    values = rng.standard_normal(4008)
    chain_id = np.r_[np.zeros(4000, int), np.ones(8, int)]
    other = rng.standard_normal(4000)
    both = np.r_[values[:4000], other]
    assert split_rhat(values, chain_id) is None  # one usable chain left
    rhat = split_rhat(both, np.r_[np.zeros(4000, int), np.ones(4000, int)])
    assert rhat is not None and rhat < 1.01


def test_anticorrelated_chain_ess_is_capped():
    # An alternating chain has tau -> 0; its ESS is capped at n log10(n) (Vehtari et al. 2021).
    series = np.tile([1.0, -1.0], 500)
    assert integrated_time(series) >= 1.0 / np.log10(series.size)
