"""Monte Carlo standard errors against analytic values and the scatter of repeated runs."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import signal, stats

from agepost.stats.intervals import hpd_interval
from agepost.stats.mcse import batch_labels, mcse_hpd, mcse_quantiles
from agepost.stats.quantiles import sort_weighted, weighted_quantile
from agepost.stats.summary import summarise


def ar1(n, rho, rng, n_chains=1):
    """AR(1) chains x_t = rho x_{t-1} + e_t, started in the stationary distribution."""
    noise = rng.normal(size=(n_chains, n))
    noise[:, 0] /= np.sqrt(1 - rho**2)
    return signal.lfilter([1.0], [1.0, -rho], noise, axis=1)


def test_mean_mcse_of_ar1_matches_analytic_value():
    # AR(1) with unit innovations: var(x) = 1 / (1 - rho^2), tau = (1 + rho) / (1 - rho),
    # var(mean) = var(x) tau / n (textbook). 15 % covers the ESS estimate's scatter.
    rho, n, n_chains = 0.8, 50_000, 4
    x = ar1(n, rho, np.random.default_rng(71), n_chains)
    s = summarise(x.ravel(), chain_id=np.repeat(np.arange(n_chains), n), levels=(0.68,))
    expected = np.sqrt((1 / (1 - rho**2)) * (1 + rho) / (1 - rho) / (n * n_chains))
    assert s.mcse["mean"] == pytest.approx(expected, rel=0.15)


@pytest.mark.parametrize("rho", [0.0, 0.8])
def test_quantile_mcse_matches_scatter_of_repeated_runs(rho):
    # 60 independent runs; the reported MCSE (averaged over runs) must match the observed
    # standard deviation of the estimates. The sd of 60 draws is itself uncertain by ~9 %;
    # 30 % allows for that and for the MCSE's own scatter.
    rng = np.random.default_rng(72)
    p = np.array([0.025, 0.5, 0.84])
    n, n_chains = 2_500, 4
    ids = np.repeat(np.arange(n_chains), n)
    estimates, reported = [], []
    for _ in range(60):
        x = ar1(n, rho, rng, n_chains).ravel()
        w = np.ones_like(x)
        sample = sort_weighted(x, w)
        estimates.append(weighted_quantile(x, p))
        reported.append(mcse_quantiles(sample, x, w, ids, p))
    ratio = np.mean(reported, axis=0) / np.std(estimates, axis=0, ddof=1)
    assert np.all(np.abs(ratio - 1) < 0.3), ratio


@pytest.mark.parametrize(
    "dist", [stats.norm(loc=13.8, scale=0.2), stats.beta(a=2.0, b=5.0)], ids=["normal", "beta"]
)
def test_hpd_mcse_matches_scatter_of_repeated_runs(dist):
    # HPD ends scatter several times more than quantiles at the same weight (see
    # agepost.stats.mcse); the batch estimate must match the replication scatter within
    # the 40-run uncertainty (~11 %) plus the estimate's own bias (documented, <~ 25 %).
    rng = np.random.default_rng(73)
    n = 20_000
    ends, reported = [], []
    for _ in range(40):
        x = dist.rvs(size=n, random_state=rng)
        w = np.ones(n)
        ends.append(hpd_interval(x, level=0.68))
        reported.append(mcse_hpd(sort_weighted(x, w), x, w, None, level=0.68, ess=n))
    ratio = np.mean(reported, axis=0) / np.std(ends, axis=0, ddof=1)
    assert np.all((ratio > 0.7) & (ratio < 1.45)), ratio


def test_hpd_mcse_exceeds_quantile_formula():
    # The point of the batch method: the fitted ends scatter more than fixed quantiles.
    x = np.random.default_rng(74).normal(size=50_000)
    w = np.ones_like(x)
    sample = sort_weighted(x, w)
    batch = mcse_hpd(sample, x, w, None, level=0.68, ess=x.size)
    fixed = mcse_quantiles(sample, x, w, None, [0.16, 0.84])
    assert np.all(np.array(batch) > 1.5 * fixed)


def test_hpd_mcse_falls_back_with_few_samples():
    # 400 effective samples: 400 * 0.025 / 5 = 2 batches < 4, so the quantile formula is used.
    x = np.random.default_rng(75).normal(size=400)
    w = np.ones_like(x)
    sample = sort_weighted(x, w)
    got = mcse_hpd(sample, x, w, None, level=0.95, ess=400.0)
    assert np.all(np.array(got) > 0)


def test_batch_labels():
    assert batch_labels(7, None, 3).tolist() == [0, 1, 2, 0, 1, 2, 0]
    # two chains of 4 and 2 rows, interleaved in the input: each chain cut in 2 segments
    assert batch_labels(6, np.array([0, 1, 0, 0, 1, 0]), 2).tolist() == [0, 0, 0, 1, 1, 1]
