"""Cosmic time, age, lookback time and comoving distance for many samples and redshifts.

With a^4 E^2(a) = D(a), the integrals are (in units of 1/H0 and c/H0)

    t(a) = integral_0^a a' da' / sqrt(D(a')),    chi(a) = integral_a^1 da' / sqrt(D(a')).

(see :mod:`agepost.physics.integrals` for how). Panels end at every requested redshift, so
cosmic and lookback times are summed from panels that each meet the relative tolerance
(no cancellation at low z).
"""

from __future__ import annotations

import dataclasses

import numpy as np
from numpy.typing import ArrayLike, NDArray

from agepost.errors import ConfigError
from agepost.exclusions import Exclusion
from agepost.physics import constants
from agepost.physics.background import Background
from agepost.physics.integrals import panel_integrals

#: Largest accepted Legendre tail of an interval, relative to its panel's integral. Chosen
#: so that the integrals are within 1e-10 of scipy quad over the whole tested parameter box
#: (the engine's accuracy goal is 1e-8; see tests/physics/test_times.py).
DEFAULT_TAIL_TOLERANCE = 1e-7
#: Samples handled together; bounds the working memory to a few hundred MB.
CHUNK_SIZE = 8192
#: Interquartile range of Omega_m above which samples are sorted before chunking.
WIDE_OMEGA_M = 0.03


@dataclasses.dataclass(frozen=True)
class ExpansionHistory:
    """Derived times for ``n`` samples at ``n_z`` redshifts (Gyr, Mpc).

    Attributes
    ----------
    redshifts : (n_z,) the redshifts as given.
    age_gyr, hubble_time_gyr : (n,)
    cosmic_time_gyr, lookback_gyr : (n, n_z)
    comoving_distance_mpc : (n, n_z) line-of-sight comoving distance, or None if not asked.
    exclusion : (n,) int8 :class:`~agepost.exclusions.Exclusion` codes; excluded rows are NaN.
    """

    redshifts: NDArray[np.float64]
    age_gyr: NDArray[np.float64]
    hubble_time_gyr: NDArray[np.float64]
    cosmic_time_gyr: NDArray[np.float64]
    lookback_gyr: NDArray[np.float64]
    comoving_distance_mpc: NDArray[np.float64] | None
    exclusion: NDArray[np.int8]


def hubble_time_gyr(h0: ArrayLike) -> NDArray[np.float64]:
    """1/H0 in Gyr for H0 in km/s/Mpc (977.79.../H0, from IAU and SI constants)."""
    return constants.HUBBLE_TIME_GYR_KM_S_MPC / np.asarray(h0, dtype=float)


def hubble_distance_mpc(h0: ArrayLike) -> NDArray[np.float64]:
    """c/H0 in Mpc for H0 in km/s/Mpc."""
    return constants.SPEED_OF_LIGHT_KM_S / np.asarray(h0, dtype=float)


def validate_redshifts(redshifts: ArrayLike) -> NDArray[np.float64]:
    """Redshifts as a 1-D float array; each must be finite and >= 0."""
    z = np.atleast_1d(np.asarray(redshifts, dtype=float))
    if z.ndim != 1:
        raise ConfigError(f"redshifts must be a list of numbers; got shape {z.shape}")
    bad = ~np.isfinite(z) | (z < 0)
    if np.any(bad):
        raise ConfigError(
            f"redshift {z[bad][0]!r} is not allowed: give finite redshifts z >= 0 (today is z = 0)"
        )
    return z


def expansion_history(
    background: Background,
    redshifts: ArrayLike = (),
    *,
    distances: bool = False,
    tail_tolerance: float = DEFAULT_TAIL_TOLERANCE,
) -> ExpansionHistory:
    """Age, cosmic and lookback times (and optionally comoving distances) for every sample.

    Parameters
    ----------
    background : Background
        ``n`` samples, from :func:`~agepost.physics.background.make_background`.
    redshifts : array_like, shape (n_z,)
        Redshifts in any order, duplicates allowed.
    distances : bool
        Also compute the line-of-sight comoving distance to each redshift.
    tail_tolerance : float
        Convergence test of each panel (see :mod:`agepost.physics.quadrature`).
    """
    z = validate_redshifts(redshifts)
    n = background.size
    scale_factors = np.unique(np.concatenate([1.0 / (1.0 + z), [1.0]]))  # increasing, ends at 1
    position = np.searchsorted(scale_factors, 1.0 / (1.0 + z))
    cumulative_time = np.full((n, scale_factors.size), np.nan)
    distance_from_today = np.full((n, scale_factors.size), np.nan) if distances else None
    exclusion = np.empty(n, dtype=np.int8)
    # Chunks of similar Omega_m share their quadrature nodes well (see physics.integrals):
    # a wide sample set is worked on sorted by Omega_m, and the results put back in order.
    resort = n > CHUNK_SIZE and _spread(background.omega_m) > WIDE_OMEGA_M
    order = np.argsort(background.omega_m) if resort else np.arange(n)
    ordered = background.take(order) if resort else background
    for start in range(0, n, CHUNK_SIZE):
        part = slice(start, min(start + CHUNK_SIZE, n))
        time_panels, distance_panels, codes = panel_integrals(
            ordered.take(part), scale_factors, distances=distances, tail_tolerance=tail_tolerance
        )
        exclusion[part] = codes
        cumulative_time[part] = np.cumsum(time_panels, axis=1)
        if distance_from_today is not None and distance_panels is not None:
            from_today = np.cumsum(distance_panels[:, ::-1], axis=1)[:, ::-1]
            distance_from_today[part] = np.concatenate(
                [from_today[:, 1:], np.zeros((from_today.shape[0], 1))], axis=1
            )
    if resort:
        restore = np.empty(n, dtype=np.intp)
        restore[order] = np.arange(n)
        exclusion, cumulative_time = exclusion[restore], cumulative_time[restore]
        if distance_from_today is not None:
            distance_from_today = distance_from_today[restore]
    lookback_units = _lookback_from_panels(cumulative_time)
    t_h = hubble_time_gyr(background.h0)
    excluded = exclusion != Exclusion.KEPT
    t_h_masked = np.where(excluded, np.nan, t_h)
    age = cumulative_time[:, -1] * t_h_masked
    comoving = None
    if distance_from_today is not None:
        comoving = (
            distance_from_today[:, position]
            * np.where(excluded, np.nan, hubble_distance_mpc(background.h0))[:, None]
        )
    return ExpansionHistory(
        redshifts=z,
        age_gyr=age,
        hubble_time_gyr=t_h,
        cosmic_time_gyr=cumulative_time[:, position] * t_h_masked[:, None],
        lookback_gyr=lookback_units[:, position] * t_h_masked[:, None],
        comoving_distance_mpc=comoving,
        exclusion=exclusion.astype(np.int8),
    )


def _spread(values: NDArray) -> float:
    """Width of the middle half of the finite values (0 if none)."""
    finite = values[np.isfinite(values)]
    if finite.size == 0:
        return 0.0
    low, high = np.percentile(finite, [25.0, 75.0])
    return float(high - low)


def _lookback_from_panels(cumulative_time: NDArray) -> NDArray:
    """t0 - t(a) at every breakpoint, summed from today backwards panel by panel."""
    panels = np.diff(cumulative_time, axis=1, prepend=0.0)
    from_today = np.cumsum(panels[:, ::-1], axis=1)[:, ::-1]
    return np.concatenate([from_today[:, 1:], np.zeros((panels.shape[0], 1))], axis=1)
