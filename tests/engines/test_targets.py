"""Exact quantiles and HPD intervals from passes over a samples file, against the in-memory rule."""

from __future__ import annotations

import functools

import numpy as np
import pytest
from numpy.testing import assert_allclose

from agepost.engines.grids import Grid, GridCounts
from agepost.engines.local import LocalEngine
from agepost.engines.streamed import run_requests
from agepost.engines.targets import HistogramRequest, HpdTarget, QuantileTarget, resolve
from agepost.stats.intervals import hpd_sorted
from agepost.stats.quantiles import quantiles_sorted, sort_weighted

NAME = "derived/age"


def _targets(path, tally, *, window_rows, levels=(0.68, 0.95), probabilities=()):
    run = functools.partial(run_requests, LocalEngine(), str(path), tally.slices)
    moments = tally.moments[NAME]
    top = HistogramRequest(NAME, Grid(moments.low, moments.high, 4096))
    weights, counts = run([top])[top]
    grid = GridCounts(top.grid, weights, counts, 0.0, float(weights.sum()))
    quantiles = [QuantileTarget(NAME, grid, p, window_rows=window_rows) for p in probabilities]
    hpds = [HpdTarget(NAME, grid, level, window_rows=window_rows) for level in levels]
    return run, quantiles, hpds


def _posterior(rng, n):
    """Skewed, with ties, an outlier far out and some zero weights."""
    x = np.concatenate([13.8 + rng.gamma(2.0, 0.1, n - 3), [13.8, 13.8, 60.0]])
    x[: n // 5] = np.round(x[: n // 5], 2)
    w = rng.integers(0, 4, n).astype(float)
    return x, w


@pytest.mark.parametrize("window_rows", [10**6, 50])  # all in one window / forced zooms
def test_quantiles_equal_the_in_memory_rule(samples_writer, window_rows):
    rng = np.random.default_rng(11)
    x, w = _posterior(rng, 20000)
    path, tally = samples_writer({"age": x}, w, np.zeros(x.size, dtype=np.int64), chunk_rows=3000)
    p = [0.0, 1e-4, 0.025, 0.16, 0.25, 0.5, 0.68, 0.84, 0.975, 1 - 1e-5, 1.0]
    run, quantiles, _ = _targets(path, tally, window_rows=window_rows, levels=(), probabilities=p)
    passes = resolve(quantiles, run, budget_rows=10**6)
    counted = w > 0
    exact = quantiles_sorted(sort_weighted(x[counted], w[counted]), p)
    # Tolerance: only the rounding of the cumulative sums differs (different summation order).
    assert_allclose([t.value for t in quantiles], exact, rtol=1e-12)
    deepest = max(t.resolver.counts.grid.depth for t in quantiles)
    assert (passes, deepest) == (1, 0) if window_rows > x.size else (passes > 2 and deepest > 1)


@pytest.mark.parametrize("window_rows", [10**6, 400])
def test_hpd_equals_the_in_memory_interval_including_bimodal(samples_writer, window_rows):
    rng = np.random.default_rng(12)
    x = np.concatenate([rng.normal(13.5, 0.1, 12000), rng.normal(14.2, 0.05, 8000)])
    w = rng.integers(1, 3, x.size).astype(float)
    path, tally = samples_writer({"age": x}, w, np.arange(x.size) % 4, chunk_rows=2500)
    run, _, hpds = _targets(path, tally, window_rows=window_rows, levels=(0.3, 0.68, 0.95))
    resolve(hpds, run, budget_rows=10**6)
    sample = sort_weighted(x, w)
    for target in hpds:
        # Tolerance: rounding of the cumulative sums only.
        assert_allclose(target.interval, hpd_sorted(sample, target.level), rtol=1e-12)
        assert target.excess_bound == 0.0


def test_hpd_beyond_the_budget_falls_back_with_an_honest_bound(samples_writer):
    # A uniform posterior, where every interval of mass L has nearly the same width, and a
    # window of one row: the candidate rows never fit, so after the last zoom the interval
    # is read from the grids and the excess width is bounded instead.
    rng = np.random.default_rng(13)
    x = rng.uniform(13.0, 14.0, 30000)
    w = np.ones_like(x)
    path, tally = samples_writer({"age": x}, w, np.zeros(x.size, dtype=np.int64), chunk_rows=5000)
    run, _, hpds = _targets(path, tally, window_rows=1, levels=(0.68,))
    resolve(hpds, run, budget_rows=1000)
    (target,) = hpds
    low, high = hpd_sorted(sort_weighted(x, w), 0.68)
    assert target.excess_bound > 0
    width = target.interval[1] - target.interval[0]
    # The stated bound: no wider than the shortest interval plus the excess bound, and the
    # interval holds mass 0.68 to within one bin of the finest grid on each end.
    assert width <= (high - low) + target.excess_bound + 1e-12
    mass = np.mean((x >= target.interval[0]) & (x <= target.interval[1]))
    assert abs(mass - 0.68) < 0.01


def test_a_small_budget_spreads_collections_over_more_passes(samples_writer):
    rng = np.random.default_rng(14)
    x = rng.normal(13.8, 0.2, 20000)
    w = np.ones_like(x)
    path, tally = samples_writer({"age": x}, w, np.zeros(x.size, dtype=np.int64), chunk_rows=4000)
    p = [0.1, 0.3, 0.5, 0.7, 0.9]
    run, quantiles, _ = _targets(path, tally, window_rows=10**6, levels=(), probabilities=p)
    assert resolve(quantiles, run, budget_rows=1) == len(p)  # one target per pass
    assert_allclose([t.value for t in quantiles], quantiles_sorted(sort_weighted(x), p), rtol=1e-12)
