"""Shift between two independent weighted posteriors: their difference and its tension.

Notation: the ``first`` set holds samples ``x_i`` with weights ``u_i``, the ``second`` set
samples ``y_j`` with weights ``v_j`` (weights normalised to sum 1); the two are taken as
independent, and the difference is ``D = y - x`` (second minus first). Sets that share
data are correlated and are not handled here.

How each number is made
-----------------------
- **Difference distribution.** ``n_draws`` rows are drawn from each set by systematic
  resampling (:func:`agepost.stats.resample.weighted_subsample`), the draws of the second
  set are randomly permuted so that pairs are independent, and ``D_k = y_{j_k} - x_{i_k}``.
  Its median and intervals (equal-tailed, HPD, one-sided) follow the quantile rule of
  :mod:`agepost.stats.quantiles`. The random generator is the caller's (record its seed).
- **Mean and standard deviation** are exact: ``mean(D) = mean(y) - mean(x)`` and
  ``std(D) = sqrt(var(x) + var(y))`` from the weighted moments.
- **Sign probability** is exact over all pairs of the two weighted empirical
  distributions (no sampling noise): ``P(D < 0) = sum_i u_i [V(y < x_i) + V(y = x_i) / 2]``
  with ``V`` the weighted distribution of ``y``; ties count half to each sign.
  ``prob_same_sign = max(P(D > 0), P(D < 0))``. Since the median of ``D`` is positive
  exactly when ``P(D > 0) > 1/2``, this is the posterior probability that the difference
  has the sign of its median.
- **Tension** ``tension_sigma = Phi^-1(prob_same_sign)``, ``Phi`` the standard normal
  CDF: the distance from zero, in standard deviations, of a Gaussian difference with the
  same probability of the opposite sign. Equivalently the two-sided probability
  ``p = 2 (1 - prob_same_sign)`` turned into ``Phi^-1(1 - p / 2)``. For two Gaussian
  posteriors it equals ``|mu_y - mu_x| / sqrt(s_x^2 + s_y^2)``.
- **Resolution.** Two sets of effective sizes ``n_x`` and ``n_y`` cannot resolve an
  opposite-sign mass below ``p_min = 1 / (n_x n_y)``. When ``1 - prob_same_sign < p_min``
  the tension is quoted as the lower bound ``Phi^-1(1 - p_min)`` with
  ``tension_is_lower_bound = True``.
- ``tension_sigma_gaussian = |mean(D)| / std(D)``: the same for Gaussian posteriors; a
  large disagreement with ``tension_sigma`` flags non-Gaussian tails.
- Intervals of ``D`` are quoted only when ``min(n_x, n_y) (1 - L) / 2`` is at least
  :data:`agepost.stats.summary.MIN_TAIL_ESS` (the rule of :func:`~agepost.stats.summary.summarise`).
"""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence
from math import nan

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy.special import ndtri

from agepost.errors import ConfigError
from agepost.stats.intervals import (
    equal_tail_sorted,
    hpd_sorted,
    lower_limit_sorted,
    upper_limit_sorted,
)
from agepost.stats.quantiles import (
    check_weighted,
    kish_ess,
    quantiles_sorted,
    sort_weighted,
    weighted_mean_std,
)
from agepost.stats.resample import weighted_subsample
from agepost.stats.summary import MIN_TAIL_ESS, IntervalSummary, level_key

#: Default number of resampled pairs for the difference distribution.
DEFAULT_DRAWS = 200_000


@dataclasses.dataclass(frozen=True)
class DifferenceSummary:
    """Posterior of ``second - first`` for two independent weighted sample sets.

    Attributes
    ----------
    median : float
        Median of the resampled differences.
    mean, std : float
        Exact mean and standard deviation of the difference (see module docstring).
    intervals : dict
        Level key (``"0.68"``) -> :class:`~agepost.stats.summary.IntervalSummary`; NaN
        entries where the effective sizes cannot support the level.
    prob_same_sign : float in [0.5, 1]
        Posterior probability that the difference has the sign of its median.
    tension_sigma : float
        ``Phi^-1(prob_same_sign)`` (a lower bound when ``tension_is_lower_bound``).
    tension_is_lower_bound : bool
    tension_sigma_gaussian : float
        ``|mean| / std``; ``nan`` when ``std`` is zero.
    n_draws : int
        Resampled pairs behind the median and intervals.
    ess_first, ess_second : float
        Effective sample sizes used for the resolution and the interval rule.
    warnings : tuple of str
    """

    median: float
    mean: float
    std: float
    intervals: dict[str, IntervalSummary]
    prob_same_sign: float
    tension_sigma: float
    tension_is_lower_bound: bool
    tension_sigma_gaussian: float
    n_draws: int
    ess_first: float
    ess_second: float
    warnings: tuple[str, ...]


def sign_probabilities(
    first: ArrayLike,
    first_weights: ArrayLike | None,
    second: ArrayLike,
    second_weights: ArrayLike | None,
) -> tuple[float, float]:
    """Exact ``(P(D > 0), P(D < 0))`` of ``D = second - first`` over all weighted pairs.

    Ties (``D = 0``) count half to each side, so the two probabilities sum to 1.

    Examples
    --------
    >>> sign_probabilities([0.0, 1.0], None, [0.5], None)
    (0.5, 0.5)
    """
    x, u = check_weighted(first, first_weights)
    y_sorted = sort_weighted(second, second_weights)
    below = np.concatenate(([0.0], np.cumsum(y_sorted.weights)))
    strictly_less = below[np.searchsorted(y_sorted.values, x, side="left")]
    less_or_equal = below[np.searchsorted(y_sorted.values, x, side="right")]
    u = u / u.sum()
    p_negative = float(np.dot(u, 0.5 * (strictly_less + less_or_equal)))
    p_negative = min(max(p_negative, 0.0), 1.0)
    return 1.0 - p_negative, p_negative


def tension_from_probability(prob_same_sign: float) -> float:
    """Equivalent Gaussian standard deviations ``Phi^-1(prob_same_sign)`` (>= 0).

    Examples
    --------
    >>> round(tension_from_probability(0.841344746), 6)
    1.0
    """
    opposite = 1.0 - float(prob_same_sign)
    if not 0.0 <= opposite <= 0.5:
        raise ConfigError(f"prob_same_sign {prob_same_sign} must lie in [0.5, 1]")
    return float(-ndtri(opposite)) if opposite > 0 else float("inf")


def difference_summary(
    first: ArrayLike,
    first_weights: ArrayLike | None,
    second: ArrayLike,
    second_weights: ArrayLike | None,
    *,
    levels: Sequence[float] = (0.68, 0.95),
    n_draws: int = DEFAULT_DRAWS,
    rng: np.random.Generator | int | None = None,
    ess_first: float | None = None,
    ess_second: float | None = None,
) -> DifferenceSummary:
    """Summarise the posterior of ``second - first`` (see the module docstring).

    Parameters
    ----------
    first, second : (n,) and (m,) arrays
        Finite samples of one quantity from two independent posteriors.
    first_weights, second_weights : arrays or None
        Non-negative weights (None means all 1).
    levels : sequence of float in (0, 1)
    n_draws : int
        Resampled pairs for the median and intervals.
    rng : Generator, int seed or None
    ess_first, ess_second : float or None
        Effective sample sizes of the two sets (for example accounting for
        autocorrelation); default: Kish's ESS of the weights.
    """
    x, u = check_weighted(first, first_weights)
    y, v = check_weighted(second, second_weights)
    generator = np.random.default_rng(rng)
    n_x = kish_ess(u) if ess_first is None else float(ess_first)
    n_y = kish_ess(v) if ess_second is None else float(ess_second)
    draws = _paired_differences(x, u, y, v, n_draws, generator)
    mean_x, std_x = weighted_mean_std(x, u)
    mean_y, std_y = weighted_mean_std(y, v)
    mean, std = mean_y - mean_x, float(np.hypot(std_x, std_y))

    p_positive, p_negative = sign_probabilities(x, u, y, v)
    opposite = min(p_positive, p_negative)
    p_min = 1.0 / (n_x * n_y)
    bounded = opposite < p_min
    tension = float(-ndtri(p_min)) if bounded else tension_from_probability(1.0 - opposite)
    notes = []
    if bounded:
        notes.append(
            "no resolvable mass of the opposite sign "
            f"(below 1/(ESS_first ESS_second) = {p_min:.2g}): "
            f"the tension is at least {tension:.2f} sigma; longer chains would sharpen it"
        )
    intervals, interval_notes = _intervals(draws, levels, min(n_x, n_y))
    return DifferenceSummary(
        median=float(quantiles_sorted(sort_weighted(draws), 0.5)),
        mean=float(mean),
        std=std,
        intervals=intervals,
        prob_same_sign=1.0 - opposite,
        tension_sigma=tension,
        tension_is_lower_bound=bool(bounded),
        tension_sigma_gaussian=abs(mean) / std if std > 0 else nan,
        n_draws=int(draws.size),
        ess_first=float(n_x),
        ess_second=float(n_y),
        warnings=tuple(notes + interval_notes),
    )


def _paired_differences(
    x: NDArray[np.float64],
    u: NDArray[np.float64],
    y: NDArray[np.float64],
    v: NDArray[np.float64],
    n_draws: int,
    rng: np.random.Generator,
) -> NDArray[np.float64]:
    """``n_draws`` differences of independently paired systematic resamples."""
    if int(n_draws) != n_draws or n_draws < 1:
        raise ConfigError(
            f"the number of resampled pairs must be a whole number >= 1, got {n_draws!r}"
        )
    rows_x = weighted_subsample(u, int(n_draws), rng=rng)
    rows_y = rng.permutation(weighted_subsample(v, int(n_draws), rng=rng))
    return y[rows_y] - x[rows_x]


def _intervals(
    draws: NDArray[np.float64], levels: Sequence[float], ess: float
) -> tuple[dict[str, IntervalSummary], list[str]]:
    """Intervals of the differences at each level, NaN where ``ess`` cannot support it."""
    sample = sort_weighted(draws)
    intervals: dict[str, IntervalSummary] = {}
    notes = []
    for level in levels:
        key = level_key(level)
        if ess * (1 - float(level)) / 2 < MIN_TAIL_ESS:
            notes.append(
                f"the {key} interval of the difference is not quoted: only "
                f"{ess * (1 - float(level)) / 2:.1f} effective samples lie beyond each end"
            )
            intervals[key] = IntervalSummary(float(level), (nan, nan), (nan, nan), nan, nan)
            continue
        intervals[key] = IntervalSummary(
            float(level),
            equal_tail_sorted(sample, level),
            hpd_sorted(sample, level),
            upper_limit_sorted(sample, level),
            lower_limit_sorted(sample, level),
        )
    return intervals, notes
