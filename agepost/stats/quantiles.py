"""Weighted quantiles, mean, standard deviation and Kish ESS of one set of samples.

Interpolation rule (the only one used anywhere in agepost)
-----------------------------------------------------------
Samples are sorted and tied values are merged into one point carrying the sum of their
weights. Each distinct value ``x_j`` with normalised weight ``w_j`` sits at the
cumulative-weight midpoint

    p_j = (w_1 + ... + w_{j-1}) + w_j / 2,

and the quantile function ``Q(p)`` is the straight line through the points ``(p_j, x_j)``;
below ``p_1`` it is ``x_1`` and above ``p_last`` it is ``x_last``. With equal weights and
no ties this is the classic midpoint (Hazen) rule ``p_i = (i - 1/2) / n``. Because ties
are merged, a row of weight 2 gives exactly the same quantiles as the same row written
twice with weight 1.
"""

from __future__ import annotations

import dataclasses

import numpy as np
from numpy.typing import ArrayLike, NDArray

from agepost.errors import ComputationError, InputError


@dataclasses.dataclass(frozen=True)
class SortedSample:
    """Distinct sorted values with their merged, normalised weights.

    Attributes
    ----------
    values : (m,) float
        Distinct sample values in increasing order.
    weights : (m,) float
        Weight of each distinct value; sums to 1.
    positions : (m,) float
        Cumulative-weight midpoints ``p_j`` of the interpolation rule, in (0, 1).
    """

    values: NDArray[np.float64]
    weights: NDArray[np.float64]
    positions: NDArray[np.float64]


def check_weighted(
    values: ArrayLike, weights: ArrayLike | None = None
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Validate samples and weights; return float arrays with weights defaulting to 1.

    Raises
    ------
    InputError
        Values not one-dimensional or not finite; weights of another length, negative or
        not finite (the message names the first bad row).
    ComputationError
        No samples, or every weight is zero.
    """
    x = np.asarray(values, dtype=np.float64)
    if x.ndim != 1:
        raise InputError(f"samples must be a one-dimensional array, got shape {x.shape}")
    if x.size == 0:
        raise ComputationError(
            "no samples to summarise: every row was excluded or the input is empty"
        )
    bad = np.flatnonzero(~np.isfinite(x))
    if bad.size:
        raise InputError(
            f"sample row {bad[0]} is {x[bad[0]]}; drop non-finite rows before summarising"
        )
    if weights is None:
        return x, np.ones_like(x)
    w = np.asarray(weights, dtype=np.float64)
    if w.shape != x.shape:
        raise InputError(f"weights have shape {w.shape} but samples have shape {x.shape}")
    bad = np.flatnonzero(~np.isfinite(w) | (w < 0))
    if bad.size:
        raise InputError(f"weight in row {bad[0]} is {w[bad[0]]}; weights must be finite and >= 0")
    if not np.any(w > 0):
        raise ComputationError("every weight is zero: there is no posterior mass to summarise")
    return x, w


def sort_weighted(values: ArrayLike, weights: ArrayLike | None = None) -> SortedSample:
    """Sort samples, merge ties and place them at cumulative-weight midpoints.

    Parameters
    ----------
    values : (n,) array
        Finite sample values.
    weights : (n,) array or None
        Non-negative weights (None means all 1).
    """
    x, w = check_weighted(values, weights)
    keep = w > 0  # zero-weight rows are legal but are not part of the distribution
    x, w = x[keep], w[keep]
    order = np.argsort(x, kind="stable")
    x, w = x[order], w[order]
    starts = np.flatnonzero(np.r_[True, x[1:] != x[:-1]])
    distinct = x[starts]
    merged = np.add.reduceat(w, starts) / w.sum()
    upper = np.cumsum(merged)
    upper /= upper[-1]
    return SortedSample(distinct, merged, upper - merged / 2)


def quantiles_sorted(sample: SortedSample, probabilities: ArrayLike) -> NDArray[np.float64]:
    """Quantiles ``Q(p)`` of a prepared sample under the module's interpolation rule.

    Parameters
    ----------
    sample : SortedSample
    probabilities : array of float in [0, 1]

    Returns
    -------
    ndarray of the same shape as ``probabilities``.
    """
    p = np.asarray(probabilities, dtype=np.float64)
    if np.any(~np.isfinite(p) | (p < 0) | (p > 1)):
        raise InputError(f"quantile probabilities must lie in [0, 1], got {p}")
    return np.interp(p, sample.positions, sample.values)


def weighted_quantile(
    values: ArrayLike, probabilities: ArrayLike, weights: ArrayLike | None = None
) -> NDArray[np.float64]:
    """Weighted quantiles by the midpoint interpolation rule of this module.

    Parameters
    ----------
    values : (n,) array
        Finite samples.
    probabilities : float or array in [0, 1]
    weights : (n,) array or None

    Returns
    -------
    ndarray shaped like ``probabilities``.

    Examples
    --------
    >>> float(weighted_quantile([1.0, 2.0, 3.0, 4.0], 0.5))
    2.5
    >>> float(weighted_quantile([1.0, 2.0], 0.5, weights=[3.0, 1.0]))  # positions 0.375, 0.875
    1.25
    """
    return quantiles_sorted(sort_weighted(values, weights), probabilities)


def weighted_mean_std(values: ArrayLike, weights: ArrayLike | None = None) -> tuple[float, float]:
    """Weighted mean and standard deviation of the weighted distribution.

    The standard deviation is that of the weighted empirical distribution (divide by the
    total weight, no small-sample correction), the usual choice for posterior samples.
    """
    x, w = check_weighted(values, weights)
    mean = float(np.average(x, weights=w))
    variance = float(np.average((x - mean) ** 2, weights=w))
    return mean, float(np.sqrt(variance))


def kish_ess(weights: ArrayLike) -> float:
    """Kish's effective sample size ``(sum w)^2 / sum w^2`` of importance weights."""
    w = np.asarray(weights, dtype=np.float64)
    total = w.sum()
    if not total > 0:
        raise ComputationError("every weight is zero: there is no posterior mass to summarise")
    scaled = w / w.max()
    return float(scaled.sum() ** 2 / np.sum(scaled**2))


def weighted_quantile_columns(
    samples: ArrayLike, probabilities: ArrayLike, weights: ArrayLike | None = None
) -> NDArray[np.float64]:
    """Quantiles of each column of a sample matrix (for bands over a grid).

    Parameters
    ----------
    samples : (n, k) array
        Finite values; each column is summarised on its own with the shared weights.
    probabilities : (m,) array in [0, 1]
    weights : (n,) array or None

    Returns
    -------
    (m, k) array: row ``i`` holds quantile ``probabilities[i]`` of every column.
    """
    matrix = np.asarray(samples, dtype=np.float64)
    if matrix.ndim != 2:
        raise InputError(f"samples must be a (n, k) matrix, got shape {matrix.shape}")
    p = np.atleast_1d(np.asarray(probabilities, dtype=np.float64))
    columns = [weighted_quantile(matrix[:, j], p, weights) for j in range(matrix.shape[1])]
    return np.stack(columns, axis=1) if columns else np.empty((p.size, 0))
