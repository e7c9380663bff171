"""Fine weighted histograms of one quantity, and what they say about its quantile function.

A :class:`Grid` is a set of equal bins. The top grid of a quantity spans its smallest to
largest kept value; a *zoom* grid spans a run of bins of a coarser grid and holds exactly
the rows that the coarser grid put in those bins (membership is decided by the coarser
grid's bin index, so rows on a bin edge are never counted twice or lost). Bin indices are
computed as numpy's ``histogram`` does (arithmetic guess, then one correction against the
``linspace`` edges), so the same value always lands in the same bin, in any chunk, on any
machine.

:class:`GridCounts` adds the weight and the number of rows in each bin and the weight of
every row ordered before the grid. Under the quantile rule of
:mod:`agepost.stats.quantiles` (distinct values at cumulative-weight midpoints, straight
lines between them), the points ``(p_j, x_j)`` bracketing a probability ``p`` lie in the
bin where the cumulative weight passes ``p`` or in the nearest non-empty bin on either
side. So ``Q(p)`` lies between the lower edge of the previous non-empty bin and the upper
edge of the next one (:meth:`GridCounts.value_bounds`), and collecting the rows of those
bins is enough to compute ``Q(p)`` exactly (:meth:`GridCounts.window`).
"""

from __future__ import annotations

import dataclasses
from functools import cached_property

import numpy as np
from numpy.typing import ArrayLike, NDArray

from agepost.stats.intervals import hpd_position
from agepost.stats.quantiles import SortedSample

#: Bins of the top grid of each quantity, and of each zoom grid.
GRID_BINS = 1 << 18


class _PlainPickle:
    """Pickle only the dataclass fields (cached arrays are rebuilt where they are used)."""

    def __getstate__(self) -> dict:
        return {f.name: getattr(self, f.name) for f in dataclasses.fields(self)}  # type: ignore[arg-type]

    def __setstate__(self, state: dict) -> None:
        for name, value in state.items():
            object.__setattr__(self, name, value)


@dataclasses.dataclass(frozen=True)
class Grid(_PlainPickle):
    """Equal bins over ``[low, high]``; a zoom grid also names its parent's bins.

    Attributes
    ----------
    low, high : float
        Ends of the grid (``high > low``).
    n_bins : int
    parent : Grid or None
        The coarser grid whose bins ``first..last`` (inclusive) this grid subdivides.
    first, last : int
        Bins of ``parent`` covered (unused for a top grid).
    """

    low: float
    high: float
    n_bins: int = GRID_BINS
    parent: Grid | None = None
    first: int = 0
    last: int = 0

    @cached_property
    def edges(self) -> NDArray[np.float64]:
        """``n_bins + 1`` bin edges."""
        return np.linspace(self.low, self.high, self.n_bins + 1)

    @property
    def depth(self) -> int:
        """0 for a top grid, 1 for a zoom of it, and so on."""
        return 0 if self.parent is None else 1 + self.parent.depth

    def locate(
        self, values: NDArray[np.float64], cache: dict | None = None
    ) -> tuple[NDArray[np.bool_], NDArray[np.intp]]:
        """Which rows belong to this grid and their bin (-1 for rows outside).

        ``values`` are kept values of the quantity (all within the top grid's range).
        ``cache`` maps grids to earlier results for the same values (parents are shared).
        """
        if cache is not None and self in cache:
            return cache[self]
        if self.parent is None:
            member = np.ones(values.shape, dtype=bool)
            index = bin_index(values, self.edges)
        else:
            parent_member, parent_index = self.parent.locate(values, cache)
            member = parent_member & (parent_index >= self.first) & (parent_index <= self.last)
            index = np.full(values.shape, -1, dtype=np.intp)
            index[member] = bin_index(values[member], self.edges)
        if cache is not None:
            cache[self] = (member, index)
        return member, index

    def zoom(self, first: int, last: int) -> Grid:
        """A finer grid over this grid's bins ``first..last``."""
        return Grid(
            float(self.edges[first]), float(self.edges[last + 1]), self.n_bins, self, first, last
        )

    @property
    def resolvable(self) -> bool:
        """False once the bins are so narrow that a zoom could not separate more values."""
        scale = max(abs(self.low), abs(self.high), np.finfo(float).tiny)
        return (self.high - self.low) > self.n_bins * 64 * np.spacing(scale)


def bin_index(values: NDArray[np.float64], edges: NDArray[np.float64]) -> NDArray[np.intp]:
    """Bin of each value for equal bins with these edges (values inside ``[edges[0], edges[-1]]``).

    The last bin includes its upper edge, as in numpy's ``histogram``.
    """
    n_bins = edges.size - 1
    low, high = edges[0], edges[-1]
    index = ((values - low) * (n_bins / (high - low))).astype(np.intp)
    np.clip(index, 0, n_bins - 1, out=index)
    index -= values < edges[index]
    index += (values >= edges[index + 1]) & (index < n_bins - 1)
    np.clip(index, 0, n_bins - 1, out=index)
    return index


@dataclasses.dataclass(frozen=True, eq=False)
class GridCounts(_PlainPickle):
    """Weights and row counts in the bins of one grid.

    Attributes
    ----------
    grid : Grid
    weights : (n_bins,) float
        Sum of weights per bin.
    counts : (n_bins,) int
        Rows per bin.
    weight_before : float
        Weight of all rows ordered before the grid's first bin.
    total : float
        Weight of every kept row of the quantity (the normaliser of cumulative weights).
    """

    grid: Grid
    weights: NDArray[np.float64]
    counts: NDArray[np.int64]
    weight_before: float
    total: float

    @cached_property
    def lower_cumulative(self) -> NDArray[np.float64]:
        """Normalised weight before each bin, (n_bins,)."""
        before = np.concatenate(([0.0], np.cumsum(self.weights)[:-1]))
        return (self.weight_before + before) / self.total

    @cached_property
    def upper_cumulative(self) -> NDArray[np.float64]:
        """Normalised weight up to the end of each bin, (n_bins,)."""
        return self.lower_cumulative + self.weights / self.total

    @cached_property
    def _occupied(self) -> NDArray[np.intp]:
        return np.flatnonzero(self.counts > 0)

    def bracket_bins(self, p: ArrayLike) -> tuple[NDArray[np.intp], NDArray[np.intp]]:
        """Bins ``(first, last)`` holding the points that bracket ``Q(p)`` for each ``p``.

        The bin where the cumulative weight reaches ``p``, widened to the nearest
        non-empty bin on each side.
        """
        occupied = self._occupied
        at = np.searchsorted(self.upper_cumulative[occupied], np.asarray(p, dtype=float))
        at = np.clip(at, 0, occupied.size - 1)
        first = occupied[np.maximum(at - 1, 0)]
        last = occupied[np.minimum(at + 1, occupied.size - 1)]
        return first, last

    def value_bounds(self, p: ArrayLike) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
        """Lower and upper bounds of ``Q(p)`` (valid where the bracketing rows are in the grid)."""
        first, last = self.bracket_bins(p)
        edges = self.grid.edges
        return edges[first], edges[last + 1]

    def window(self, p_first: float, p_last: float) -> tuple[int, int]:
        """Bins whose rows determine ``Q(p)`` for every ``p`` in ``[p_first, p_last]``."""
        first, _ = self.bracket_bins(p_first)
        _, last = self.bracket_bins(p_last)
        return int(first), int(last)

    def rows(self, first: int, last: int) -> int:
        """Rows in bins ``first..last``."""
        return int(self.counts[first : last + 1].sum())

    def weight_before_bin(self, first: int) -> float:
        """Weight of all rows ordered before bin ``first`` (not normalised)."""
        return self.weight_before + float(self.weights[:first].sum())

    def interpolated_quantile(self, p: ArrayLike) -> NDArray[np.float64]:
        """``Q(p)`` of the piecewise-linear CDF through the bin edges (density flat in a bin)."""
        edges, cumulative = cdf_points(
            self.grid.edges, self.lower_cumulative, self.upper_cumulative
        )
        return np.interp(np.asarray(p, dtype=float), cumulative, edges)


def cdf_points(
    edges: NDArray[np.float64], lower: NDArray[np.float64], upper: NDArray[np.float64]
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Edges and cumulative weights of a binned CDF, empty bins dropped (strictly increasing)."""
    cumulative = np.concatenate((lower[:1], upper))
    keep = np.concatenate(([True], np.diff(cumulative) > 0))
    return edges[keep], cumulative[keep]


def binned_hpd(
    edges: NDArray[np.float64], weights: NDArray[np.float64], level: float
) -> tuple[float, float]:
    """Shortest interval of weight ``level`` under a piecewise-linear CDF through bin edges.

    The CDF is treated as a sample whose quantile function is the straight line between
    consecutive edges, so :func:`agepost.stats.intervals.hpd_position` gives the exact
    minimum for it.
    """
    total = float(weights.sum())
    lower = np.concatenate(([0.0], np.cumsum(weights)[:-1])) / total
    values, cumulative = cdf_points(edges, lower, lower + weights / total)
    curve = SortedSample(values, np.diff(cumulative, prepend=0.0), cumulative)
    p = hpd_position(curve, level)
    low, high = np.interp([p, min(p + level, 1.0)], cumulative, values)
    return float(low), float(high)
