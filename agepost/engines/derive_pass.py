"""The derive pass: every chunk derived, appended to the samples file, and tallied exactly.

Each derived chunk becomes a :class:`ChunkResult` (on whichever process derived it) holding
the rows to write and the chunk's exact statistical pieces: weighted moments and extremes
of every quantity and parameter over the rows that count (kept, weight > 0), rows per
chain, and exclusion counts. :class:`RunTally` adds the chunks in chain order on the
driver, writes them with :class:`~agepost.report.samples_file.DerivedSamplesWriter`, and
records the row slices that later passes over the samples file read.
"""

from __future__ import annotations

import dataclasses
from collections import Counter
from pathlib import Path

import h5py
import numpy as np
import pandas as pd

from agepost.chains import SampleSet
from agepost.derive import DerivedSamples
from agepost.engines.moments import Moments, merge_all
from agepost.errors import ChainFormatError, ComputationError
from agepost.exclusions import Exclusion
from agepost.report.samples_file import DerivedSamplesWriter


@dataclasses.dataclass(frozen=True)
class RowSlice:
    """Rows ``start:stop`` of the samples file, with the counted rows of each chain before them."""

    start: int
    stop: int
    chain_before: dict[int, int]


@dataclasses.dataclass(frozen=True)
class ChunkResult:
    """One derived chunk and its exact statistical pieces.

    ``moments`` is keyed by samples-file dataset (``derived/age``, ``parameters/H0``) and
    covers the rows that count: kept (exclusion 0) with weight > 0.
    """

    samples: SampleSet
    derived: DerivedSamples
    moments: dict[str, Moments]
    chain_rows: dict[int, int]
    chain_ids: frozenset[int]
    reasons: dict[int, int]


def chunk_result(samples: SampleSet, derived: DerivedSamples) -> ChunkResult:
    """Pieces of one chunk (runs where the chunk was derived)."""
    counted = derived.kept & (derived.weights > 0)
    w = derived.weights[counted]
    moments = {
        f"derived/{name}": Moments.of(derived.quantities[name].to_numpy()[counted], w)
        for name in derived.quantities.columns
    }
    moments |= {
        f"parameters/{name}": Moments.of(samples.parameters[name].to_numpy(float)[counted], w)
        for name in samples.parameters.columns
    }
    counts = np.bincount(derived.chain_id[counted])  # chain ids are small integers >= 0
    codes = np.bincount(derived.exclusion.astype(np.intp))
    return ChunkResult(
        samples=samples,
        derived=derived,
        moments=moments,
        chain_rows={int(i): int(counts[i]) for i in np.flatnonzero(counts)},
        chain_ids=frozenset(int(i) for i in np.flatnonzero(np.bincount(derived.chain_id))),
        reasons={int(c): int(codes[c]) for c in np.flatnonzero(codes)},
    )


@dataclasses.dataclass(frozen=True)
class RunOverview:
    """Counts and bookkeeping of a whole run (what ``summary.json`` reports besides statistics)."""

    source: str
    n_samples: int
    n_kept: int
    excluded: dict[str, int]
    n_chains: int
    redshifts: tuple[float, ...]
    filled: dict[str, float]
    notes: tuple[str, ...]


class RunTally:
    """Adds derived chunks in order: writes them and merges their pieces exactly."""

    def __init__(self, writer: DerivedSamplesWriter) -> None:
        self.writer = writer
        self.moments: dict[str, Moments] = {}
        self.chain_rows: Counter[int] = Counter()
        self.chain_ids: set[int] = set()
        self.reasons: Counter[int] = Counter()
        self.slices: list[RowSlice] = []
        self.n_rows = 0
        self.columns: list[str] | None = None
        self.quantities: list[str] = []
        self._first: ChunkResult | None = None
        self._sources: dict[str, None] = {}
        self._notes: dict[str, None] = {}

    def add(self, result: ChunkResult) -> None:
        """Write one chunk and merge its pieces (chunks must come in chain order)."""
        samples, derived = result.samples, result.derived
        self._check_columns(result)
        self.writer.append(
            samples.parameters,
            derived.quantities,
            weights=derived.weights,
            chain_id=derived.chain_id,
            exclusion=derived.exclusion,
        )
        n = len(derived.weights)
        self.slices.append(RowSlice(self.n_rows, self.n_rows + n, dict(self.chain_rows)))
        self.n_rows += n
        self.moments = merge_all(self.moments, result.moments)
        self.chain_rows.update(result.chain_rows)
        self.chain_ids |= result.chain_ids
        self.reasons.update(result.reasons)
        self._sources[samples.source] = None
        self._notes |= dict.fromkeys(samples.notes)

    def _check_columns(self, result: ChunkResult) -> None:
        first = self._first
        if first is None:
            self._first = result
            self.columns = list(result.samples.parameters.columns)
            self.quantities = list(result.derived.quantities.columns)
            return
        if (
            list(result.samples.parameters.columns) != self.columns
            or result.samples.fixed != first.samples.fixed
        ):
            raise ChainFormatError(
                f"{result.samples.source} gives parameters "
                f"{list(result.samples.parameters.columns)} "
                f"(fixed {result.samples.fixed}) but {first.samples.source} gives {self.columns} "
                f"(fixed {first.samples.fixed}); chains of one run must carry the same parameters"
            )

    @property
    def n_counted(self) -> int:
        """Rows that count for statistics: kept, weight > 0."""
        return int(sum(self.chain_rows.values()))

    def overview(self) -> RunOverview:
        """Counts of the run; raises ComputationError when no row counts."""
        if self._first is None:
            raise ComputationError(
                "the chain gave no rows to derive; check the burn-in and thinning"
            )
        excluded = {Exclusion(c).name.lower(): n for c, n in sorted(self.reasons.items()) if c}
        if self.n_counted == 0:
            reasons = ", ".join(f"{k}: {v}" for k, v in excluded.items()) or "all weights zero"
            raise ComputationError(
                f"all {self.n_rows} samples of {self.source} were excluded ({reasons}); "
                "nothing to summarise: check the parameter columns and the model settings"
            )
        derived = self._first.derived
        return RunOverview(
            source=self.source,
            n_samples=self.n_rows,
            n_kept=int(self.reasons.get(int(Exclusion.KEPT), 0)),
            excluded=excluded,
            n_chains=len(self.chain_ids),
            redshifts=derived.redshifts,
            filled=dict(derived.filled),
            notes=tuple(self._notes),
        )

    @property
    def source(self) -> str:
        """Chain files, joined as the in-memory reader joins them."""
        return ", ".join(self._sources)

    @property
    def fixed(self) -> dict[str, float]:
        """Parameters held fixed by the reader."""
        return {} if self._first is None else dict(self._first.samples.fixed)


def load_samples(path: Path, tally: RunTally) -> tuple[SampleSet, DerivedSamples]:
    """Read a (small) samples file back into memory, columns in their original order."""
    overview = tally.overview()
    with h5py.File(path, "r") as handle:
        parameters = pd.DataFrame({n: handle[f"parameters/{n}"][:] for n in tally.columns or []})
        quantities = pd.DataFrame({n: handle[f"derived/{n}"][:] for n in tally.quantities})
        weights = handle["weight"][:]
        chain_id = handle["chain_id"][:]
        exclusion = handle["exclusion"][:]
    samples = SampleSet(
        parameters=parameters,
        weights=weights,
        chain_id=chain_id,
        fixed=tally.fixed,
        source=overview.source,
        notes=overview.notes,
    )
    derived = DerivedSamples(
        quantities=quantities,
        exclusion=exclusion,
        weights=weights,
        chain_id=chain_id,
        redshifts=overview.redshifts,
        filled=overview.filled,
    )
    return samples, derived


def varying_parameters(tally: RunTally) -> list[str]:
    """Parameters whose counted rows take more than one value (the ones summarised)."""
    return [n for n in tally.columns or [] if tally.moments[f"parameters/{n}"].spread]
