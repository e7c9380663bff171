"""Monte Carlo error of HPD ends for samples too large for memory: batch HPD intervals.

The in-memory method (:func:`agepost.stats.mcse.mcse_hpd`) cuts every chain into ``B``
consecutive segments, finds the HPD interval of each batch and quotes
``sd(batch ends) B^(-1/3)``. Here each batch is a weighted histogram of ``batch_bins``
equal bins over the quantity's range, filled in one pass, and its HPD interval is that of
the piecewise-linear CDF through the bin edges (:func:`agepost.engines.grids.binned_hpd`).
The batch labels are the in-memory ones (row ``i`` of a chain of ``n`` rows is in batch
``i B // n``). The binning moves each batch end by at most one bin, far below the
batch-to-batch scatter the error is made of once a batch holds thousands of rows.
"""

from __future__ import annotations

import dataclasses

import h5py
import numpy as np
from numpy.typing import NDArray

from agepost.engines.derive_pass import RowSlice
from agepost.engines.grids import bin_index, binned_hpd
from agepost.engines.passes import read_rows


@dataclasses.dataclass(frozen=True)
class BatchJob:
    """Batch histograms of one quantity for one level."""

    quantity: str
    level: float
    n_batches: int
    low: float
    high: float


@dataclasses.dataclass(frozen=True)
class BatchPlan:
    """Jobs of one pass and what they need."""

    path: str
    jobs: tuple[BatchJob, ...]
    chain_rows: dict[int, int]
    batch_bins: int


def batch_piece(rows: RowSlice, plan: BatchPlan) -> dict[BatchJob, NDArray[np.float64]]:
    """(n_batches, batch_bins) weights of every job, for one slice."""
    out = {}
    with h5py.File(plan.path, "r") as handle:
        counted = read_rows(handle, rows)
        chains = np.array(sorted(plan.chain_rows))
        totals = np.array([plan.chain_rows[c] for c in chains], dtype=np.int64)
        n_rows = totals[np.searchsorted(chains, counted.chain_id)]
        columns: dict[str, NDArray] = {}
        for job in plan.jobs:
            if job.quantity not in columns:
                columns[job.quantity] = counted.column(handle, job.quantity, rows)
            x = columns[job.quantity]
            edges = np.linspace(job.low, job.high, plan.batch_bins + 1)
            label = counted.within_chain * job.n_batches // np.maximum(n_rows, 1)
            flat = label * plan.batch_bins + bin_index(x, edges)
            size = job.n_batches * plan.batch_bins
            out[job] = np.asarray(
                np.bincount(flat, counted.weights, minlength=size), float
            ).reshape(job.n_batches, plan.batch_bins)
    return out


def combine_batches(a: dict, b: dict) -> dict:
    """Add two batch pieces."""
    return {job: a[job] + b[job] for job in a}


def batch_error(
    job: BatchJob, weights: NDArray[np.float64], batch_bins: int
) -> tuple[float, float] | None:
    """MCSE of both HPD ends from the batch histograms; None when a batch has no weight."""
    if not np.all(weights.sum(axis=1) > 0):
        return None
    edges = np.linspace(job.low, job.high, batch_bins + 1)
    ends = np.array([binned_hpd(edges, batch, job.level) for batch in weights])
    low, high = ends.std(axis=0, ddof=1) * job.n_batches ** (-1.0 / 3.0)
    return float(low), float(high)
