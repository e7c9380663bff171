"""Formation redshift of an object of known age: solve ``t(z_f) = target`` for every sample.

For sample ``i`` the object seen at ``z_obj`` with age ``A_i`` formed when the cosmic time
was ``target_i = t_i(z_obj) - A_i``; if ``target_i <= 0`` the object is older than that
universe at ``z_obj`` and no formation redshift exists (NaN).

Method
------
1. **Table.** Cosmic times of every sample at shared nodes (:func:`cosmic_time_table`):
   the requested redshifts plus :data:`NODES_PER_DECADE` nodes per decade of ``1 + z`` up to
   ``1 + z =`` :data:`TOP_ONE_PLUS_Z`, from
   :func:`agepost.physics.times.expansion_history`, with ``t = 0`` at ``a = 0`` added, so
   every ``0 < target <= t(z_obj)`` is bracketed by two nodes.
2. **Refinement.** In ``s = sqrt(a)`` the cosmic time is
   ``t(s) = t(s_j) + t_H integral_{s_j}^{s} 2 u^3 / sqrt(D(u^2)) du`` with
   ``D(a) = a^4 E^2(a)`` and ``s_j`` the bracket's lower node; the integrand is smooth down
   to ``a = 0`` with or without radiation. Safeguarded Newton steps (bisection whenever a
   step leaves the bracket) with each integral from a :data:`GAUSS_NODES`-point
   Gauss-Legendre rule, all samples at once, until the step is below ``1e-13 s``.

Accuracy: the root satisfies ``t(z_f) = target`` to the accuracy of the tabulated times
(relative 1e-10 against adaptive quadrature, see :mod:`agepost.physics.times`); the
Gauss-Legendre panel error is below 1e-14 relative on a bracket a fraction of a decade
wide. The relative error of ``1 + z_f`` is therefore below about 1e-9 (tested against
``scipy.optimize.brentq`` on ``scipy.integrate.quad`` times).
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

from agepost.errors import ComputationError
from agepost.exclusions import Exclusion
from agepost.physics.background import Background
from agepost.physics.times import expansion_history, hubble_time_gyr

#: Table nodes per decade of 1 + z.
NODES_PER_DECADE = 16
#: Top of the table, 1 + z; formation beyond it is still found (bracket down to a = 0).
TOP_ONE_PLUS_Z = 1e8
#: Gauss-Legendre nodes of each refinement integral.
GAUSS_NODES = 16
#: Largest number of safeguarded Newton steps.
MAX_STEPS = 60
_STEP_RTOL = 1e-13


#: Scale factors (k,), cosmic times (n, k) in Gyr and exclusion codes (n,) of a table.
TimeTable = tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.int8]]


def cosmic_time_table(background: Background, redshifts: ArrayLike) -> TimeTable:
    """Cosmic times at the table nodes, ordered by increasing scale factor from ``a = 0``.

    Parameters
    ----------
    background : Background of ``n`` samples.
    redshifts : (m,) redshifts that must be nodes (for example the objects' redshifts).

    Returns
    -------
    scale_factors : (k,) increasing, first 0 and last 1 (today).
    time_gyr : (n, k) cosmic time at each node: first column 0, last column the age.
    exclusion : (n,) int8 exclusion codes of the computation.
    """
    z_req = np.asarray(redshifts, dtype=np.float64)
    decades = np.log10(TOP_ONE_PLUS_Z)
    ladder = np.logspace(0.0, decades, int(NODES_PER_DECADE * decades) + 1) - 1.0
    z_min = float(z_req.min()) if z_req.size else 0.0
    z_nodes = np.unique(np.concatenate([ladder[ladder >= z_min], z_req, [0.0]]))[
        ::-1
    ]  # increasing a
    history = expansion_history(background, z_nodes)
    scale_factors = np.concatenate([[0.0], 1.0 / (1.0 + z_nodes)])
    times = np.concatenate([np.zeros((background.size, 1)), history.cosmic_time_gyr], axis=1)
    return scale_factors, times, history.exclusion


def _panel_time(
    background: Background, rows: NDArray[np.intp], s_low: NDArray, s: NDArray
) -> NDArray:
    """``t_H integral_{s_low}^{s} 2 u^3 / sqrt(D(u^2)) du`` per row (Gyr)."""
    nodes, weights = np.polynomial.legendre.leggauss(GAUSS_NODES)
    half = 0.5 * (s - s_low)
    u = (s_low + half)[:, None] + half[:, None] * nodes[None, :]
    d = background.scaled_h2(u * u, index=rows)
    integrand = 2.0 * u**3 / np.sqrt(d)
    return hubble_time_gyr(background.h0[rows]) * half * (integrand @ weights)


def _slope(background: Background, rows: NDArray[np.intp], s: NDArray) -> NDArray:
    """``dt/ds = t_H 2 s^3 / sqrt(D(s^2))`` per row (Gyr)."""
    d = background.scaled_h2(s * s, index=rows)
    return hubble_time_gyr(background.h0[rows]) * 2.0 * s**3 / np.sqrt(d)


def solve_scale_factor(
    background: Background,
    scale_factors: NDArray[np.float64],
    time_gyr: NDArray[np.float64],
    target_gyr: ArrayLike,
) -> NDArray[np.float64]:
    """Scale factor ``a`` with ``t(a) = target`` per sample; NaN where ``target <= 0``.

    Parameters
    ----------
    background : Background of ``n`` samples.
    scale_factors, time_gyr : the table of :func:`cosmic_time_table` (``time_gyr`` (n, k)).
    target_gyr : (n,) cosmic times to reach; each at most the last node's time.
    """
    target = np.asarray(target_gyr, dtype=np.float64)
    result = np.full(target.shape, np.nan)
    rows = np.flatnonzero((target > 0) & np.isfinite(target))
    if rows.size == 0:
        return result
    table = time_gyr[rows]
    if np.any(target[rows] > table[:, -1] * (1 + 1e-12)):
        raise ComputationError(
            "a formation time lies after the object's own time; the table is wrong"
        )
    upper = np.minimum(np.sum(table < target[rows, None], axis=1), table.shape[1] - 1)
    lower = upper - 1
    s_nodes = np.sqrt(scale_factors)
    s_low, s_high = s_nodes[lower], s_nodes[upper]
    t_low, t_high = table[np.arange(rows.size), lower], table[np.arange(rows.size), upper]
    goal = target[rows]
    s = s_low + (goal - t_low) / (t_high - t_low) * (s_high - s_low)
    bracket_low, bracket_high = s_low.copy(), s_high.copy()
    active = np.arange(rows.size)
    for _ in range(MAX_STEPS):
        r = rows[active]
        g = t_low[active] + _panel_time(background, r, s_low[active], s[active]) - goal[active]
        above = g > 0
        bracket_high[active] = np.where(above, s[active], bracket_high[active])
        bracket_low[active] = np.where(above, bracket_low[active], s[active])
        step = g / _slope(background, r, s[active])
        proposal = s[active] - step
        outside = ~((proposal > bracket_low[active]) & (proposal < bracket_high[active]))
        proposal[outside] = 0.5 * (bracket_low[active] + bracket_high[active])[outside]
        moved = np.abs(proposal - s[active])
        s[active] = proposal
        active = active[moved > _STEP_RTOL * proposal]
        if active.size == 0:
            break
    else:
        raise ComputationError(f"formation redshift did not converge for {active.size} samples")
    result[rows] = s * s
    return result


def formation_redshift(
    background: Background,
    z_object: float,
    age_gyr: ArrayLike,
    *,
    table: TimeTable | None = None,
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Formation redshift of an object at ``z_object`` with age ``age_gyr`` (scalar or (n,)).

    Parameters
    ----------
    background : Background of ``n`` kept samples.
    z_object : redshift the object is seen at.
    age_gyr : scalar or (n,) age of the object per sample.
    table : the result of :func:`cosmic_time_table` with ``z_object`` among its redshifts,
        to share one table between several objects; made here if None.

    Returns
    -------
    z_formation : (n,) NaN where the object is older than the universe at ``z_object``.
    time_at_object_gyr : (n,) cosmic time of each sample at ``z_object``.
    """
    scale_factors, times, exclusion = table or cosmic_time_table(background, [z_object])
    if np.any(exclusion != Exclusion.KEPT):
        raise ComputationError("some samples have no expansion history; pass only kept samples")
    a_object = 1.0 / (1.0 + z_object)
    column = int(np.searchsorted(scale_factors, a_object))
    if column >= scale_factors.size or scale_factors[column] != a_object:
        raise ComputationError(f"z = {z_object} is not a node of the cosmic-time table")
    t_object = times[:, column]
    target = t_object - np.asarray(age_gyr, dtype=np.float64)
    a = solve_scale_factor(background, scale_factors[: column + 1], times[:, : column + 1], target)
    return 1.0 / a - 1.0, t_object
