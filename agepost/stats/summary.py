"""One call that turns the weighted samples of a quantity into every number a paper quotes.

:func:`summarise` gathers location, spread, mode, intervals at each level, effective sample
sizes, Monte Carlo standard errors and split R-hat into a frozen :class:`QuantitySummary`,
with plain-language warnings wherever the samples cannot support a number.

Warning rules
-------------
- all samples equal: zero spread (the summary is still returned);
- effective sample size below :data:`LOW_ESS`;
- an interval level with fewer than :data:`MIN_TAIL_ESS` effective samples beyond each end
  of its equal-tailed interval, ``ess (1 - L) / 2 < 5``: the level's interval, limits and
  their MCSE are NaN (JSON null) instead of a meaningless number;
- a chain shorter than 50 autocorrelation times (unreliable ESS);
- split R-hat above 1.01, or R-hat impossible with several chains (half chains too short).

MCSE keys
---------
``"mean"``, ``"median"``, and for each level key ``K`` (e.g. ``"0.68"``):
``"K:equal_tail:lo"``, ``"K:equal_tail:hi"``, ``"K:hpd:lo"``, ``"K:hpd:hi"``,
``"K:upper"``, ``"K:lower"``.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence
from math import nan

import numpy as np
from numpy.typing import ArrayLike, NDArray

from agepost.errors import InputError
from agepost.stats import diagnostics, mcse
from agepost.stats.density import mode_sorted
from agepost.stats.intervals import (
    check_level,
    equal_tail_sorted,
    hpd_sorted,
    lower_limit_sorted,
    upper_limit_sorted,
)
from agepost.stats.quantiles import (
    SortedSample,
    check_weighted,
    kish_ess,
    quantiles_sorted,
    sort_weighted,
    weighted_mean_std,
)

#: A level needs this many effective samples beyond each end of its equal-tailed interval.
MIN_TAIL_ESS = 5.0
#: Effective sample sizes below this are reported as a warning (common practice).
LOW_ESS = 100.0


@dataclasses.dataclass(frozen=True)
class IntervalSummary:
    """Intervals at one credible level (units of the quantity; NaN when not supported).

    Attributes
    ----------
    level : float in (0, 1)
    equal_tail : (low, high)
    hpd : (low, high), highest posterior density
    upper : one-sided upper limit ``Q(level)``
    lower : one-sided lower limit ``Q(1 - level)``
    """

    level: float
    equal_tail: tuple[float, float]
    hpd: tuple[float, float]
    upper: float
    lower: float


@dataclasses.dataclass(frozen=True)
class QuantitySummary:
    """Everything quoted about one quantity; see :func:`summarise` and the module docstring."""

    n_samples: int
    mean: float
    median: float
    std: float
    mode: float
    intervals: dict[str, IntervalSummary]
    ess: float
    ess_kish: float
    ess_autocorr: float | None
    mcse: dict[str, float]
    rhat: float | None
    warnings: tuple[str, ...]


def level_key(level: float) -> str:
    """Text key of a level: shortest exact decimal, ``0.68 -> "0.68"``."""
    return np.format_float_positional(check_level(level), trim="-")


def summarise(
    values: ArrayLike,
    weights: ArrayLike | None = None,
    chain_id: ArrayLike | None = None,
    *,
    levels: Sequence[float] = (0.68, 0.95),
) -> QuantitySummary:
    """Summarise the weighted samples of one quantity.

    Parameters
    ----------
    values : (n,) array
        Finite samples (only the rows kept for this quantity).
    weights : (n,) array or None
        Non-negative weights; None means all 1. Zero-weight rows count in ``n_samples``
        but take no part in any statistic.
    chain_id : (n,) int array or None
        Chain of each row, rows of one chain in sampling order. Gives the
        autocorrelation ESS and (with two or more chains) split R-hat. None treats the
        rows as independent draws (for example importance samples).
    levels : sequence of float in (0, 1)
        Credible levels of the intervals.

    Raises
    ------
    ComputationError
        No samples, or all weights zero.
    InputError
        Non-finite values, bad weights, chain ids of the wrong shape.
    ConfigError
        A level outside (0, 1).
    """
    keys = {level_key(level): check_level(level) for level in levels}
    x, w = check_weighted(values, weights)
    n_samples = int(x.size)
    ids = None if chain_id is None else np.asarray(chain_id)
    if ids is not None and ids.shape != x.shape:
        raise InputError(f"chain ids have shape {ids.shape} but samples have shape {x.shape}")
    positive = w > 0
    x, w = x[positive], w[positive]
    if ids is not None:  # group rows by chain once, keeping each chain's order
        order = np.argsort(ids[positive], kind="stable")
        x, w, ids = x[order], w[order], ids[positive][order]

    sample = sort_weighted(x, w)
    mean, std = weighted_mean_std(x, w)
    spread = sample.values.size > 1
    ess_kish = kish_ess(w)
    auto = diagnostics.autocorr_ess(x, ids) if ids is not None and spread else None
    ess = min(ess_kish, auto.ess) if auto is not None else ess_kish
    rhat = diagnostics.split_rhat(x, ids) if ids is not None and spread else None
    notes = _diagnostic_warnings(x, ids, n_samples, spread, ess, auto, rhat)

    median = float(quantiles_sorted(sample, 0.5))
    errors = {
        "mean": mcse.mcse_mean(std, ess),
        "median": float(mcse.mcse_quantiles(sample, x, w, ids, [0.5])[0]),
    }
    intervals = {}
    for key, level in keys.items():
        if ess * (1 - level) / 2 < MIN_TAIL_ESS:
            notes.append(
                f"the {key} intervals are not quoted: only {ess * (1 - level) / 2:.1f} effective "
                f"samples lie beyond each end (at least {MIN_TAIL_ESS:g} needed); "
                "run a longer chain"
            )
            intervals[key] = IntervalSummary(level, (nan, nan), (nan, nan), nan, nan)
            errors |= {f"{key}:{end}": nan for end in _ENDS}
        else:
            intervals[key], level_errors = _level_summary(sample, x, w, ids, level, ess)
            errors |= {f"{key}:{end}": error for end, error in level_errors.items()}
    return QuantitySummary(
        n_samples=n_samples,
        mean=mean,
        median=median,
        std=std,
        mode=mode_sorted(sample, n_eff=ess_kish),
        intervals=intervals,
        ess=float(ess),
        ess_kish=float(ess_kish),
        ess_autocorr=None if auto is None else float(auto.ess),
        mcse=errors,
        rhat=rhat,
        warnings=tuple(notes),
    )


_ENDS = ("equal_tail:lo", "equal_tail:hi", "hpd:lo", "hpd:hi", "upper", "lower")


def _level_summary(
    sample: SortedSample,
    x: NDArray[np.float64],
    w: NDArray[np.float64],
    ids: NDArray[np.int64] | None,
    level: float,
    ess: float,
) -> tuple[IntervalSummary, dict[str, float]]:
    """Intervals at one level and the MCSE of each end, keyed as in :data:`_ENDS`."""
    low, high = equal_tail_sorted(sample, level)
    hpd = hpd_sorted(sample, level)
    upper, lower = upper_limit_sorted(sample, level), lower_limit_sorted(sample, level)
    probabilities = [(1 - level) / 2, (1 + level) / 2, level, 1 - level]
    et_low, et_high, up, down = mcse.mcse_quantiles(sample, x, w, ids, probabilities)
    hpd_low, hpd_high = mcse.mcse_hpd(sample, x, w, ids, level=level, ess=ess)
    errors = [et_low, et_high, hpd_low, hpd_high, up, down]
    summary = IntervalSummary(level, (low, high), hpd, upper, lower)
    return summary, {end: float(e) for end, e in zip(_ENDS, errors, strict=True)}


def _diagnostic_warnings(
    x: np.ndarray,
    ids: np.ndarray | None,
    n_samples: int,
    spread: bool,
    ess: float,
    auto: diagnostics.AutocorrESS | None,
    rhat: float | None,
) -> list[str]:
    notes = []
    if not spread:
        notes.append(
            f"zero spread: all {n_samples} samples equal {x[0]:.10g}; "
            "every interval is that single value"
        )
    if spread and ess < LOW_ESS:
        notes.append(
            f"effective sample size {ess:.1f} is below {LOW_ESS:g}; "
            "the quoted digits may not be supported"
        )
    if auto is not None and not auto.reliable:
        worst = int(np.argmin(auto.n_rows / auto.tau))
        notes.append(
            f"autocorrelation time unreliable: a chain has {auto.n_rows[worst]} rows, fewer than "
            f"{diagnostics.RELIABLE_TAUS:g} times its autocorrelation time {auto.tau[worst]:.1f}; "
            "run longer chains"
        )
    if rhat is not None and rhat > diagnostics.RHAT_WARNING:
        notes.append(
            f"split R-hat {rhat:.4f} exceeds {diagnostics.RHAT_WARNING}: the chains have not "
            "converged to one distribution; run longer or discard more burn-in"
        )
    if rhat is None and spread and ids is not None and np.unique(ids).size > 1:
        notes.append(
            "split R-hat not computed: a chain has fewer than 4 kept rows or its halves do not vary"
        )
    return notes
