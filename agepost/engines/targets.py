"""Exact quantiles and HPD intervals of a quantity too large for memory, from passes over its rows.

Method (the error bound is stated in docs/scaling.md)
-----------------------------------------------------
1. A first pass fills the top grid of every quantity (:mod:`agepost.engines.grids`).
2. A quantile ``Q(p)`` is *resolved* by collecting, in a later pass, the distinct values
   and merged weights of the rows in the bins that bracket ``p`` (the bin where the
   cumulative weight passes ``p`` and the nearest non-empty bin on each side). Their
   cumulative-weight midpoints are offset by the exact weight of every row in earlier
   bins, so the quantile is the one the in-memory rule gives, up to floating-point
   rounding of the sums. If those bins hold more than ``window_rows`` rows, the pass
   instead fills a zoom grid over them and the next pass tries again on the finer bins.
3. The HPD interval at level ``L`` is the ``p`` minimising ``Q(p + L) - Q(p)``. The grids
   bound ``Q`` from below and above for every ``p``, hence bound the width; every ``p``
   whose lower width bound does not exceed the smallest upper bound is a candidate, and
   the true minimiser is among them. The rows bracketing ``Q(p)`` and ``Q(p + L)`` over the
   candidate range are collected and the exact knot search of
   :func:`agepost.stats.intervals.hpd_position` is run on them: the same interval as in
   memory. When the candidate rows stay above the budget after :data:`MAX_ZOOMS` zooms
   (a posterior so flat that the HPD is barely defined), the interval is taken where the
   upper width bound is smallest, its ends read from the finest grid, and the excess
   width over the shortest interval (at most the gap between the two bounds) is reported.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable
from typing import Any

import numpy as np
from numpy.typing import NDArray

from agepost.engines.grids import Grid, GridCounts

#: Zoom levels tried before an HPD interval falls back to its bounded-error answer.
MAX_ZOOMS = 3


@dataclasses.dataclass(frozen=True)
class HistogramRequest:
    """Fill ``grid`` for ``quantity`` (weights and counts per bin)."""

    quantity: str
    grid: Grid


@dataclasses.dataclass(frozen=True)
class CollectRequest:
    """Collect the distinct values and merged weights of ``grid`` bins ``first..last``."""

    quantity: str
    grid: Grid
    first: int
    last: int
    rows: int


Request = HistogramRequest | CollectRequest


@dataclasses.dataclass(frozen=True)
class LocalSample:
    """Distinct values of some bins at their global cumulative-weight midpoints."""

    values: NDArray[np.float64]
    positions: NDArray[np.float64]

    @classmethod
    def build(
        cls,
        values: NDArray[np.float64],
        weights: NDArray[np.float64],
        *,
        before: float,
        total: float,
    ) -> LocalSample:
        """Midpoints ``(before + cumulative - w / 2) / total`` of sorted distinct values."""
        upper = before + np.cumsum(weights)
        return cls(values, (upper - weights / 2) / total)

    def quantile(self, p: float | NDArray[np.float64]) -> NDArray[np.float64]:
        """``Q(p)`` by the in-memory rule (valid inside the range this sample resolves)."""
        return np.asarray(np.interp(p, self.positions, self.values))


class RangeResolver:
    """Makes ``Q(p)`` exact for every ``p`` in ``[p_first, p_last]`` of one quantity."""

    def __init__(
        self, quantity: str, counts: GridCounts, p_first: float, p_last: float, *, window_rows: int
    ) -> None:
        self.quantity, self.counts = quantity, counts
        self.p_first, self.p_last = p_first, p_last
        self.window_rows = window_rows
        self.sample: LocalSample | None = None
        self._request: Request | None = None

    def request(self) -> Request:
        """The next histogram (zoom) or collection this range needs."""
        if self._request is None:
            first, last = self.counts.window(self.p_first, self.p_last)
            rows = self.counts.rows(first, last)
            grid = self.counts.grid
            if rows > self.window_rows and grid.resolvable and grid.depth < MAX_ZOOMS:
                self._request = HistogramRequest(self.quantity, grid.zoom(first, last))
            else:
                self._request = CollectRequest(self.quantity, grid, first, last, rows)
        return self._request

    def deliver(self, result: Any) -> None:
        """Take the result of :meth:`request`."""
        request, self._request = self.request(), None
        if isinstance(request, HistogramRequest):
            self.counts = _zoomed(self.counts, request.grid, result)
        else:
            self.sample = _collected(self.counts, request, result)


class QuantileTarget:
    """Exact ``Q(p)`` of one quantity."""

    def __init__(self, quantity: str, counts: GridCounts, p: float, *, window_rows: int) -> None:
        self.p = p
        self.resolver = RangeResolver(quantity, counts, p, p, window_rows=window_rows)
        self.value = float("nan")

    @property
    def done(self) -> bool:
        """True once the value is known."""
        return self.resolver.sample is not None

    def requests(self) -> list[Request]:
        """What the next pass must compute for this target."""
        return [self.resolver.request()]

    def deliver(self, results: list[Any]) -> None:
        """Take the results of :meth:`requests`, in order."""
        self.resolver.deliver(results[0])
        if self.resolver.sample is not None:
            self.value = float(self.resolver.sample.quantile(self.p))


@dataclasses.dataclass(frozen=True)
class Candidates:
    """Range of HPD start positions that may hold the minimiser, and the width bounds."""

    p_first: float
    p_last: float
    best: float
    upper_width: float
    lower_width: float


def candidate_range(
    low: GridCounts, high: GridCounts, level: float, p_first: float, p_last: float
) -> Candidates:
    """Every ``p`` in ``[p_first, p_last]`` where ``Q(p + level) - Q(p)`` may be smallest.

    ``low`` bounds ``Q(p)`` and ``high`` bounds ``Q(p + level)``; both bounds are step
    functions changing only where a grid's cumulative weight crosses ``p``, so they are
    evaluated at those points and between them.
    """
    breaks = np.concatenate(
        (
            [p_first, p_last],
            low.upper_cumulative[low.counts > 0],
            high.upper_cumulative[high.counts > 0] - level,
        )
    )
    points = np.unique(breaks[(breaks >= p_first) & (breaks <= p_last)])
    middles = 0.5 * (points[:-1] + points[1:])
    probes = np.concatenate((points, middles))
    low_lo, low_hi = low.value_bounds(probes)
    high_lo, high_hi = high.value_bounds(np.minimum(probes + level, 1.0))
    upper, lower = high_hi - low_lo, high_lo - low_hi
    best = int(np.argmin(upper))
    tolerance = 16 * np.spacing(max(abs(low.grid.low), abs(high.grid.high)))
    hit = lower <= upper[best] + tolerance
    starts = np.concatenate((points, points[:-1]))
    ends = np.concatenate((points, points[1:]))
    return Candidates(
        p_first=float(starts[hit].min()),
        p_last=float(ends[hit].max()),
        best=float(probes[best]),
        upper_width=float(upper[best]),
        lower_width=float(lower.min()),
    )


class HpdTarget:
    """The HPD interval of one quantity at one level; see the module docstring."""

    def __init__(
        self, quantity: str, counts: GridCounts, level: float, *, window_rows: int
    ) -> None:
        self.quantity, self.level, self.window_rows = quantity, level, window_rows
        self.low, self.high = counts, counts
        self.p_first, self.p_last = 0.0, 1.0 - level
        self.interval: tuple[float, float] = (float("nan"), float("nan"))
        self._done = False
        #: Cumulative weight below the lower end (the ``p`` of ``[Q(p), Q(p + level)]``).
        self.position = float("nan")
        #: Largest possible excess width over the shortest interval (0 when exact).
        self.excess_bound = 0.0
        self._pending: list[Request] | None = None

    @property
    def done(self) -> bool:
        """True once the interval is known."""
        return self._done

    def requests(self) -> list[Request]:
        """Collections of both ends, zooms of both ends, or nothing (bounded fallback)."""
        if self._pending is not None:
            return self._pending
        found = candidate_range(self.low, self.high, self.level, self.p_first, self.p_last)
        self.p_first, self.p_last = found.p_first, found.p_last
        windows = [
            self.low.window(found.p_first, found.p_last),
            self.high.window(
                min(found.p_first + self.level, 1.0), min(found.p_last + self.level, 1.0)
            ),
        ]
        grids = [self.low, self.high]
        rows = [g.rows(first, last) for g, (first, last) in zip(grids, windows, strict=True)]
        if sum(rows) <= 2 * self.window_rows:
            self._pending = [
                CollectRequest(self.quantity, g.grid, first, last, n)
                for g, (first, last), n in zip(grids, windows, rows, strict=True)
            ]
        elif all(g.grid.resolvable and g.grid.depth < MAX_ZOOMS for g in grids):
            self._pending = [
                HistogramRequest(self.quantity, g.grid.zoom(first, last))
                for g, (first, last) in zip(grids, windows, strict=True)
            ]
        else:
            p = self.position = found.best
            self.interval = (
                float(self.low.interpolated_quantile(p)),
                float(self.high.interpolated_quantile(min(p + self.level, 1.0))),
            )
            self.excess_bound = max(found.upper_width - found.lower_width, 0.0)
            self._done = True
            self._pending = []
        return self._pending

    def deliver(self, results: list[Any]) -> None:
        """Take the results of :meth:`requests`, in order."""
        requests, self._pending = self._pending or [], None
        low_request, high_request = requests
        if isinstance(low_request, CollectRequest) and isinstance(high_request, CollectRequest):
            low = _collected(self.low, low_request, results[0])
            high = _collected(self.high, high_request, results[1])
        else:
            self.low = _zoomed(self.low, low_request.grid, results[0])
            self.high = _zoomed(self.high, high_request.grid, results[1])
            return
        self.position, *ends = exact_hpd(low, high, self.level, self.p_first, self.p_last)
        self.interval = (ends[0], ends[1])
        self._done = True


def _zoomed(counts: GridCounts, grid: Grid, result: Any) -> GridCounts:
    weights, bin_counts = result
    return GridCounts(grid, weights, bin_counts, counts.weight_before_bin(grid.first), counts.total)


def _collected(counts: GridCounts, request: CollectRequest, result: Any) -> LocalSample:
    values, weights = result
    before = counts.weight_before_bin(request.first)
    return LocalSample.build(values, weights, before=before, total=counts.total)


def exact_hpd(
    low: LocalSample, high: LocalSample, level: float, p_first: float, p_last: float
) -> tuple[float, float, float]:
    """The knot search of :func:`agepost.stats.intervals.hpd_position` restricted to candidates.

    Returns ``(p, Q(p), Q(p + level))``.
    """
    span = 1.0 - level
    knots = np.concatenate(([0.0, span], low.positions, high.positions - level))
    inside = knots[(knots >= p_first) & (knots <= p_last) & (knots >= 0.0) & (knots <= span)]
    knots = np.unique(inside) if inside.size else np.array([p_first, p_last])
    widths = high.quantile(knots + level) - low.quantile(knots)
    p = float(knots[int(np.argmin(widths))])
    return p, float(low.quantile(p)), float(high.quantile(min(p + level, 1.0)))


def resolve(
    targets: list,
    run_pass: Callable[[list[Request]], dict[Request, Any]],
    *,
    budget_rows: int,
) -> int:
    """Run passes until every target is done; returns the number of passes.

    Each pass takes the requests of as many pending targets as fit in ``budget_rows``
    collected rows (at least one target per pass, so the loop always advances).
    """
    passes = 0
    while True:
        pending = [t for t in targets if not t.done]
        chosen: list = []
        wanted: dict[Request, None] = {}
        rows = 0
        for target in pending:
            requests = target.requests()
            if target.done:  # settled without a pass (bounded fallback)
                continue
            new_rows = sum(
                r.rows for r in requests if isinstance(r, CollectRequest) and r not in wanted
            )
            if chosen and rows + new_rows > budget_rows:
                continue
            rows += new_rows
            chosen.append((target, requests))
            wanted |= dict.fromkeys(requests)
        if not chosen:
            return passes
        results = run_pass(list(wanted))
        passes += 1
        for target, requests in chosen:
            target.deliver([results[r] for r in requests])
