"""Passes over the derived-samples file: per-slice pieces and how to combine them.

Every function here reads one :class:`~agepost.engines.derive_pass.RowSlice` of the
samples file by path (so a Dask worker can run it) and returns a small piece; ``combine``
functions join two pieces and are applied in slice order, so the result does not depend
on which engine ran the pieces. Only rows that count (kept, weight > 0) are used.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence
from typing import Any

import h5py
import numpy as np
from numpy.typing import NDArray

from agepost.engines.derive_pass import RowSlice
from agepost.engines.grids import Grid
from agepost.engines.targets import CollectRequest, HistogramRequest
from agepost.stats.density import GRID_BINS as MODE_BINS


@dataclasses.dataclass(frozen=True)
class ModeRequest:
    """The weighted histogram behind the mode (as :mod:`agepost.stats.density`) on a range."""

    quantity: str
    low: float
    high: float


@dataclasses.dataclass(frozen=True)
class SliceRows:
    """The counted rows of one slice: weights, chain ids and index within each chain."""

    weights: NDArray[np.float64]
    chain_id: NDArray[np.int64]
    within_chain: NDArray[np.int64]
    mask: NDArray[np.bool_]

    def column(self, handle: h5py.File, name: str, rows: RowSlice) -> NDArray[np.float64]:
        """Counted values of dataset ``name`` in this slice."""
        return handle[name][rows.start : rows.stop][self.mask]


def read_rows(handle: h5py.File, rows: RowSlice) -> SliceRows:
    """Bookkeeping of the counted rows of a slice."""
    weights = handle["weight"][rows.start : rows.stop]
    mask = (handle["exclusion"][rows.start : rows.stop] == 0) & (weights > 0)
    chain_id = handle["chain_id"][rows.start : rows.stop][mask]
    return SliceRows(weights[mask], chain_id, within_chain_index(chain_id, rows.chain_before), mask)


def within_chain_index(chain_id: NDArray[np.int64], before: dict[int, int]) -> NDArray[np.int64]:
    """Position of each row in its own chain, counting the chain's rows in earlier slices."""
    if chain_id.size == 0:
        return np.zeros(0, dtype=np.int64)
    ids, inverse, counts = np.unique(chain_id, return_inverse=True, return_counts=True)
    order = np.argsort(inverse, kind="stable")
    starts = np.cumsum(counts) - counts
    rank = np.empty(chain_id.size, dtype=np.int64)
    rank[order] = np.arange(chain_id.size) - np.repeat(starts, counts)
    offsets = np.array([before.get(int(i), 0) for i in ids], dtype=np.int64)
    return offsets[inverse] + rank


def request_piece(rows: RowSlice, shared: tuple[str, Sequence[Any]]) -> dict[Any, Any]:
    """Results of histogram, collection and mode requests on one slice."""
    path, requests = shared
    by_quantity: dict[str, list[Any]] = {}
    for request in requests:
        by_quantity.setdefault(request.quantity, []).append(request)
    out: dict[Any, Any] = {}
    with h5py.File(path, "r") as handle:
        counted = read_rows(handle, rows)
        for quantity, wanted in by_quantity.items():
            x = counted.column(handle, quantity, rows)
            w = counted.weights
            cache: dict[Grid, Any] = {}
            for request in wanted:
                out[request] = _answer(request, x, w, cache)
    return out


def _answer(request: Any, x: NDArray, w: NDArray, cache: dict) -> Any:
    if isinstance(request, ModeRequest):
        return np.histogram(x, bins=MODE_BINS, range=(request.low, request.high), weights=w)[0]
    member, index = request.grid.locate(x, cache)
    if isinstance(request, HistogramRequest):
        n = request.grid.n_bins
        return (
            np.bincount(index[member], w[member], minlength=n),
            np.bincount(index[member], minlength=n).astype(np.int64),
        )
    if isinstance(request, CollectRequest):
        inside = member & (index >= request.first) & (index <= request.last)
        return distinct(x[inside], w[inside])
    raise TypeError(f"unknown request {request!r}")


def distinct(values: NDArray, weights: NDArray) -> tuple[NDArray, NDArray]:
    """Sorted distinct values and the summed weight of each."""
    unique, inverse = np.unique(values, return_inverse=True)
    return unique, np.bincount(inverse, weights=weights, minlength=unique.size)


def combine_requests(a: dict[Any, Any], b: dict[Any, Any]) -> dict[Any, Any]:
    """Join two request pieces: histograms add, collections merge their distinct values."""
    out: dict[Any, Any] = {}
    for request, mine in a.items():
        theirs = b[request]
        if isinstance(request, CollectRequest):
            out[request] = distinct(
                np.concatenate((mine[0], theirs[0])), np.concatenate((mine[1], theirs[1]))
            )
        elif isinstance(request, HistogramRequest):
            out[request] = (mine[0] + theirs[0], mine[1] + theirs[1])
        else:
            out[request] = mine + theirs
    return out


@dataclasses.dataclass(frozen=True)
class GatherPlan:
    """Counted rows to gather for a figure, by rank among all counted rows."""

    path: str
    columns: tuple[str, ...]
    ranks: NDArray[np.int64]


def gather_piece(rows: RowSlice, plan: GatherPlan) -> dict[str, NDArray]:
    """The chosen counted rows of one slice: every column and the weight."""
    with h5py.File(plan.path, "r") as handle:
        counted = read_rows(handle, rows)
        first = sum(rows.chain_before.values())
        local = (
            plan.ranks[(plan.ranks >= first) & (plan.ranks < first + counted.weights.size)] - first
        )
        out = {name: counted.column(handle, name, rows)[local] for name in plan.columns}
        out["weight"] = counted.weights[local]
    return out


def combine_gathered(a: dict[str, NDArray], b: dict[str, NDArray]) -> dict[str, NDArray]:
    """Append gathered rows in order."""
    return {name: np.concatenate((a[name], b[name])) for name in a}
