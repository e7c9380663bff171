"""Systematic resampling keeps the weighted distribution."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from agepost.errors import ConfigError
from agepost.stats.resample import weighted_subsample


def test_counts_are_floor_or_ceil_of_expected():
    # Systematic resampling property (Kitagawa 1996): each row appears floor or ceil of
    # size * w_i / W times.
    w = np.random.default_rng(81).uniform(0, 3, size=500)
    size = 2000
    rows = weighted_subsample(w, size, rng=1)
    counts = np.bincount(rows, minlength=w.size)
    expected = size * w / w.sum()
    assert counts.sum() == size
    assert np.all((counts >= np.floor(expected) - 1e-9) & (counts <= np.ceil(expected) + 1e-9))
    assert np.all(np.diff(rows) >= 0)


def test_subsample_of_importance_weighted_draws_follows_target():
    # Uniform draws weighted by a normal pdf resample to that normal: KS test p > 0.01.
    x = np.random.default_rng(82).uniform(-6, 6, size=200_000)
    w = stats.norm.pdf(x, loc=1.0, scale=0.8)
    rows = weighted_subsample(w, 5000, rng=np.random.default_rng(3))
    assert stats.kstest(x[rows], stats.norm(loc=1.0, scale=0.8).cdf).pvalue > 0.01


def test_zero_weight_rows_never_drawn():
    rows = weighted_subsample([0.0, 1.0, 0.0, 1.0], 100, rng=0)
    assert set(rows.tolist()) == {1, 3}


@pytest.mark.parametrize("size", [0, -3, 2.5])
def test_bad_size(size):
    with pytest.raises(ConfigError, match="subsample size"):
        weighted_subsample([1.0, 2.0], size)
