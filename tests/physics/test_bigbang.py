"""No-big-bang detection against the analytic boundary for matter + Lambda + curvature."""

from __future__ import annotations

import numpy as np
import pytest

from agepost.exclusions import Exclusion
from agepost.physics.background import make_background
from agepost.physics.times import expansion_history


def boundary_lambda(omega_m: float) -> float:
    # Carroll, Press & Turner 1992 (ARA&A 30, 499), with Felten & Isaacman 1986: no big bang
    # when Omega_Lambda is at or above the largest real root of
    # 27 Om^2 OL = 4 (Om + OL - 1)^3 (solved here as a cubic in OL).
    x = np.polynomial.Polynomial([-1.0 + omega_m, 1.0]) ** 3 * 4.0 - np.polynomial.Polynomial(
        [0.0, 27 * omega_m**2]
    )
    roots = x.roots()
    return float(np.max(roots[np.abs(roots.imag) < 1e-9].real))


@pytest.mark.parametrize(
    ("omega_m", "published"), [(0.3, 1.71346), (0.5, 2.0), (1.0, 3 * np.sqrt(3) / 2)]
)
def test_boundary_values(omega_m, published):
    # Values listed in DESIGN.md from the same papers.
    assert abs(boundary_lambda(omega_m) - published) < 1e-5


@pytest.mark.parametrize("omega_m", [0.1, 0.3, 0.5, 1.0])
def test_detection_either_side_of_the_boundary(omega_m):
    limit = boundary_lambda(omega_m)
    omega_l = np.array([limit * (1 - 1e-4), limit * (1 + 1e-4)])
    bg = make_background(h0=70.0, omega_m=omega_m, omega_k=1 - omega_m - omega_l, radiation="none")
    history = expansion_history(bg, [1.0])
    assert history.exclusion[0] == Exclusion.KEPT
    assert np.isfinite(history.age_gyr[0]) and history.age_gyr[0] > 20.0  # loitering: very old
    assert history.exclusion[1] == Exclusion.NO_BIG_BANG
    assert np.isnan(history.age_gyr[1]) and np.isnan(history.lookback_gyr[1, 0])


def test_narrow_dip_between_grid_points_is_found():
    # Phantom dark energy and closed curvature give a dip in H^2 only near a ~ 0.25.
    bg = make_background(
        h0=70.0, omega_m=0.05, omega_k=-0.2, w0=[-2.0, -1.0], wa=0.0, radiation="none"
    )
    d = bg.scaled_h2(np.linspace(1e-3, 1, 200_001)[None, :].repeat(2, 0))
    assert d[0].min() <= 0 < d[1].min()  # brute-force truth
    assert list(expansion_history(bg).exclusion) == [Exclusion.NO_BIG_BANG, Exclusion.KEPT]
