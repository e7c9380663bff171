"""t(z) bands of a run from a weighted subsample, against the flat LambdaCDM closed form."""

from __future__ import annotations

import math

import numpy as np
import pytest
from numpy.testing import assert_allclose

from agepost.compare.timegrid import redshift_grid, time_bands
from agepost.derive import ModelSettings
from agepost.errors import ConfigError, InputError

HUBBLE_TIME = 149_597_870.7 * 648_000 / math.pi * 1e6 / (1e9 * 365.25 * 86_400)  # Gyr km/s/Mpc


def flat_lcdm_time(z, h0, omega_m):
    """Textbook flat matter + Lambda cosmic time (arcsinh form), broadcast over z and samples."""
    omega_l = 1 - omega_m
    a = 1 / (1 + np.asarray(z))
    return (
        2
        / (3 * np.sqrt(omega_l))
        * HUBBLE_TIME
        / h0
        * np.arcsinh(np.sqrt(omega_l / omega_m) * a**1.5)
    )


@pytest.fixture
def lcdm_run(make_run):
    rng = np.random.default_rng(2)
    h0, om = rng.normal(68, 1, 300), rng.normal(0.31, 0.01, 300)
    weights = rng.integers(0, 4, 300).astype(float)
    return make_run(
        {"H0": h0, "Omega_m": om},
        {"age": flat_lcdm_time(0.0, h0, om)},
        weights=weights,
        model=ModelSettings(radiation="none"),
    )


def test_grid_is_uniform_in_log_one_plus_z():
    grid = redshift_grid(20.0, n_points=5)
    assert grid[0] == 0 and grid[-1] == pytest.approx(20.0)
    assert_allclose(np.diff(np.log1p(grid)), np.log(21) / 4)
    for bad in (0.0, -1.0, float("inf")):
        with pytest.raises(ConfigError):
            redshift_grid(bad)


def test_bands_are_the_closed_form_times_of_rows_drawn_by_weight(lcdm_run):
    grid = redshift_grid(10.0, n_points=12)
    bands = time_bands(lcdm_run, grid, size=120, rng=7)
    assert bands.size == 120 and bands.of == 300
    assert bands.cosmic_time_gyr.shape == (120, 12)
    # Identify each drawn row by its age, then check every grid time against the closed form.
    ages = lcdm_run.quantities["age"].to_numpy()
    rows = np.array([np.argmin(np.abs(ages - t)) for t in bands.cosmic_time_gyr[:, 0]])
    assert np.all(lcdm_run.weights[rows] > 0)  # zero-weight rows are never drawn
    h0 = lcdm_run.parameters["H0"].to_numpy()[rows, None]
    om = lcdm_run.parameters["Omega_m"].to_numpy()[rows, None]
    assert_allclose(bands.cosmic_time_gyr, flat_lcdm_time(grid[None, :], h0, om), rtol=1e-9)
    assert_allclose(
        bands.lookback_gyr, bands.cosmic_time_gyr[:, :1] - bands.cosmic_time_gyr, atol=1e-12
    )
    assert time_bands(lcdm_run, grid, size=1000, rng=7).size == 300  # never more rows than kept


def test_grid_must_start_at_zero(lcdm_run):
    with pytest.raises(ConfigError, match="increase from z = 0"):
        time_bands(lcdm_run, [0.5, 1.0], size=10)


def test_ages_the_model_cannot_reproduce_are_refused(make_run):
    h0, om = np.array([67.0, 70.0]), np.array([0.3, 0.3])
    run = make_run(
        {"H0": h0, "Omega_m": om},
        {"age": flat_lcdm_time(0.0, h0, om) * 1.001},
        model=ModelSettings(radiation="none"),
    )
    with pytest.raises(InputError, match="recorded model"):
        time_bands(run, [0.0, 1.0], size=2, rng=0)
