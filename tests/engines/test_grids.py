"""Grid bins against numpy's histogram, and the quantile bounds they give."""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from agepost.engines.grids import Grid, GridCounts, bin_index, binned_hpd
from agepost.stats.quantiles import quantiles_sorted, sort_weighted


def test_bin_index_is_numpys_histogram_assignment():
    # Reference: numpy.histogram with the same range and bin count (it corrects its
    # arithmetic guess against the linspace edges the same way).
    rng = np.random.default_rng(2)
    x = np.concatenate([rng.normal(13.8, 0.3, 20000), [13.8 - 1.5, 13.8 + 2.0]])
    edges = np.linspace(x.min(), x.max(), 1001)
    x = np.concatenate([x, edges[::50]])  # values exactly on edges
    counts = np.bincount(bin_index(x, edges), minlength=1000)
    assert np.array_equal(counts, np.histogram(x, bins=1000, range=(x.min(), x.max()))[0])


def _counts(x, w, grid):
    member, index = grid.locate(x)
    return GridCounts(
        grid,
        np.bincount(index[member], w[member], minlength=grid.n_bins),
        np.bincount(index[member], minlength=grid.n_bins),
        0.0,
        float(w.sum()),
    )


@settings(max_examples=40, deadline=None)
@given(n=st.integers(2, 300), seed=st.integers(0, 2**32 - 1), ties=st.booleans())
def test_value_bounds_contain_the_exact_quantile(n, seed, ties):
    rng = np.random.default_rng(seed)
    x = rng.standard_t(3, n)
    if ties:
        x = np.round(x, 1)
    w = rng.integers(0, 4, n).astype(float) + 0.5
    if x.min() == x.max():
        return
    counts = _counts(x, w, Grid(x.min(), x.max(), 64))
    p = np.linspace(0, 1, 201)
    exact = quantiles_sorted(sort_weighted(x, w), p)  # the in-memory rule
    low, high = counts.value_bounds(p)
    assert np.all(low <= exact) and np.all(exact <= high)


def test_zoom_grid_holds_exactly_the_rows_of_its_parent_bins():
    rng = np.random.default_rng(3)
    x = rng.normal(size=5000)
    top = Grid(x.min(), x.max(), 100)
    zoom = top.zoom(40, 45)
    member, _ = zoom.locate(x)
    _, parent_index = top.locate(x)
    assert np.array_equal(member, (parent_index >= 40) & (parent_index <= 45))
    assert zoom.depth == 1 and zoom.low == top.edges[40] and zoom.high == top.edges[46]


def test_binned_hpd_of_a_triangular_density():
    # Closed form: density 2x on [0, 1]; the shortest interval of mass L is [sqrt(1-L), 1].
    edges = np.linspace(0, 1, 2001)
    weights = np.diff(edges**2)  # exact bin masses of the CDF x^2
    low, high = binned_hpd(edges, weights, 0.68)
    # Tolerance: the CDF is linear inside each bin, so the end is off by < one bin width.
    assert_allclose(low, np.sqrt(0.32), atol=1 / 2000)
    assert high == 1.0
