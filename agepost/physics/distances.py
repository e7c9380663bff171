"""Distances and expansion rates derived from the comoving distance (Mpc, km/s/Mpc)."""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

from agepost.physics.background import Background
from agepost.physics.times import hubble_distance_mpc, validate_redshifts


def hubble_rate(background: Background, redshifts: ArrayLike) -> NDArray[np.float64]:
    """H(z) in km/s/Mpc, shape (n, n_z); NaN where H^2 <= 0."""
    z = validate_redshifts(redshifts)
    a = np.broadcast_to(1.0 / (1.0 + z), (background.size, z.size))
    with np.errstate(invalid="ignore"):
        e = np.sqrt(background.scaled_h2(a)) / a**2
    return background.h0[:, None] * e


def transverse_comoving_distance(
    background: Background, comoving_mpc: NDArray[np.float64]
) -> NDArray[np.float64]:
    """D_M from the line-of-sight comoving distance, shape (n, n_z), Mpc.

    D_M = D_H / sqrt(Omega_k) sinh(sqrt(Omega_k) chi / D_H) for Omega_k > 0, with sin for
    Omega_k < 0 and D_M = chi when flat (Hogg 1999, astro-ph/9905116, eq. 16).
    """
    d_h = hubble_distance_mpc(background.h0)[:, None]
    omega_k = background.omega_k[:, None]
    root = np.sqrt(np.abs(omega_k))
    x = root * comoving_mpc / d_h
    with np.errstate(invalid="ignore", divide="ignore"):
        curved = np.where(omega_k > 0, np.sinh(x), np.sin(x)) * d_h / root
    return np.where(omega_k == 0, comoving_mpc, curved)


def luminosity_distance(
    background: Background, redshifts: ArrayLike, comoving_mpc: NDArray
) -> NDArray:
    """D_L = (1 + z) D_M in Mpc, shape (n, n_z)."""
    z = validate_redshifts(redshifts)
    return (1.0 + z)[None, :] * transverse_comoving_distance(background, comoving_mpc)


def distance_modulus(
    background: Background, redshifts: ArrayLike, comoving_mpc: NDArray
) -> NDArray:
    """mu = 5 log10(D_L / 10 pc), shape (n, n_z)."""
    return 5.0 * np.log10(luminosity_distance(background, redshifts, comoving_mpc)) + 25.0


def volume_averaged_distance(
    background: Background, redshifts: ArrayLike, comoving_mpc: NDArray
) -> NDArray:
    """D_V = [D_M^2 c z / H(z)]^(1/3) in Mpc, shape (n, n_z) (Eisenstein et al. 2005, eq. 2)."""
    z = validate_redshifts(redshifts)
    d_m = transverse_comoving_distance(background, comoving_mpc)
    c_over_h = (
        hubble_distance_mpc(background.h0)[:, None]
        * background.h0[:, None]
        / hubble_rate(background, z)
    )
    return np.cbrt(d_m**2 * z[None, :] * c_over_h)
