"""Monte Carlo standard errors of a mean, of quantiles and of HPD interval ends.

Methods
-------
Mean
    ``std / sqrt(ess)`` with the effective sample size of :mod:`agepost.stats.diagnostics`.
Quantile ``Q(p)`` (median, equal-tailed ends, one-sided limits)
    Vehtari et al. (2021, Bayesian Analysis 16, 667), section 4.3: ``S`` is the effective
    sample size of the indicator ``x <= Q(p)`` (the smaller of its autocorrelation ESS and
    Kish's ESS of the weights); the 15.87 and 84.13 percent points ``a, b`` of
    ``Beta(S p + 1, S (1 - p) + 1)`` are mapped through the quantile function and
    ``MCSE = (Q(b) - Q(a)) / 2``. No density estimate is needed.
HPD interval ends
    The ends of a shortest interval move with its fitted position as well as with the
    quantile noise, and they converge at the cube-root rate ``n^(-1/3)`` of such fitted
    estimates rather than ``n^(-1/2)``, so the quantile formula would understate their
    error several-fold. They use batches instead: the rows are cut into ``B`` batches
    (each chain into ``B`` consecutive segments, segment ``b`` of every chain forming
    batch ``b``; rows without chain order are dealt out in turn), the HPD interval is
    found in each batch, and ``MCSE = sd(batch ends) * B^(-1/3)``. ``B`` is
    :data:`HPD_BATCHES`, reduced so that every batch keeps at least
    :data:`MIN_BATCH_TAIL_ESS` effective samples beyond each end; below
    :data:`MIN_HPD_BATCHES` batches the quantile formula at the end's cumulative weight is
    used instead (and then understates the error). Checked against the scatter of
    repeated runs in the tests: within about 20 percent where the density at the ends is
    not steep, up to 1.8 times too large in a steep tail.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy import special, stats

from agepost.stats.diagnostics import combined_ess, split_chains
from agepost.stats.intervals import check_level, hpd_interval, hpd_position
from agepost.stats.quantiles import SortedSample, quantiles_sorted

#: Batches for the HPD-end standard error.
HPD_BATCHES = 16
#: Fewest batches for which the batch estimate is used.
MIN_HPD_BATCHES = 4
#: Effective samples each batch needs beyond each end of the equal-tailed interval.
MIN_BATCH_TAIL_ESS = 5.0
_ONE_SIGMA = float(special.ndtr(-1.0))  # 0.158655...


def mcse_mean(std: float, ess: float) -> float:
    """Monte Carlo standard error of a weighted mean, ``std / sqrt(ess)``."""
    return float(std / np.sqrt(ess))


def mcse_quantiles(
    sample: SortedSample,
    values: ArrayLike,
    weights: ArrayLike,
    chain_id: ArrayLike | None,
    probabilities: ArrayLike,
) -> NDArray[np.float64]:
    """Monte Carlo standard error of ``Q(p)`` for each ``p`` (Vehtari et al. 2021, sec. 4.3).

    Parameters
    ----------
    sample : SortedSample
        The prepared form of ``values`` and ``weights``.
    values, weights : (n,) arrays
        The same samples in chain order (needed for the indicator's autocorrelation).
    chain_id : (n,) int array or None
        None treats rows as independent (Kish's ESS only).
    probabilities : (k,) array in [0, 1]

    Returns
    -------
    (k,) float in the units of ``values``.
    """
    x = np.asarray(values, dtype=np.float64)
    p = np.atleast_1d(np.asarray(probabilities, dtype=np.float64))
    at = quantiles_sorted(sample, p)
    result = np.empty(p.size)
    for k, (prob, value) in enumerate(zip(p, at, strict=True)):
        ess = combined_ess((x <= value).astype(np.float64), weights, chain_id)
        a = stats.beta.ppf(_ONE_SIGMA, ess * prob + 1, ess * (1 - prob) + 1)
        b = stats.beta.ppf(1 - _ONE_SIGMA, ess * prob + 1, ess * (1 - prob) + 1)
        low, high = quantiles_sorted(sample, [a, b])
        result[k] = 0.5 * (high - low)
    return result


def batch_labels(n_rows: int, chain_id: ArrayLike | None, n_batches: int) -> NDArray[np.int64]:
    """Batch of each row: consecutive segments of every chain, or rows dealt out in turn.

    Parameters
    ----------
    n_rows : int
    chain_id : (n_rows,) int array or None
        Rows of one chain in sampling order. None deals rows out ``0, 1, ..., B-1, 0, ...``.
    n_batches : int
    """
    if chain_id is None:
        return np.arange(n_rows) % n_batches
    labels = np.empty(n_rows, dtype=np.int64)
    for rows in split_chains(np.arange(n_rows, dtype=np.float64), chain_id):
        index = rows.astype(np.int64)
        labels[index] = np.arange(index.size) * n_batches // max(index.size, 1)
    return labels


def mcse_hpd(
    sample: SortedSample,
    values: ArrayLike,
    weights: ArrayLike,
    chain_id: ArrayLike | None,
    *,
    level: float,
    ess: float,
) -> tuple[float, float]:
    """Monte Carlo standard errors of the two ends of the HPD interval at ``level``.

    Parameters
    ----------
    sample : SortedSample
        Prepared form of ``values`` and ``weights``.
    values, weights : (n,) arrays
        The same rows, in chain order.
    chain_id : (n,) int array or None
    level : float in (0, 1)
    ess : float
        Effective sample size of the whole sample (sets how many batches are possible).

    Returns
    -------
    (mcse_low, mcse_high) in the units of ``values``; method in the module docstring.
    """
    level = check_level(level)
    x = np.asarray(values, dtype=np.float64)
    w = np.asarray(weights, dtype=np.float64)
    n_batches = min(HPD_BATCHES, int(ess * (1 - level) / 2 / MIN_BATCH_TAIL_ESS))
    labels = batch_labels(x.size, chain_id, max(n_batches, 1))
    every_batch_weighs = np.all(np.bincount(labels, weights=w, minlength=n_batches) > 0)
    if n_batches < MIN_HPD_BATCHES or not every_batch_weighs:
        p = hpd_position(sample, level)
        low, high = mcse_quantiles(sample, x, w, chain_id, [p, min(p + level, 1.0)])
        return float(low), float(high)
    ends = np.array(
        [hpd_interval(x[labels == b], w[labels == b], level=level) for b in range(n_batches)]
    )
    low, high = ends.std(axis=0, ddof=1) * n_batches ** (-1.0 / 3.0)
    return float(low), float(high)
