"""Credible intervals of weighted samples: equal-tailed, highest posterior density, one-sided.

All intervals use the quantile function ``Q(p)`` of :mod:`agepost.stats.quantiles`
(cumulative-weight midpoints, linear interpolation), so they agree with the quoted
quantiles to the last digit.

- Equal-tailed at level ``L``: ``[Q((1 - L)/2), Q((1 + L)/2)]``.
- Highest posterior density (HPD) at level ``L``: the shortest interval
  ``[Q(p), Q(p + L)]`` over ``0 <= p <= 1 - L``, i.e. the shortest interval of the
  weighted sorted samples holding weight ``L``. ``Q`` is piecewise linear, so the width is
  piecewise linear in ``p`` and its minimum lies at a knot: every ``p`` with ``p`` or
  ``p + L`` at a sample position is tried, which makes the result exact for this rule.
  For a multimodal posterior it is the single shortest interval, not a union.
- One-sided upper limit at level ``L``: ``Q(L)`` (weight ``L`` lies below it); lower
  limit: ``Q(1 - L)`` (weight ``L`` lies above it). Quote these for a quantity pinned at a
  prior edge.
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import ArrayLike

from agepost.errors import ConfigError
from agepost.stats.quantiles import SortedSample, quantiles_sorted, sort_weighted


def check_level(level: float) -> float:
    """Return ``level`` as a float, or raise ConfigError unless it lies strictly in (0, 1)."""
    try:
        value = float(level)
    except (TypeError, ValueError):
        raise ConfigError(
            f"credible level {level!r} is not a number; give a value in (0, 1) such as 0.68"
        ) from None
    if not (math.isfinite(value) and 0.0 < value < 1.0):
        raise ConfigError(
            f"credible level {level!r} is outside (0, 1); "
            "give a fraction such as 0.68 or 0.95, not a percentage"
        )
    return value


def equal_tail_sorted(sample: SortedSample, level: float) -> tuple[float, float]:
    """Equal-tailed interval of a prepared sample; see the module docstring."""
    level = check_level(level)
    low, high = quantiles_sorted(sample, [(1 - level) / 2, (1 + level) / 2])
    return float(low), float(high)


def hpd_position(sample: SortedSample, level: float) -> float:
    """Lower cumulative weight ``p`` of the HPD interval ``[Q(p), Q(p + level)]``."""
    level = check_level(level)
    span = 1.0 - level
    knots = np.concatenate(([0.0, span], sample.positions, sample.positions - level))
    knots = np.unique(knots[(knots >= 0.0) & (knots <= span)])
    widths = np.interp(knots + level, sample.positions, sample.values) - np.interp(
        knots, sample.positions, sample.values
    )
    return float(knots[int(np.argmin(widths))])


def hpd_sorted(sample: SortedSample, level: float) -> tuple[float, float]:
    """Highest-posterior-density interval of a prepared sample; see the module docstring."""
    p = hpd_position(sample, level)
    low, high = quantiles_sorted(sample, [p, min(p + float(level), 1.0)])
    return float(low), float(high)


def upper_limit_sorted(sample: SortedSample, level: float) -> float:
    """One-sided upper limit ``Q(level)`` of a prepared sample."""
    return float(quantiles_sorted(sample, check_level(level)))


def lower_limit_sorted(sample: SortedSample, level: float) -> float:
    """One-sided lower limit ``Q(1 - level)`` of a prepared sample."""
    return float(quantiles_sorted(sample, 1.0 - check_level(level)))


def equal_tail_interval(
    values: ArrayLike, weights: ArrayLike | None = None, *, level: float = 0.68
) -> tuple[float, float]:
    """Equal-tailed credible interval ``[Q((1-L)/2), Q((1+L)/2)]``.

    Parameters
    ----------
    values : (n,) array
        Finite samples.
    weights : (n,) array or None
        Non-negative weights (None means all 1).
    level : float in (0, 1)

    Returns
    -------
    (low, high) in the units of ``values``.
    """
    return equal_tail_sorted(sort_weighted(values, weights), level)


def hpd_interval(
    values: ArrayLike, weights: ArrayLike | None = None, *, level: float = 0.68
) -> tuple[float, float]:
    """Shortest interval holding weight ``level`` (highest posterior density).

    Parameters and return as :func:`equal_tail_interval`.

    Examples
    --------
    >>> [round(end, 12) for end in hpd_interval([0.0, 1.0, 2.0, 3.0, 10.0], level=0.5)]
    [0.0, 2.0]
    """
    return hpd_sorted(sort_weighted(values, weights), level)


def upper_limit(
    values: ArrayLike, weights: ArrayLike | None = None, *, level: float = 0.95
) -> float:
    """One-sided upper limit: the value with weight ``level`` below it, ``Q(level)``."""
    return upper_limit_sorted(sort_weighted(values, weights), level)


def lower_limit(
    values: ArrayLike, weights: ArrayLike | None = None, *, level: float = 0.95
) -> float:
    """One-sided lower limit: the value with weight ``level`` above it, ``Q(1 - level)``."""
    return lower_limit_sorted(sort_weighted(values, weights), level)
