"""Cosmic time, age, lookback time and comoving distance for many samples and redshifts.

With a^4 E^2(a) = D(a), the integrals are (in units of 1/H0 and c/H0)

    t(a) = integral_0^a a' da' / sqrt(D(a')),    chi(a) = integral_a^1 da' / sqrt(D(a')).

They are computed in the variable v with a = alpha v^2 + beta v, alpha = Omega_m / 4 and
beta = sqrt(Omega_radiation,early): for matter plus radiation v is exactly the conformal
time and both integrands are polynomials, so Gauss-Kronrod panels converge in a few
nodes for every realistic model; curvature, dark energy and massive neutrinos only
perturb them. Panels end at every requested redshift, so cosmic and lookback times are
summed from panels that each meet the relative tolerance (no cancellation at low z).
"""

from __future__ import annotations

import dataclasses

import numpy as np
from numpy.typing import ArrayLike, NDArray

from agepost.errors import ConfigError
from agepost.exclusions import Exclusion
from agepost.physics import constants
from agepost.physics.background import Background
from agepost.physics.bigbang import no_big_bang
from agepost.physics.quadrature import integrate_panels

#: Largest accepted Legendre tail of an interval, relative to its panel's integral. Chosen
#: so that the integrals are within 1e-10 of scipy quad over the whole tested parameter box
#: (the engine's accuracy goal is 1e-8; see tests/physics/test_times.py).
DEFAULT_TAIL_TOLERANCE = 1e-7
#: Samples handled together; bounds the working memory to a few hundred MB.
CHUNK_SIZE = 8192


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
    n_z = z.size
    scale_factors = np.unique(np.concatenate([1.0 / (1.0 + z), [1.0]]))  # increasing, ends at 1
    position = np.searchsorted(scale_factors, 1.0 / (1.0 + z))
    cumulative_time = np.full((n, scale_factors.size), np.nan)
    distance_from_today = np.full((n, scale_factors.size), np.nan) if distances else None
    exclusion = background.exclusion.copy()
    for start in range(0, n, CHUNK_SIZE):
        part = slice(start, min(start + CHUNK_SIZE, n))
        time_panels, distance_panels, codes = _panel_integrals(
            background.take(part), scale_factors, distances=distances, tail_tolerance=tail_tolerance
        )
        exclusion[part] = codes
        cumulative_time[part] = np.cumsum(time_panels, axis=1)
        if distance_from_today is not None:
            distance_from_today[part] = np.cumsum(distance_panels[:, ::-1], axis=1)[:, ::-1]
            distance_from_today[part] = np.concatenate(
                [distance_from_today[part][:, 1:], np.zeros((part.stop - part.start, 1))], axis=1
            )
    lookback_units = _lookback_from_panels(cumulative_time)
    t_h = hubble_time_gyr(background.h0)
    excluded = exclusion != Exclusion.KEPT
    t_h_masked = np.where(excluded, np.nan, t_h)
    age = cumulative_time[:, -1] * t_h_masked
    comoving = None
    if distance_from_today is not None:
        comoving = distance_from_today[:, position] * np.where(excluded, np.nan, hubble_distance_mpc(background.h0))[:, None]
    return ExpansionHistory(
        redshifts=z,
        age_gyr=age,
        hubble_time_gyr=t_h,
        cosmic_time_gyr=cumulative_time[:, position] * t_h_masked[:, None],
        lookback_gyr=lookback_units[:, position] * t_h_masked[:, None],
        comoving_distance_mpc=comoving,
        exclusion=exclusion.astype(np.int8),
    )


def _lookback_from_panels(cumulative_time: NDArray) -> NDArray:
    """t0 - t(a) at every breakpoint, summed from today backwards panel by panel."""
    panels = np.diff(cumulative_time, axis=1, prepend=0.0)
    from_today = np.cumsum(panels[:, ::-1], axis=1)[:, ::-1]
    return np.concatenate([from_today[:, 1:], np.zeros((panels.shape[0], 1))], axis=1)


def _panel_integrals(
    background: Background, scale_factors: NDArray, *, distances: bool, tail_tolerance: float
) -> tuple[NDArray, NDArray | None, NDArray[np.int8]]:
    """Time (and distance) integrals over [0, a_1], [a_1, a_2], ..., [a_{k-1}, 1], units 1/H0."""
    codes = background.exclusion.copy()
    check = codes == Exclusion.KEPT
    codes[check & no_big_bang(background)] = Exclusion.NO_BIG_BANG
    usable = np.flatnonzero(codes == Exclusion.KEPT)
    n, k = background.size, scale_factors.size
    time_panels = np.full((n, k), np.nan)
    distance_panels = np.full((n, k), np.nan) if distances else None
    if usable.size == 0:
        return time_panels, distance_panels, codes
    bg = background.take(usable)
    alpha = bg.omega_m / 4.0
    beta = np.sqrt(bg.omega_radiation_early)
    beta = np.where((alpha <= 0) & (beta <= 0), 1.0, beta)
    v_edges = _v_of_a(scale_factors[None, :], alpha[:, None], beta[:, None])
    lower = np.concatenate([np.zeros((usable.size, 1)), v_edges[:, :-1]], axis=1)

    def integrand(sample: NDArray[np.intp], v: NDArray) -> NDArray:
        al, be = alpha[sample][:, None], beta[sample][:, None]
        a = v * (al * v + be)
        da_dv = 2.0 * al * v + be
        inverse_root = da_dv / np.sqrt(bg.scaled_h2(a, index=sample))
        if distances:
            return np.stack([a * inverse_root, inverse_root], axis=-1)
        return (a * inverse_root)[..., None]

    required = np.ones((k, 2 if distances else 1), dtype=bool)
    if distances:
        required[0, 1] = False  # the distance from a = 0 to the earliest redshift is never used
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        result = integrate_panels(
            integrand, lower, v_edges, n_integrands=required.shape[1],
            tail_tolerance=tail_tolerance, required=required,
        )
    values = np.where(result.converged[:, None, None], result.values, np.nan)
    time_panels[usable] = values[..., 0]
    if distance_panels is not None:
        distance_panels[usable] = values[..., 1]
    codes[usable[~result.converged]] = Exclusion.NOT_CONVERGED
    return time_panels, distance_panels, codes


def _v_of_a(a: NDArray, alpha: NDArray, beta: NDArray) -> NDArray:
    """Inverse of a = alpha v^2 + beta v on v >= 0 (stable form, alpha >= 0)."""
    return 2.0 * a / (beta + np.sqrt(beta * beta + 4.0 * alpha * a))
