"""The redshift band: every kept sample or a weighted subsample, times on a grid."""

from __future__ import annotations

import numpy as np
import pandas as pd
from numpy.testing import assert_allclose

from agepost.bands import default_grid, redshift_band
from agepost.chains import SampleSet
from agepost.derive import ModelSettings, derive


def sample_set(n, rng):
    parameters = pd.DataFrame({"H0": rng.normal(70, 1, n), "Omega_m": rng.normal(0.3, 0.01, n)})
    return SampleSet(parameters=parameters, weights=rng.uniform(0, 2, n), chain_id=np.zeros(n, int))


def test_small_run_uses_every_kept_sample_with_weights():
    rng = np.random.default_rng(0)
    samples = sample_set(50, rng)
    derived = derive(samples, [1.0])
    band = redshift_band(samples, ModelSettings(), grid=np.array([0.0, 1.0]))
    assert not band.subsampled and band.weights.shape == (50,)
    # The grid point z = 1 must reproduce the run's own lookback time at z = 1 (same engine).
    assert_allclose(band.lookback_gyr[:, 1], derived.quantities["lookback_z1"], rtol=1e-12)
    assert_allclose(band.cosmic_time_gyr[:, 0], derived.quantities["age"], rtol=1e-12)


def test_large_run_is_subsampled_by_weight():
    rng = np.random.default_rng(1)
    samples = sample_set(3000, rng)
    band = redshift_band(samples, ModelSettings(), grid=default_grid(()), max_samples=500)
    assert band.subsampled and band.n_population == 3000 and band.weights.shape == (500,)
    assert band.cosmic_time_gyr.shape == (500, 80)
    # Cosmic time rises towards today along the grid (z decreasing is t increasing).
    assert np.all(np.diff(band.cosmic_time_gyr, axis=1) < 0)
