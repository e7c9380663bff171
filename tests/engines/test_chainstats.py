"""Per-chain diagnostics without holding a quantity in memory."""

from __future__ import annotations

import numpy as np
from numpy.testing import assert_allclose
from scipy import special, stats
from scipy.signal import lfilter

from agepost.engines.chainstats import (
    HalfMoments,
    RankScale,
    batch_tau,
    plan_units,
    split_rhat_from,
)
from agepost.engines.derive_pass import RowSlice
from agepost.engines.grids import Grid, GridCounts
from agepost.stats.diagnostics import split_rhat


def ar1(rng, n, rho):
    """AR(1) series with unit variance (innovations scaled by sqrt(1 - rho^2))."""
    return lfilter([np.sqrt(1 - rho**2)], [1, -rho], rng.normal(size=n))


def _scale(x, n_bins=1 << 16):
    grid = Grid(x.min(), x.max(), n_bins)
    member, index = grid.locate(x)
    counts = GridCounts(
        grid,
        np.bincount(index, minlength=n_bins).astype(float),
        np.bincount(index, minlength=n_bins),
        0.0,
        float(x.size),
    )
    return RankScale.of(counts)


def _batch_sums(x, batch):
    n_batches = x.size // batch
    sums = x[: n_batches * batch].reshape(n_batches, batch).sum(axis=1)
    return np.concatenate(([x.sum(), (x**2).sum()], sums))[None, :]


def test_batch_means_recover_the_ar1_autocorrelation_time():
    # Textbook: an AR(1) chain with coefficient rho has tau = (1 + rho) / (1 - rho).
    rng = np.random.default_rng(21)
    n, rho = 1_000_000, 0.8
    x = ar1(rng, n, rho)
    batch = int(np.sqrt(n))
    tau = batch_tau(_batch_sums(x, batch), batch, n)[0]
    # Tolerance: 1000 batches give a variance estimate good to about sqrt(2/1000) = 4.5%;
    # 15% is three of those.
    assert_allclose(tau, (1 + rho) / (1 - rho), rtol=0.15)


def test_batch_tau_of_constant_and_independent_series():
    rng = np.random.default_rng(22)
    n = 40_000
    batch = int(np.sqrt(n))
    assert batch_tau(_batch_sums(np.full(n, 3.0), batch), batch, n)[0] == n  # one sample's worth
    tau = batch_tau(_batch_sums(rng.normal(size=n), batch), batch, n)[0]
    assert_allclose(tau, 1.0, rtol=0.3)  # independent rows: tau = 1 (200 batches: ~10% noise)


def test_grid_ranks_give_the_normal_scores_of_the_pooled_ranks():
    rng = np.random.default_rng(23)
    x = rng.gamma(3.0, 1.0, 200_000)
    bulk, tail = _scale(x).scores(x)
    # Exact normal scores of Vehtari et al. (2021), as agepost.stats.diagnostics makes them.
    exact_bulk = special.ndtri((stats.rankdata(x) - 0.375) / (x.size + 0.25))
    distance = np.abs(x - np.median(x))
    exact_tail = special.ndtri((stats.rankdata(distance) - 0.375) / (x.size + 0.25))
    # Tolerance: ranks are off by at most the rows of one of 65536 bins (~20 here), which
    # moves a score by ~1e-4 in the bulk; in the sparse extreme tail a rank off by half a
    # row moves the steep inverse normal more, for a handful of rows.
    for approximate, exact in ((bulk, exact_bulk), (tail, exact_tail)):
        error = np.abs(approximate - exact)
        assert np.mean(error) < 1e-3 and np.quantile(error, 0.999) < 0.01


def test_split_rhat_from_half_moments_matches_the_in_memory_one():
    rng = np.random.default_rng(24)
    chains = [ar1(rng, 30_000, 0.5) + shift for shift in (0.0, 0.0, 0.05, 0.1)]
    x = np.concatenate(chains)
    ids = np.repeat(np.arange(4), 30_000)
    bulk, tail = _scale(x).scores(x)
    within = np.tile(np.arange(30_000), 4)
    labels = 2 * ids + (within >= 15_000)
    merged = {}
    for name, scores in (("bulk", bulk), ("tail", tail)):
        parts = [
            HalfMoments.of(scores[s], labels[s], 8) for s in np.array_split(np.arange(x.size), 7)
        ]
        merged[name] = parts[0]
        for part in parts[1:]:
            merged[name] = merged[name].merge(part)
    # Tolerance: only the rank approximation differs (a few rows out of 120 000).
    assert_allclose(split_rhat_from(merged["bulk"], merged["tail"]), split_rhat(x, ids), rtol=1e-5)


def test_chain_units_respect_the_memory_budget():
    rows = {0: 500, 1: 700, 2: 5000, 3: 300}
    slices = [
        RowSlice(0, 1200, {}),
        RowSlice(1200, 6200, {0: 500, 1: 700}),
        RowSlice(6200, 6500, {0: 500, 1: 700, 2: 5000}),
    ]
    units, batch = plan_units(slices, rows, ["a", "b", "c"], chain_memory_rows=1500)
    assert batch == {2: 70}  # floor(sqrt(5000)); chain 2 is too long to hold
    for unit in units:
        held = sum(rows[c] for c in unit.chains)
        assert held * len(unit.quantities) <= 1500 or len(unit.quantities) == 1
    covered = {(c, q) for u in units for c in u.chains for q in u.quantities}
    assert covered == {(c, q) for c in (0, 1, 3) for q in "abc"}
    # Units read only the slices holding their chains: never the one holding chain 2 alone.
    assert all(1200 not in [s.start for s in u.slices] for u in units)


def test_batch_sums_of_a_chain_cut_into_slices_anywhere_add_up():
    from agepost.engines.chainstats import _batch_sums

    rng = np.random.default_rng(25)
    n, batch = 10_007, 100  # 100 whole batches, 7 rows past the last one
    x = rng.normal(size=n)
    thresholds = np.array([-0.5, 0.0, 1.0])
    cuts = [0, 1, 150, 151, 4_999, 9_999, 10_003, n]
    total = sum(
        _batch_sums(x[a:b], np.arange(a, b), batch, n, thresholds, 0.0)
        for a, b in zip(cuts[:-1], cuts[1:], strict=True)
    )
    whole = x[: 100 * batch].reshape(100, batch)
    assert_allclose(total[0, 2:], whole.sum(axis=1), rtol=1e-12)
    for k, t in enumerate(thresholds, start=1):
        assert np.array_equal(total[k, 2:], (whole <= t).sum(axis=1))
        assert total[k, 0] == total[k, 1] == np.count_nonzero(x <= t)
    assert_allclose(total[0, :2], [x.sum(), (x**2).sum()], rtol=1e-12)
