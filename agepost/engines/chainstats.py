"""Per-chain diagnostics of a quantity too large for memory: ESS, indicator ESS, split R-hat.

Autocorrelation ESS
    A chain of at most ``chain_memory_rows`` counted rows is read whole (one chain, or a
    few small ones, per task) and its integrated autocorrelation time is computed exactly
    as in memory (:func:`agepost.stats.diagnostics.integrated_time`), for the values and
    for each indicator ``x <= Q(p)`` that a quantile's Monte Carlo error needs. A longer
    chain uses non-overlapping batch means (Flegal & Jones 2010, Ann. Statist. 38, 1034):
    batches of ``B = floor(sqrt(n))`` rows, ``tau = B var(batch means) / var(x)``, clipped
    to ``[1/n, n]`` like the in-memory estimate.
Split R-hat
    Rank-normalised split R-hat as in :func:`agepost.stats.diagnostics.split_rhat`, with
    each row's pooled rank read from the top grid's row counts (linear inside a bin)
    instead of a global sort, and the median of the tail score taken from the same
    counts. The rank error is at most the rows of one bin; half-chain means and variances
    of the normal scores are merged exactly across slices.
"""

from __future__ import annotations

import dataclasses
from typing import Any

import h5py
import numpy as np
from numpy.typing import NDArray
from scipy import special

from agepost.engines.derive_pass import RowSlice
from agepost.engines.grids import GridCounts, bin_index
from agepost.engines.passes import read_rows
from agepost.stats.diagnostics import RHAT_MIN_HALF, integrated_time


@dataclasses.dataclass(frozen=True)
class RankScale:
    """Pooled unweighted ranks of a quantity, from its top-grid row counts."""

    edges: NDArray[np.float64]
    cumulative: NDArray[np.float64]
    total: int
    median: float

    @classmethod
    def of(cls, counts: GridCounts) -> RankScale:
        """Linear-in-bin count CDF of one quantity."""
        cumulative = np.concatenate(([0.0], np.cumsum(counts.counts, dtype=np.float64)))
        total = int(cumulative[-1])
        median = float(np.interp(total / 2, cumulative, counts.grid.edges))
        return cls(counts.grid.edges, cumulative, total, median)

    def count_below(self, y: NDArray[np.float64]) -> NDArray[np.float64]:
        """Rows below ``y``, linear inside a bin (0 below the grid, all rows above it)."""
        inside = np.clip(y, self.edges[0], self.edges[-1])
        k = bin_index(inside, self.edges)
        low, high = self.edges[k], self.edges[k + 1]
        fraction = np.divide(inside - low, high - low, out=np.zeros_like(inside), where=high > low)
        return self.cumulative[k] + (self.cumulative[k + 1] - self.cumulative[k]) * fraction

    def scores(self, x: NDArray[np.float64]) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
        """Normal scores of the values (bulk) and of their distance to the median (tail)."""
        rank = self.count_below(x) + 0.5
        d = np.abs(x - self.median)
        tail = self.count_below(self.median + d) - self.count_below(self.median - d) + 0.5
        scale = self.total + 0.25
        return special.ndtri((rank - 0.375) / scale), special.ndtri((tail - 0.375) / scale)


@dataclasses.dataclass(frozen=True)
class HalfMoments:
    """Row counts, means and ``M2`` of the normal scores in each half chain, (2 n_chains,)."""

    n: NDArray[np.float64]
    mean: NDArray[np.float64]
    m2: NDArray[np.float64]

    @classmethod
    def of(cls, values: NDArray, labels: NDArray, size: int) -> HalfMoments:
        """Moments of ``values`` grouped by ``labels`` in ``0..size-1``."""
        n = np.bincount(labels, minlength=size).astype(np.float64)
        sums = np.bincount(labels, values, minlength=size)
        mean = np.divide(sums, n, out=np.zeros(size), where=n > 0)
        m2 = np.asarray(np.bincount(labels, (values - mean[labels]) ** 2, minlength=size), float)
        return cls(n, mean, m2)

    def merge(self, other: HalfMoments) -> HalfMoments:
        """Chan et al. pairwise update, label by label."""
        n = self.n + other.n
        delta = other.mean - self.mean
        share = np.divide(other.n, n, out=np.zeros_like(n), where=n > 0)
        return HalfMoments(
            n, self.mean + delta * share, self.m2 + other.m2 + delta**2 * self.n * share
        )


@dataclasses.dataclass(frozen=True)
class ChainPlan:
    """What the chain pass needs for every quantity."""

    path: str
    quantities: tuple[str, ...]
    scales: dict[str, RankScale]
    thresholds: dict[str, NDArray[np.float64]]
    centres: dict[str, float]
    chains: tuple[int, ...]
    chain_rows: dict[int, int]
    batch_rows: dict[int, int]


def half_labels(plan: ChainPlan, chain_id: NDArray, within: NDArray) -> NDArray[np.int64]:
    """``2 i`` for the first half of the ``i``-th chain, ``2 i + 1`` for its second, -1 between."""
    position = np.searchsorted(np.asarray(plan.chains), chain_id)
    n = np.array([plan.chain_rows[c] for c in plan.chains])[position]
    half = n // 2
    labels = np.full(chain_id.size, -1, dtype=np.int64)
    labels[within < half] = 2 * position[within < half]
    second = within >= n - half
    labels[second] = 2 * position[second] + 1
    return labels


def chain_piece(rows: RowSlice, plan: ChainPlan) -> dict[str, Any]:
    """Half-chain score moments and batch-mean sums of long chains, for one slice."""
    size = 2 * len(plan.chains)
    out: dict[str, Any] = {}
    with h5py.File(plan.path, "r") as handle:
        counted = read_rows(handle, rows)
        labels = half_labels(plan, counted.chain_id, counted.within_chain)
        used = labels >= 0
        for quantity in plan.quantities:
            x = counted.column(handle, quantity, rows)
            bulk, tail = plan.scales[quantity].scores(x)
            out[f"{quantity}:bulk"] = HalfMoments.of(bulk[used], labels[used], size)
            out[f"{quantity}:tail"] = HalfMoments.of(tail[used], labels[used], size)
            for chain, batch in plan.batch_rows.items():
                mine = counted.chain_id == chain
                out[f"{quantity}:batch:{chain}"] = _batch_sums(
                    x[mine],
                    counted.within_chain[mine],
                    batch,
                    plan.chain_rows[chain],
                    plan.thresholds[quantity],
                    plan.centres[quantity],
                )
    return out


def _batch_sums(
    x: NDArray, within: NDArray, batch: int, n: int, thresholds: NDArray, centre: float
) -> NDArray:
    """Rows (1 + n_thresholds, 2 + n_batches): per series, sum, sum of squares, batch sums.

    The series are the values shifted by ``centre`` (their mean, so the sums of squares
    keep their digits) and each indicator ``x <= t``. A chain's rows come in order with
    consecutive ``within`` positions, so each batch is a run of rows and all but the first
    and last in a slice are whole. One series is held at a time.
    """
    n_batches = n // batch
    out = np.zeros((1 + len(thresholds), 2 + n_batches))
    index = within // batch
    used = int(np.count_nonzero(index < n_batches))  # rows past the last whole batch end it
    first, last = (int(index[0]), int(index[used - 1])) if used else (0, 0)
    head = int(np.count_nonzero(index[:used] == first))
    tail = used - int(np.count_nonzero(index[:used] == last)) if last > first else used
    for row in range(out.shape[0]):
        series = x - centre if row == 0 else (x <= thresholds[row - 1]).astype(np.float64)
        out[row, 0] = series.sum()
        out[row, 1] = (series**2).sum() if row == 0 else out[row, 0]  # indicators: x^2 = x
        if not used:
            continue
        sums = out[row, 2:]
        sums[first] = series[:head].sum()
        if last > first:  # whole batches in between, then the last (partial) one
            sums[first + 1 : last] = series[head:tail].reshape(-1, batch).sum(axis=1)
            sums[last] = series[tail:used].sum()
    return out


def combine_chain(a: dict[str, Any], b: dict[str, Any]) -> dict[str, Any]:
    """Join two chain pieces (moments merge, sums add)."""
    return {k: v.merge(b[k]) if isinstance(v, HalfMoments) else v + b[k] for k, v in a.items()}


def batch_tau(sums: NDArray, batch: int, n: int) -> NDArray[np.float64]:
    """Autocorrelation time of each series from its batch means, clipped to ``[1/n, n]``."""
    mean = sums[:, 0] / n
    variance = sums[:, 1] / n - mean**2
    batch_means = sums[:, 2:] / batch
    spread = batch_means.var(axis=1, ddof=1) if batch_means.shape[1] > 1 else np.zeros(len(sums))
    scale = np.maximum(np.abs(mean), 1.0) * 1e-12
    tau = np.where(variance > scale**2, batch * spread / np.maximum(variance, scale**2), n)
    return np.clip(tau, 1.0 / n, n)


def split_rhat_from(bulk: HalfMoments, tail: HalfMoments) -> float | None:
    """Split R-hat from half-chain moments of both scores; None when not defined."""
    if bulk.n.size < 4 or bulk.n.min() < RHAT_MIN_HALF:
        return None
    results = [_gelman_rubin(m) for m in (bulk, tail)]
    if not np.all(np.isfinite(results)):
        return None
    return float(max(results))


def _gelman_rubin(halves: HalfMoments) -> float:
    within = float(np.mean(halves.m2 / (halves.n - 1)))
    if not within > 0:
        return float("nan")
    n_mean = float(halves.n.mean())
    pooled = (n_mean - 1.0) / n_mean * within + float(np.var(halves.mean, ddof=1))
    return float(np.sqrt(pooled / within))


@dataclasses.dataclass(frozen=True)
class ChainUnit:
    """Chains read whole by one task, for some quantities, from the slices holding them."""

    chains: tuple[int, ...]
    quantities: tuple[str, ...]
    slices: tuple[RowSlice, ...]


def unit_piece(unit: ChainUnit, plan: ChainPlan) -> dict[tuple[str, int], NDArray[np.float64]]:
    """Exact autocorrelation times of each chain of the unit: values, then each indicator."""
    series: dict[tuple[str, int], list[NDArray]] = {
        (q, c): [] for q in unit.quantities for c in unit.chains
    }
    with h5py.File(plan.path, "r") as handle:
        for rows in unit.slices:
            counted = read_rows(handle, rows)
            for quantity in unit.quantities:
                x = counted.column(handle, quantity, rows)
                for chain in unit.chains:
                    series[(quantity, chain)].append(x[counted.chain_id == chain])
    out = {}
    for key in list(series):
        x = np.concatenate(series.pop(key))
        taus = [integrated_time(x)]  # then each indicator, one at a time
        taus += [integrated_time((x <= t).astype(np.float64)) for t in plan.thresholds[key[0]]]
        out[key] = np.array(taus)
    return out


def plan_units(
    slices: list[RowSlice],
    chain_rows: dict[int, int],
    quantities: list[str],
    *,
    chain_memory_rows: int,
) -> tuple[list[ChainUnit], dict[int, int]]:
    """Group chains that fit in memory into units; long chains get a batch size instead."""
    final = RowSlice(slices[-1].stop, slices[-1].stop, dict(chain_rows))
    bounds = [*slices, final]
    small = [c for c in sorted(chain_rows) if chain_rows[c] <= chain_memory_rows]
    batch_rows = {
        c: max(int(np.sqrt(chain_rows[c])), 1) for c in sorted(chain_rows) if c not in small
    }
    units, group, rows = [], [], 0
    for chain in [*small, None]:
        if chain is not None and rows + chain_rows[chain] <= chain_memory_rows:
            group.append(chain)
            rows += chain_rows[chain]
            continue
        if group:
            holding = tuple(
                s
                for s, nxt in zip(slices, bounds[1:], strict=True)
                if any(nxt.chain_before.get(c, 0) > s.chain_before.get(c, 0) for c in group)
            )
            per_unit = max(1, chain_memory_rows // rows)
            for k in range(0, len(quantities), per_unit):
                units.append(ChainUnit(tuple(group), tuple(quantities[k : k + per_unit]), holding))
        group, rows = ([chain], chain_rows[chain]) if chain is not None else ([], 0)
    return units, batch_rows
