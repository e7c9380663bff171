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
from agepost.derive import ModelSettings, parameter_arrays
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
    model: ModelSettings,
    *,
    grid: NDArray[np.float64],
    n_population: int | None = None,
    max_samples: int = BAND_SAMPLES,
    rng: np.random.Generator | int | None = BAND_SEED,
) -> RedshiftBand:
    """t(z) and lookback time on ``grid`` for the rows of ``samples`` (kept rows only).

    Parameters
    ----------
    samples : SampleSet
        Kept rows with their weights (zero-weight rows are skipped).
    model : ModelSettings
    grid : (n_z,) redshifts.
    n_population : int or None
        How many kept samples these rows stand for (default: their number); stated on
        the figure when it differs from the number of rows used.
    max_samples, rng : size and seed of the weighted subsample drawn when needed.
    """
    rows = np.flatnonzero(samples.weights > 0)
    weights = samples.weights[rows]
    if rows.size > max_samples:
        rows = rows[weighted_subsample(weights, max_samples, rng=rng)]
        weights = np.ones(rows.size)
    arrays, _ = parameter_arrays(samples.take(rows), model)
    background = make_background(
        **arrays, t_cmb=model.t_cmb, n_massive=model.n_massive, radiation=model.radiation
    )
    history = expansion_history(background, grid)
    usable = history.exclusion == 0
    return RedshiftBand(
        redshifts=np.asarray(grid, dtype=float),
        cosmic_time_gyr=history.cosmic_time_gyr[usable],
        lookback_gyr=history.lookback_gyr[usable],
        weights=weights[usable],
        n_population=int(n_population if n_population is not None else samples.n_samples),
    )
