"""Summaries of every quantity in a samples file too large for memory, in a few passes.

The numbers are those of :func:`agepost.stats.summary.summarise` (same fields, same
warnings); how each is obtained with bounded memory:

- mean, standard deviation, Kish ESS: exact, merged from the derive pass
  (:mod:`agepost.engines.moments`);
- median, equal-tailed ends, one-sided limits, quartiles: exact under the in-memory
  quantile rule (:mod:`agepost.engines.targets`);
- HPD ends: exact, or within a reported bound for flat posteriors (same module);
- mode: the in-memory binned-kernel estimate, from the same 2048-bin histogram;
- autocorrelation ESS, quantile MCSE, split R-hat: :mod:`agepost.engines.chainstats`
  (exact per chain that fits in memory, batch means beyond; ranks for R-hat from the
  grid); the spread ``Q(b) - Q(a)`` of the quantile MCSE is read from the top grid with
  a density taken flat inside each bin;
- HPD MCSE: :mod:`agepost.engines.hpd_batches`.
"""

from __future__ import annotations

import dataclasses
import functools
from collections.abc import Callable, Iterable, Iterator
from math import nan
from typing import Any, Protocol

import numpy as np
from scipy import special, stats
from scipy.ndimage import gaussian_filter1d

from agepost.engines import chainstats, hpd_batches
from agepost.engines.derive_pass import RowSlice, RunTally
from agepost.engines.grids import Grid, GridCounts
from agepost.engines.moments import Moments
from agepost.engines.passes import MODE_BINS, ModeRequest, combine_requests, request_piece
from agepost.engines.targets import HistogramRequest, HpdTarget, QuantileTarget, resolve
from agepost.stats import diagnostics
from agepost.stats.mcse import HPD_BATCHES, MIN_BATCH_TAIL_ESS, MIN_HPD_BATCHES
from agepost.stats.summary import (
    _ENDS,
    MIN_TAIL_ESS,
    IntervalSummary,
    QuantitySummary,
    _diagnostic_warnings,
    level_key,
)

_ONE_SIGMA = float(special.ndtr(-1.0))


class Mapper(Protocol):
    """What an engine offers the passes: ``function(item, shared)`` over items, in order."""

    def map_ordered(
        self, function: Callable[[Any, Any], Any], items: Iterable[Any], *, shared: Any = None
    ) -> Iterator[Any]: ...


@dataclasses.dataclass(frozen=True)
class StreamSettings:
    """Memory budgets of the streamed summaries (rows of float64 values).

    Attributes
    ----------
    in_memory_values : runs of at most this many values (rows times parameter columns
        and derived quantities) are summarised in memory, exactly as
        :func:`agepost.stats.summary.summarise` does (12 million: 2 million rows of 6
        columns, or about 920,000 rows with 5 redshifts and 2 varying parameters).
    window_rows : rows collected for one quantile before its bins are zoomed instead.
    budget_rows : rows collected in one pass, over all quantities.
    chain_memory_rows : longest chain whose autocorrelation is computed in memory.
    batch_bins : bins of each batch histogram (HPD Monte Carlo error).
    figure_rows : rows drawn for the corner figure when ``plot_cap`` is not set.
    """

    in_memory_values: int = 12_000_000
    window_rows: int = 1_000_000
    budget_rows: int = 8_000_000
    chain_memory_rows: int = 2_000_000
    batch_bins: int = 1 << 14
    figure_rows: int = 200_000


def run_requests(engine: Mapper, path: str, slices: list[RowSlice], requests: list) -> dict:
    """One pass answering histogram, collection and mode requests."""
    pieces = engine.map_ordered(request_piece, slices, shared=(path, tuple(requests)))
    return functools.reduce(combine_requests, pieces)


def _probabilities(levels: tuple[float, ...]) -> list[float]:
    """Every quantile the summary quotes, as the in-memory code computes each ``p``."""
    wanted = [0.5, 0.25, 0.75]
    for level in levels:
        wanted += [(1 - level) / 2, (1 + level) / 2, level, 1.0 - level]
    return list(dict.fromkeys(wanted))


@dataclasses.dataclass
class _Work:
    """Working state of one quantity across the passes."""

    name: str
    moments: Moments
    top: GridCounts
    mode_weights: np.ndarray
    quantiles: dict[float, QuantileTarget]
    hpd: dict[float, HpdTarget]
    ess_indicator: dict[float, float] = dataclasses.field(default_factory=dict)
    auto: diagnostics.AutocorrESS = dataclasses.field(
        default_factory=lambda: diagnostics.AutocorrESS(
            nan, np.empty(0), np.empty(0, dtype=np.int64)
        )
    )
    rhat: float | None = None

    def q(self, p: float) -> float:
        return self.quantiles[p].value

    def mcse_probabilities(self, levels: tuple[float, ...]) -> list[tuple[float, float]]:
        """``(p, Q(p))`` of every quantile whose Monte Carlo error is quoted."""
        out = [(0.5, self.q(0.5))]
        for level in levels:
            for p in ((1 - level) / 2, (1 + level) / 2, level, 1.0 - level):
                out.append((p, self.q(p)))
            hpd = self.hpd[level]
            out += [
                (hpd.position, hpd.interval[0]),
                (min(hpd.position + level, 1.0), hpd.interval[1]),
            ]
        return out


def streamed_summaries(
    path: str,
    tally: RunTally,
    names: list[str],
    engine: Mapper,
    *,
    levels: tuple[float, ...],
    settings: StreamSettings,
) -> dict[str, QuantitySummary]:
    """Summaries of the samples-file datasets ``names`` (see the module docstring)."""
    run = functools.partial(run_requests, engine, path, tally.slices)
    varying = [n for n in names if tally.moments[n].spread]
    work = _first_pass(run, tally, varying, levels, settings)
    targets = [t for w in work.values() for t in (*w.quantiles.values(), *w.hpd.values())]
    resolve(targets, run, budget_rows=settings.budget_rows)
    errors: dict[str, dict[float, Any]] = {}
    if work:
        _chain_pass(engine, path, tally, work, levels, settings)
        errors = _hpd_errors(engine, path, tally, work, levels, settings)
    summaries = {}
    for name in names:
        if name in work:
            summaries[name] = _assemble(work[name], tally, levels, errors[name])
        else:
            summaries[name] = _constant(tally.moments[name], tally, levels)
    return summaries


def _first_pass(
    run: Callable,
    tally: RunTally,
    names: list[str],
    levels: tuple[float, ...],
    settings: StreamSettings,
) -> dict[str, _Work]:
    if not names:
        return {}
    tops = {
        n: HistogramRequest(n, Grid(tally.moments[n].low, tally.moments[n].high)) for n in names
    }
    modes = {n: ModeRequest(n, tally.moments[n].low, tally.moments[n].high) for n in names}
    results = run([*tops.values(), *modes.values()])
    work = {}
    for name in names:
        weights, counts = results[tops[name]]
        top = GridCounts(tops[name].grid, weights, counts, 0.0, float(weights.sum()))
        window = settings.window_rows
        work[name] = _Work(
            name,
            tally.moments[name],
            top,
            results[modes[name]],
            {p: QuantileTarget(name, top, p, window_rows=window) for p in _probabilities(levels)},
            {level: HpdTarget(name, top, level, window_rows=window) for level in levels},
        )
    return work


def _chain_pass(
    engine: Mapper,
    path: str,
    tally: RunTally,
    work: dict[str, _Work],
    levels: tuple[float, ...],
    settings: StreamSettings,
) -> None:
    chain_rows = dict(sorted(tally.chain_rows.items()))
    names = list(work)
    units, batch_rows = chainstats.plan_units(
        tally.slices, chain_rows, names, chain_memory_rows=settings.chain_memory_rows
    )
    plan = chainstats.ChainPlan(
        path=path,
        quantities=tuple(names),
        scales={n: chainstats.RankScale.of(w.top) for n, w in work.items()},
        thresholds={
            n: np.array([t for _, t in w.mcse_probabilities(levels)]) for n, w in work.items()
        },
        centres={n: w.moments.mean for n, w in work.items()},
        chains=tuple(chain_rows),
        chain_rows=chain_rows,
        batch_rows=batch_rows,
    )
    merged = functools.reduce(
        chainstats.combine_chain,
        engine.map_ordered(chainstats.chain_piece, tally.slices, shared=plan),
    )
    taus: dict[tuple[str, int], np.ndarray] = {}
    for part in engine.map_ordered(chainstats.unit_piece, units, shared=plan):
        taus |= part
    for name, w in work.items():
        for chain, batch in batch_rows.items():
            taus[(name, chain)] = chainstats.batch_tau(
                merged[f"{name}:batch:{chain}"], batch, chain_rows[chain]
            )
        n_rows = np.array(list(chain_rows.values()), dtype=np.int64)
        table = np.array([taus[(name, c)] for c in chain_rows])  # (n_chains, 1 + n_thresholds)
        ess = (n_rows[:, None] / table).sum(axis=0)
        w.auto = diagnostics.AutocorrESS(float(ess[0]), table[:, 0], n_rows)
        kish = w.moments.kish_ess
        for (p, _), value in zip(w.mcse_probabilities(levels), ess[1:], strict=True):
            w.ess_indicator[p] = min(kish, float(value))
        w.rhat = chainstats.split_rhat_from(merged[f"{name}:bulk"], merged[f"{name}:tail"])


def _ess(w: _Work) -> float:
    return min(w.moments.kish_ess, w.auto.ess)


def _hpd_errors(
    engine: Mapper,
    path: str,
    tally: RunTally,
    work: dict[str, _Work],
    levels: tuple[float, ...],
    settings: StreamSettings,
) -> dict[str, dict[float, Any]]:
    """Batch MCSE of both HPD ends for every quantity and level that can have one."""
    jobs = []
    for name, w in work.items():
        ess = _ess(w)
        for level in levels:
            n_batches = min(HPD_BATCHES, int(ess * (1 - level) / 2 / MIN_BATCH_TAIL_ESS))
            if n_batches >= MIN_HPD_BATCHES and ess * (1 - level) / 2 >= MIN_TAIL_ESS:
                jobs.append(
                    hpd_batches.BatchJob(name, level, n_batches, w.moments.low, w.moments.high)
                )
    errors: dict[str, dict[float, Any]] = {name: {} for name in work}
    if jobs:
        plan = hpd_batches.BatchPlan(path, tuple(jobs), dict(tally.chain_rows), settings.batch_bins)
        merged = functools.reduce(
            hpd_batches.combine_batches,
            engine.map_ordered(hpd_batches.batch_piece, tally.slices, shared=plan),
        )
        for job in jobs:
            errors[job.quantity][job.level] = hpd_batches.batch_error(
                job, merged[job], settings.batch_bins
            )
    return errors


def _mcse_quantile(w: _Work, p: float) -> float:
    """Vehtari et al. (2021) quantile MCSE with ``Q(a)``, ``Q(b)`` read from the top grid."""
    ess = w.ess_indicator[p]
    a = stats.beta.ppf(_ONE_SIGMA, ess * p + 1, ess * (1 - p) + 1)
    b = stats.beta.ppf(1 - _ONE_SIGMA, ess * p + 1, ess * (1 - p) + 1)
    low, high = w.top.interpolated_quantile([a, b])
    return float(0.5 * (high - low))


def _mode(w: _Work, ess_kish: float) -> float:
    """The binned Gaussian-kernel mode of :mod:`agepost.stats.density`, from the same histogram."""
    low, high = w.moments.low, w.moments.high
    edges = np.linspace(low, high, MODE_BINS + 1)
    width = edges[1] - edges[0]
    spread = min(w.moments.std, (w.q(0.75) - w.q(0.25)) / 1.34) or w.moments.std
    smoothed = gaussian_filter1d(
        w.mode_weights, 0.9 * spread * ess_kish**-0.2 / width, mode="constant"
    )
    return float(0.5 * (edges[:-1] + edges[1:])[int(np.argmax(smoothed / width))])


def _assemble(
    w: _Work, tally: RunTally, levels: tuple[float, ...], hpd_errors: dict[float, Any]
) -> QuantitySummary:
    moments, auto = w.moments, w.auto
    ess = _ess(w)
    chains = np.array(sorted(tally.chain_rows))
    notes = _diagnostic_warnings(
        np.array([moments.low]), chains, moments.n_rows, True, ess, auto, w.rhat
    )
    errors = {"mean": moments.std / np.sqrt(ess), "median": _mcse_quantile(w, 0.5)}
    intervals = {}
    for level in levels:
        key = level_key(level)
        if ess * (1 - level) / 2 < MIN_TAIL_ESS:
            notes.append(_not_quoted(key, ess, level))
            intervals[key] = IntervalSummary(level, (nan, nan), (nan, nan), nan, nan)
            errors |= {f"{key}:{end}": nan for end in _ENDS}
            continue
        hpd = w.hpd[level]
        if hpd.excess_bound > 0:
            notes.append(
                f"the {key} HPD interval is within {hpd.excess_bound:.3g} of the shortest one "
                "(the posterior is too flat to pin it down exactly from streamed passes)"
            )
        et = (w.q((1 - level) / 2), w.q((1 + level) / 2))
        intervals[key] = IntervalSummary(level, et, hpd.interval, w.q(level), w.q(1.0 - level))
        batch = hpd_errors.get(level)
        if batch is None:
            batch = (
                _mcse_quantile(w, hpd.position),
                _mcse_quantile(w, min(hpd.position + level, 1.0)),
            )
        quoted = [
            _mcse_quantile(w, (1 - level) / 2),
            _mcse_quantile(w, (1 + level) / 2),
            *batch,
            _mcse_quantile(w, level),
            _mcse_quantile(w, 1.0 - level),
        ]
        errors |= {f"{key}:{end}": float(e) for end, e in zip(_ENDS, quoted, strict=True)}
    return QuantitySummary(
        n_samples=moments.n_rows,
        mean=moments.mean,
        median=w.q(0.5),
        std=moments.std,
        mode=_mode(w, moments.kish_ess),
        intervals=intervals,
        ess=float(ess),
        ess_kish=float(moments.kish_ess),
        ess_autocorr=None if auto is None else float(auto.ess),
        mcse=errors,
        rhat=w.rhat,
        warnings=tuple(notes),
    )


def _constant(moments: Moments, tally: RunTally, levels: tuple[float, ...]) -> QuantitySummary:
    """Summary of a quantity whose counted rows all hold one value."""
    value, ess = moments.low, moments.kish_ess
    chains = np.array(sorted(tally.chain_rows))
    notes = _diagnostic_warnings(np.array([value]), chains, moments.n_rows, False, ess, None, None)
    errors = {"mean": 0.0, "median": 0.0}
    intervals = {}
    for level in levels:
        key = level_key(level)
        quoted = ess * (1 - level) / 2 >= MIN_TAIL_ESS
        if not quoted:
            notes.append(_not_quoted(key, ess, level))
        end = value if quoted else nan
        intervals[key] = IntervalSummary(level, (end, end), (end, end), end, end)
        errors |= {f"{key}:{e}": 0.0 if quoted else nan for e in _ENDS}
    return QuantitySummary(
        n_samples=moments.n_rows,
        mean=value,
        median=value,
        std=0.0,
        mode=value,
        intervals=intervals,
        ess=float(ess),
        ess_kish=float(ess),
        ess_autocorr=None,
        mcse=errors,
        rhat=None,
        warnings=tuple(notes),
    )


def _not_quoted(key: str, ess: float, level: float) -> str:
    return (
        f"the {key} intervals are not quoted: only {ess * (1 - level) / 2:.1f} effective "
        f"samples lie beyond each end (at least {MIN_TAIL_ESS:g} needed); run a longer chain"
    )
