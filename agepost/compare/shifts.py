"""Per-run summaries of the quantities runs share, and the shift and tension of every pair.

Runs are compared on the derived quantities (Gyr) that every run carries and on the input
parameters that every run samples. For each pair ``(first, second)`` in the order given,
the difference is ``second - first``, summarised by
:func:`agepost.stats.difference.difference_summary`. The runs are treated as independent:
runs that share data are correlated and out of scope.

Random draws for quantity ``q`` and pair ``(i, j)`` come from
``numpy.random.default_rng(SeedSequence([seed, i, j, crc32(q)]))``, so each comparison is
reproducible from the recorded seed whatever else is compared alongside it.
"""

from __future__ import annotations

import dataclasses
import zlib
from collections.abc import Sequence

import numpy as np

from agepost.compare.runs import LoadedRun
from agepost.errors import InputError
from agepost.stats.difference import DEFAULT_DRAWS, DifferenceSummary, difference_summary
from agepost.stats.summary import QuantitySummary, summarise

#: Seed of the pair resampling when none is given (recorded in the output).
DEFAULT_SEED = 20260511


@dataclasses.dataclass(frozen=True)
class RunComparison:
    """Summaries per run and differences per pair for the shared names.

    Attributes
    ----------
    labels : run labels in the order given.
    quantities : shared derived quantities (Gyr); parameters : shared sampled parameters.
    summaries : label -> name -> QuantitySummary.
    differences : name -> pair key ``"second - first"`` -> DifferenceSummary.
    pairs : pair key -> (first label, second label).
    n_draws, seed : resampling settings.
    """

    labels: tuple[str, ...]
    quantities: tuple[str, ...]
    parameters: tuple[str, ...]
    summaries: dict[str, dict[str, QuantitySummary]]
    differences: dict[str, dict[str, DifferenceSummary]]
    pairs: dict[str, tuple[str, str]]
    n_draws: int
    seed: int


def pair_key(first: str, second: str) -> str:
    """JSON key of a pair: ``"second - first"`` (the difference it holds)."""
    return f"{second} - {first}"


def shared_names(runs: Sequence[LoadedRun]) -> tuple[tuple[str, ...], tuple[str, ...]]:
    """Derived quantities and sampled parameters present in every run (first run's order).

    Raises InputError when the runs share no derived quantity.
    """
    first = runs[0]
    quantities = tuple(
        name for name in first.quantities.columns if all(name in r.quantities.columns for r in runs)
    )
    if not quantities:
        listing = "; ".join(f"{r.label}: {', '.join(r.quantities.columns) or 'none'}" for r in runs)
        raise InputError(
            f"the runs share no derived quantity ({listing}); derive them at common redshifts (--z)"
        )
    parameters = tuple(
        name
        for name in first.parameters.columns
        if all(name in r.parameters.columns for r in runs)
        and any(np.ptp(r.parameters[name].to_numpy(float)) > 0 for r in runs)
    )
    return quantities, parameters


def compare_runs(
    runs: Sequence[LoadedRun],
    *,
    levels: Sequence[float] = (0.68, 0.95),
    n_draws: int = DEFAULT_DRAWS,
    seed: int = DEFAULT_SEED,
) -> RunComparison:
    """Summarise every shared quantity per run and the difference of every pair of runs."""
    if len(runs) < 2:
        raise InputError("compare needs at least two runs")
    quantities, parameters = shared_names(runs)
    summaries: dict[str, dict[str, QuantitySummary]] = {run.label: {} for run in runs}
    for run in runs:
        for name in (*quantities, *parameters):
            summaries[run.label][name] = summarise(
                _column(run, name), run.weights, run.chain_id, levels=levels
            )
    pairs = {
        pair_key(runs[i].label, runs[j].label): (i, j)
        for i in range(len(runs))
        for j in range(i + 1, len(runs))
    }
    differences: dict[str, dict[str, DifferenceSummary]] = {}
    for name in (*quantities, *parameters):
        differences[name] = {}
        for key, (i, j) in pairs.items():
            first, second = runs[i], runs[j]
            rng = np.random.default_rng(
                np.random.SeedSequence([seed, i, j, zlib.crc32(name.encode())])
            )
            differences[name][key] = difference_summary(
                _column(first, name),
                first.weights,
                _column(second, name),
                second.weights,
                levels=levels,
                n_draws=n_draws,
                rng=rng,
                ess_first=summaries[first.label][name].ess,
                ess_second=summaries[second.label][name].ess,
            )
    return RunComparison(
        labels=tuple(run.label for run in runs),
        quantities=quantities,
        parameters=parameters,
        summaries=summaries,
        differences=differences,
        pairs={key: (runs[i].label, runs[j].label) for key, (i, j) in pairs.items()},
        n_draws=int(n_draws),
        seed=int(seed),
    )


def _column(run: LoadedRun, name: str) -> np.ndarray:
    frame = run.quantities if name in run.quantities.columns else run.parameters
    return frame[name].to_numpy(float)
