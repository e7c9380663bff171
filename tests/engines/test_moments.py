"""Merged chunk moments against numpy on the joined rows."""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from agepost.engines.moments import Moments, merge_all
from agepost.stats.quantiles import kish_ess


@settings(max_examples=60, deadline=None)
@given(
    n=st.integers(2, 400),
    cuts=st.lists(st.floats(0, 1), max_size=6),
    seed=st.integers(0, 2**32 - 1),
)
def test_merging_chunks_in_any_split_equals_the_whole(n, cuts, seed):
    rng = np.random.default_rng(seed)
    x = rng.normal(13.8, 0.2, n)
    w = rng.gamma(0.5, 2.0, n) + 1e-3
    edges = sorted({0, n, *(int(c * n) for c in cuts)})
    merged = Moments()
    for start, stop in zip(edges[:-1], edges[1:], strict=True):
        merged = merged.merge(Moments.of(x[start:stop], w[start:stop]))
    # Reference: numpy's weighted average on the joined rows. Tolerance: a few ulps of
    # accumulated rounding over at most 7 merges.
    mean = np.average(x, weights=w)
    assert_allclose(merged.mean, mean, rtol=1e-13)
    assert_allclose(merged.std, np.sqrt(np.average((x - mean) ** 2, weights=w)), rtol=1e-9)
    assert_allclose(merged.kish_ess, kish_ess(w), rtol=1e-12)
    assert merged.n_rows == n and merged.low == x.min() and merged.high == x.max()
    assert_allclose(merged.weight, w.sum(), rtol=1e-13)


def test_empty_chunks_change_nothing_and_huge_weights_do_not_overflow():
    rng = np.random.default_rng(1)
    x, w = rng.normal(size=50), rng.uniform(1, 2, 50) * 1e200  # w**2 would overflow
    whole = (
        Moments()
        .merge(Moments.of(x[:20], w[:20]))
        .merge(Moments.of([], []))
        .merge(Moments.of(x[20:], w[20:]))
    )
    assert_allclose(whole.kish_ess, kish_ess(w), rtol=1e-12)
    assert np.isfinite(whole.std) and not Moments().spread and whole.spread


def test_merge_all_joins_tables_with_different_keys():
    a = {"x": Moments.of([1.0, 2.0], [1.0, 1.0])}
    b = {"x": Moments.of([3.0], [2.0]), "y": Moments.of([5.0], [1.0])}
    joined = merge_all(a, b)
    assert_allclose(joined["x"].mean, (1 + 2 + 6) / 4, rtol=1e-15)  # hand calculation
    assert joined["y"].mean == 5.0
