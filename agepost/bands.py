"""Cosmic and lookback times on a redshift grid for a weighted subsample of a run.

The age-redshift figure needs t(z) for many samples at many redshifts. All kept samples
are used when there are at most ``max_samples`` of them (each with its weight);
otherwise a subsample of ``max_samples`` rows is drawn by weight (systematic
resampling, then equal weights) and its size is stated on the figure.
"""

from __future__ import annotations

import dataclasses

import numpy as np
from numpy.typing import NDArray

from agepost.chains.sampleset import SampleSet
from agepost.derive import DerivedSamples, ModelSettings, parameter_arrays
from agepost.physics.background import make_background
from agepost.physics.times import expansion_history
from agepost.stats.resample import weighted_subsample

#: Largest number of samples integrated on the redshift grid.
BAND_SAMPLES = 4000
#: Seed of the subsample drawn for the band (recorded in the provenance).
BAND_SEED = 1202


@dataclasses.dataclass(frozen=True)
class RedshiftBand:
    """Times of ``m`` samples on ``n_z`` redshifts (Gyr) with their weights.

    ``n_population`` is the number of kept samples the rows stand for; it equals ``m``
    when no subsample was drawn.
    """

    redshifts: NDArray[np.float64]
    cosmic_time_gyr: NDArray[np.float64]
    lookback_gyr: NDArray[np.float64]
    weights: NDArray[np.float64]
    n_population: int

    @property
    def subsampled(self) -> bool:
        """True when the rows are a weighted subsample."""
        return self.weights.size < self.n_population


def default_grid(redshifts: tuple[float, ...]) -> NDArray[np.float64]:
    """80 redshifts from 0 to max(20, the largest requested below 1000), uniform in ln(1+z)."""
    finite = [z for z in redshifts if z < 1000.0]
    top = max([20.0, *finite])
    return np.expm1(np.linspace(0.0, np.log1p(top), 80))


def redshift_band(
    samples: SampleSet,
    derived: DerivedSamples,
    model: ModelSettings,
    *,
    grid: NDArray[np.float64],
    max_samples: int = BAND_SAMPLES,
    rng: np.random.Generator | int | None = BAND_SEED,
) -> RedshiftBand:
    """t(z) and lookback time on ``grid`` for the kept samples (or a weighted subsample)."""
    kept = np.flatnonzero(derived.kept & (derived.weights > 0))
    weights = derived.weights[kept]
    if kept.size > max_samples:
        rows = kept[weighted_subsample(weights, max_samples, rng=rng)]
        weights = np.ones(rows.size)
    else:
        rows = kept
    arrays, _ = parameter_arrays(samples.take(rows), model)
    background = make_background(
        **arrays, t_cmb=model.t_cmb, n_massive=model.n_massive, radiation=model.radiation
    )
    history = expansion_history(background, grid)
    return RedshiftBand(
        redshifts=np.asarray(grid, dtype=float),
        cosmic_time_gyr=history.cosmic_time_gyr,
        lookback_gyr=history.lookback_gyr,
        weights=weights,
        n_population=int(kept.size),
    )
