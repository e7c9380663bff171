"""Cosmic and lookback times of a run on a redshift grid, from a weighted subsample of its rows.

The subsample is drawn by systematic resampling (:func:`agepost.stats.resample.weighted_subsample`),
so its rows carry equal weight and follow the run's weighted posterior; its size is stated
in figures and JSON. The grid always starts at z = 0, and the ages recomputed there are
checked against the run's stored ages: a mismatch means the run's recorded model does
not reproduce its samples, and is an error rather than a silently wrong band.
"""

from __future__ import annotations

import dataclasses

import numpy as np
from numpy.typing import ArrayLike, NDArray

from agepost.compare.runs import LoadedRun
from agepost.errors import ConfigError, InputError
from agepost.exclusions import Exclusion
from agepost.physics.times import expansion_history
from agepost.stats.resample import weighted_subsample

#: Rows drawn for bands unless asked otherwise.
DEFAULT_BAND_SAMPLES = 2000
#: Points of the default redshift grid (uniform in log(1 + z)).
DEFAULT_GRID_POINTS = 80
#: Largest relative difference allowed between recomputed and stored ages.
AGE_CHECK_RTOL = 1e-6


@dataclasses.dataclass(frozen=True)
class TimeBands:
    """Times of a subsample on a grid.

    Attributes
    ----------
    z_grid : (n_z,) redshifts, increasing, starting at 0.
    cosmic_time_gyr, lookback_gyr : (size, n_z) Gyr, equally weighted rows.
    size : rows in the subsample; ``of`` : kept rows of the run it was drawn from.
    """

    z_grid: NDArray[np.float64]
    cosmic_time_gyr: NDArray[np.float64]
    lookback_gyr: NDArray[np.float64]
    size: int
    of: int


def redshift_grid(z_max: float, *, n_points: int = DEFAULT_GRID_POINTS) -> NDArray[np.float64]:
    """Grid from 0 to ``z_max``, uniform in ``log(1 + z)``."""
    if not np.isfinite(z_max) or z_max <= 0:
        raise ConfigError(f"the largest redshift of the grid must be finite and > 0, got {z_max}")
    if n_points < 2:
        raise ConfigError(f"the redshift grid needs at least 2 points, got {n_points}")
    return np.expm1(np.linspace(0.0, np.log1p(z_max), int(n_points)))


def time_bands(
    run: LoadedRun,
    z_grid: ArrayLike,
    *,
    size: int = DEFAULT_BAND_SAMPLES,
    rng: np.random.Generator | int | None = None,
) -> TimeBands:
    """Cosmic and lookback times of ``min(size, n)`` rows drawn by weight, on ``z_grid``."""
    z = np.asarray(z_grid, dtype=np.float64)
    if z.ndim != 1 or z.size < 2 or z[0] != 0 or np.any(np.diff(z) <= 0):
        raise ConfigError("the redshift grid must increase from z = 0")
    draws = min(int(size), run.n_samples)
    rows = weighted_subsample(run.weights, draws, rng=rng)
    history = expansion_history(run.background(rows), z)
    check_ages(run, rows, history.cosmic_time_gyr[:, 0], history.exclusion)
    return TimeBands(z, history.cosmic_time_gyr, history.lookback_gyr, draws, run.n_samples)


def check_ages(
    run: LoadedRun,
    rows: NDArray[np.intp],
    age_gyr: NDArray[np.float64],
    exclusion: NDArray[np.int8],
) -> None:
    """Raise InputError if ages recomputed for ``rows`` differ from the run's stored ages."""
    if "age" not in run.quantities.columns:
        return
    stored = run.quantities["age"].to_numpy(float)[rows]
    bad = np.flatnonzero(
        (exclusion != Exclusion.KEPT)
        | ~(np.abs(age_gyr - stored) <= AGE_CHECK_RTOL * np.abs(stored))
    )
    if bad.size:
        i = bad[0]
        raise InputError(
            f"{run.source}: recomputing the age of kept row {rows[i]} from its parameters and the "
            f"recorded model gives {age_gyr[i]:.9g} Gyr, not the stored {stored[i]:.9g} Gyr; the "
            "folder's summary.json/provenance.json do not describe its samples; rerun agepost run"
        )
