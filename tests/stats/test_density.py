"""Smoothed density and mode against closed forms."""

from __future__ import annotations

import numpy as np
from scipy import stats

from agepost.stats.density import GRID_BINS, density_curve, weighted_mode
from agepost.stats.quantiles import kish_ess


def test_mode_of_gamma():
    # Gamma(a, scale s) has mode (a - 1) s (textbook). The kernel mode is biased by the
    # smoothing; 0.05 is ~3 % of the mode, far below the std of 1.
    a, s = 4.0, 0.5
    x = stats.gamma(a=a, scale=s).rvs(size=400_000, random_state=np.random.default_rng(4))
    assert abs(weighted_mode(x) - (a - 1) * s) < 0.05


def test_mode_of_weighted_sample_follows_weights():
    # Uniform draws reweighted by a normal density have that normal's mode (importance
    # sampling). Tolerance: 4 standard deviations of a Gaussian-kernel mode estimate,
    # Var = f(m) R(K') / (n h^3 f''(m)^2) with R(K') = 1 / (4 sqrt(pi)) (Parzen 1962),
    # at the bandwidth the module documents.
    sigma = 0.7
    x = np.random.default_rng(5).uniform(-5, 5, size=200_000)
    w = stats.norm(loc=1.2, scale=sigma).pdf(x)
    n_eff = kish_ess(w)
    bandwidth = 0.9 * sigma * n_eff**-0.2
    peak = stats.norm.pdf(0, scale=sigma)
    curvature = peak / sigma**2
    sd = np.sqrt(peak / (4 * np.sqrt(np.pi)) / (n_eff * bandwidth**3 * curvature**2))
    assert abs(weighted_mode(x, w) - 1.2) < 4 * sd


def test_density_curve_follows_normal_pdf():
    # The smoothed curve of N(0,1) draws tracks scipy's pdf; the kernel bias at the peak is
    # h^2/2 * |f''| ~ 0.003 at this bandwidth, the noise ~0.003: 0.02 is several of both.
    x = np.random.default_rng(6).normal(size=100_000)
    centres, density = density_curve(x)
    assert centres.size == GRID_BINS
    inner = np.abs(centres) < 2.5
    assert np.max(np.abs(density[inner] - stats.norm.pdf(centres[inner]))) < 0.02
    assert abs(np.sum(density) * (centres[1] - centres[0]) - 1) < 0.01


def test_zero_spread():
    assert weighted_mode([2.5, 2.5, 2.5]) == 2.5
    centres, density = density_curve([2.5, 2.5])
    assert centres.tolist() == [2.5] and np.isinf(density[0])
