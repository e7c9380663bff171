"""Detect samples with no big bang: H^2(a) <= 0 somewhere in (0, 1].

H^2 is positive today (it is H0^2 by construction), so a sample lacks a big bang exactly
when a^4 E^2(a) reaches zero between a = 0 and a = 1: tracing the expansion back, it
stops and turns around before a = 0. Samples whose components are all non-negative, or
whose radiation and matter outweigh a negative curvature term (Omega_r + Omega_cb a +
Omega_k a^2 is concave, so it is positive on (0, 1] when it is at both ends) with
non-negative dark energy, pass without a scan. The others are scanned a shared grid (log-spaced from
1e-12 and linear to 1) and then refines every interior local minimum below 0.1 with a
vectorised golden-section search, so a narrow dip between grid points is not missed.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray

from agepost.physics.background import Background

_GRID = np.unique(np.concatenate([np.geomspace(1e-12, 1e-2, 61), np.linspace(1e-2, 1.0, 100)]))
_REFINE_BELOW = 0.1
_GOLDEN = (np.sqrt(5.0) - 1.0) / 2.0
_GOLDEN_STEPS = 60


def no_big_bang(background: Background) -> NDArray[np.bool_]:
    """Mask of shape ``(n,)``: True where a^4 E^2(a) <= 0 for some a in (0, 1]."""
    found = np.zeros(background.size, dtype=bool)
    b = background
    safe = (
        (b.omega_de >= 0)
        & (b.omega_cb >= 0)
        & (b.omega_radiation >= 0)
        & ((b.omega_k >= 0) | (b.omega_radiation + b.omega_cb + b.omega_k > 0))
    )
    suspect = np.flatnonzero(~safe)
    if suspect.size:
        found[suspect] = _scan(background.take(suspect))
    return found


def _scan(background: Background) -> NDArray[np.bool_]:
    """Grid scan plus golden-section refinement of low interior minima."""
    n = background.size
    d = background.scaled_h2(np.broadcast_to(_GRID, (n, _GRID.size)))
    found = np.any(d <= 0.0, axis=1)
    interior = (d[:, 1:-1] <= d[:, :-2]) & (d[:, 1:-1] <= d[:, 2:]) & (d[:, 1:-1] < _REFINE_BELOW)
    rows, cols = np.nonzero(interior & ~found[:, None])
    if rows.size:
        lo, hi = _GRID[cols], _GRID[cols + 2]
        minimum = _golden_minimum(background, rows, lo, hi)
        found[rows[minimum <= 0.0]] = True
    return found | ~np.isfinite(d).all(axis=1)


def _golden_minimum(
    background: Background, rows: NDArray[np.intp], lo: NDArray, hi: NDArray
) -> NDArray[np.float64]:
    """Smallest a^4 E^2 found by golden-section search on [lo, hi] for each row."""
    x1 = hi - _GOLDEN * (hi - lo)
    x2 = lo + _GOLDEN * (hi - lo)
    f1 = background.scaled_h2(x1, index=rows)
    f2 = background.scaled_h2(x2, index=rows)
    best = np.minimum(f1, f2)
    for _ in range(_GOLDEN_STEPS):
        left = f1 < f2
        hi = np.where(left, x2, hi)
        lo = np.where(left, lo, x1)
        x1, x2 = hi - _GOLDEN * (hi - lo), lo + _GOLDEN * (hi - lo)
        f1 = background.scaled_h2(x1, index=rows)
        f2 = background.scaled_h2(x2, index=rows)
        best = np.minimum(best, np.minimum(f1, f2))
    return best
