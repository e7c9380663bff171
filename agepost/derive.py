"""Map every sample of a :class:`SampleSet` to ages and times, in bounded-memory chunks."""

from __future__ import annotations

import dataclasses
from collections.abc import Iterable, Iterator

import numpy as np
import pandas as pd
from numpy.typing import NDArray

from agepost.chains.sampleset import CANONICAL_PARAMETERS, SampleSet
from agepost.errors import ConfigError
from agepost.exclusions import Exclusion
from agepost.physics.background import (
    DEFAULT_RADIATION,
    DEFAULTS,
    RADIATION_MODELS,
    make_background,
)
from agepost.physics.times import expansion_history, validate_redshifts

#: Rows derived together by :func:`derive`; keeps the working memory near 100 MB.
DERIVE_CHUNK_ROWS = 200_000


@dataclasses.dataclass(frozen=True)
class ModelSettings:
    """Physics choices that are not in the chain (units: eV, K).

    ``defaults`` fill canonical parameters that the chain neither carries nor fixes.
    """

    radiation: str = DEFAULT_RADIATION
    n_massive: int = int(DEFAULTS["n_massive"])
    t_cmb: float = DEFAULTS["t_cmb"]
    defaults: dict[str, float] = dataclasses.field(
        default_factory=lambda: {k: DEFAULTS[k] for k in ("omega_k", "w0", "wa", "m_nu", "n_eff")}
    )

    def __post_init__(self) -> None:
        if self.radiation not in RADIATION_MODELS:
            raise ConfigError(
                f"radiation model {self.radiation!r} is unknown; "
                f"use one of {', '.join(RADIATION_MODELS)}"
            )
        if not np.isfinite(self.t_cmb) or self.t_cmb < 0:
            raise ConfigError(f"t_cmb = {self.t_cmb} K is not allowed; give a temperature >= 0 K")


def redshift_label(z: float) -> str:
    """Shortest exact decimal form of a redshift, as used in quantity names ('0.5', '2')."""
    return np.format_float_positional(float(z), trim="-")


def unique_redshifts(redshifts: Iterable[float]) -> tuple[float, ...]:
    """Valid redshifts in the order given, each value once (1 and 1.0 are one value)."""
    first: dict[str, float] = {}
    for z in validate_redshifts(tuple(redshifts)):
        first.setdefault(redshift_label(z), float(z))
    return tuple(first.values())


def quantity_names(redshifts: Iterable[float]) -> list[str]:
    """Derived quantity names: ``age``, then ``lookback_z<z>`` and ``cosmic_time_z<z>``."""
    names = ["age"]
    for z in redshifts:
        names += [f"lookback_z{redshift_label(z)}", f"cosmic_time_z{redshift_label(z)}"]
    return names


@dataclasses.dataclass(frozen=True)
class DerivedSamples:
    """Derived quantities (Gyr) for every input row; excluded rows are NaN with a reason.

    Attributes
    ----------
    quantities : DataFrame (n_samples, 1 + 2 n_z) named by :func:`quantity_names`.
    exclusion : (n_samples,) int8 :class:`~agepost.exclusions.Exclusion` codes.
    weights, chain_id : (n_samples,) as in the input.
    redshifts : the redshifts asked for, in the order given.
    filled : canonical parameters the chain lacked and the value used for each.
    """

    quantities: pd.DataFrame
    exclusion: NDArray[np.int8]
    weights: NDArray[np.float64]
    chain_id: NDArray[np.int64]
    redshifts: tuple[float, ...]
    filled: dict[str, float]

    @property
    def kept(self) -> NDArray[np.bool_]:
        """Rows with a derived value."""
        return self.exclusion == Exclusion.KEPT


def parameter_arrays(
    samples: SampleSet, model: ModelSettings
) -> tuple[dict[str, NDArray], dict[str, float]]:
    """Keyword arrays for :func:`make_background` and the defaults that had to be filled."""
    arrays: dict[str, NDArray] = {}
    filled: dict[str, float] = {}
    for name, keyword in CANONICAL_PARAMETERS.items():
        if samples.has(name):
            arrays[keyword] = samples.column(name)
        elif keyword in model.defaults:
            arrays[keyword] = np.full(samples.n_samples, model.defaults[keyword])
            filled[name] = model.defaults[keyword]
        else:
            raise ConfigError(
                f"{samples.source or 'chain'}: parameter {name} is missing; add a column for it "
                "or fix its value in the config"
            )
    return arrays, filled


def derive(
    samples: SampleSet, redshifts: Iterable[float] = (), *, model: ModelSettings | None = None
) -> DerivedSamples:
    """Age today, lookback and cosmic times at ``redshifts`` for every sample (Gyr)."""
    return concatenate_derived(list(derive_chunks(_row_chunks(samples), redshifts, model=model)))


def derive_chunks(
    chunks: Iterable[SampleSet],
    redshifts: Iterable[float] = (),
    *,
    model: ModelSettings | None = None,
) -> Iterator[DerivedSamples]:
    """Derive chunk by chunk, for chains read in pieces; memory is bounded by the chunk."""
    model = model or ModelSettings()
    z = unique_redshifts(redshifts)
    names = quantity_names(z)
    for chunk in chunks:
        arrays, filled = parameter_arrays(chunk, model)
        background = make_background(
            **arrays, t_cmb=model.t_cmb, n_massive=model.n_massive, radiation=model.radiation
        )
        history = expansion_history(background, z)
        exclusion = history.exclusion.copy()
        columns = [history.age_gyr]
        for j in range(len(z)):
            columns += [history.lookback_gyr[:, j], history.cosmic_time_gyr[:, j]]
        yield DerivedSamples(
            quantities=pd.DataFrame(np.column_stack(columns), columns=names),
            exclusion=exclusion.astype(np.int8),
            weights=chunk.weights,
            chain_id=chunk.chain_id,
            redshifts=z,
            filled=filled,
        )


def _row_chunks(samples: SampleSet) -> Iterator[SampleSet]:
    for start in range(0, max(samples.n_samples, 1), DERIVE_CHUNK_ROWS):
        yield samples.take(slice(start, start + DERIVE_CHUNK_ROWS))


def concatenate_derived(parts: list[DerivedSamples]) -> DerivedSamples:
    """Join chunk results (of one chain set, in order) into one."""
    first = parts[0]
    return DerivedSamples(
        quantities=pd.concat([p.quantities for p in parts], ignore_index=True),
        exclusion=np.concatenate([p.exclusion for p in parts]),
        weights=np.concatenate([p.weights for p in parts]),
        chain_id=np.concatenate([p.chain_id for p in parts]),
        redshifts=first.redshifts,
        filled=first.filled,
    )
