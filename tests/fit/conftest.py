"""Synthetic distance data made from a known cosmology, for the fit tests."""

from __future__ import annotations

import numpy as np
import pytest

from agepost.fit.data import DistanceData
from agepost.physics.background import make_background
from agepost.physics.constants import SPEED_OF_LIGHT_KM_S
from agepost.physics.distances import distance_modulus, hubble_rate, transverse_comoving_distance
from agepost.physics.times import expansion_history

TRUTH = {"H0": 68.0, "Omega_m": 0.32, "w0": -0.9, "r_d": 148.0}


def synthetic_data(
    rng: np.random.Generator, *, n_mu: int = 120, noise: bool = True
) -> list[DistanceData]:
    """Distance moduli (with a correlated covariance and an offset of -19.3 mag), H(z) and D/r_d."""
    background = make_background(h0=TRUTH["H0"], omega_m=TRUTH["Omega_m"], w0=TRUTH["w0"])
    scale = 1.0 if noise else 0.0
    z_mu = rng.uniform(0.02, 1.5, n_mu)
    chi = expansion_history(background, z_mu, distances=True).comoving_distance_mpc
    errors = 0.1 + 0.05 * rng.random(n_mu)
    covariance = np.diag(errors**2) + 0.02**2 * np.exp(-np.abs(z_mu[:, None] - z_mu[None, :]) / 0.4)
    mu = distance_modulus(background, z_mu, chi)[0] - 19.3
    mu += scale * np.linalg.cholesky(covariance) @ rng.standard_normal(n_mu)
    z_h = np.linspace(0.1, 2.0, 12)
    h_errors = 0.05 * hubble_rate(background, z_h)[0]
    h = hubble_rate(background, z_h)[0] + scale * h_errors * rng.standard_normal(z_h.size)
    z_r = np.array([0.4, 0.6, 0.6, 1.0, 1.0])
    chi_r = expansion_history(background, z_r, distances=True).comoving_distance_mpc
    d_m = transverse_comoving_distance(background, chi_r)[0]
    d_h = SPEED_OF_LIGHT_KM_S / hubble_rate(background, z_r)[0]
    quantities = ("DM", "DM", "DH", "DM", "DH")
    ratio = np.where(np.array(quantities) == "DM", d_m, d_h) / TRUTH["r_d"]
    r_errors = 0.02 * ratio
    ratio = ratio + scale * r_errors * rng.standard_normal(z_r.size)
    return [
        DistanceData("distance_modulus", "mu", z_mu, mu, covariance, None, {}),
        DistanceData("expansion_rate", "H", z_h, h, np.diag(h_errors**2), None, {}),
        DistanceData(
            "sound_horizon_ratio", "ratio", z_r, ratio, np.diag(r_errors**2), quantities, {}
        ),
    ]


@pytest.fixture
def rng() -> np.random.Generator:
    return np.random.default_rng(20260611)


@pytest.fixture
def make_synthetic():
    """The :func:`synthetic_data` maker (fixtures are how test files reach this helper)."""
    return synthetic_data


@pytest.fixture
def truth() -> dict[str, float]:
    """The cosmology behind :func:`synthetic_data`."""
    return dict(TRUTH)
