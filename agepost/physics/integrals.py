"""Time and distance integrals over redshift panels, in the conformal-time-like variable v.

With D(a) = a^4 E^2(a), cosmic time and comoving distance are (units 1/H0 and c/H0)

    t = integral a da / sqrt(D),    chi = integral da / sqrt(D),

taken in v with a = alpha v^2 + beta v, alpha = Omega_m / 4, beta = sqrt(Omega_rad,early).
For matter plus radiation v is the conformal time and both integrands are polynomials;
curvature, dark energy and massive neutrinos only perturb them, so Gauss-Legendre panels
converge in a few nodes. Two passes:

1. every sample on one shared set of nodes (alpha and beta of the chunk's median sample),
   so the densities come from one matrix product; accepted where the Legendre tail test of
   :mod:`agepost.physics.quadrature` passes (nearly every sample of a real chain);
2. the rest with their own alpha and beta and adaptive halving.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray

from agepost.exclusions import Exclusion
from agepost.physics.background import Background
from agepost.physics.bigbang import no_big_bang
from agepost.physics.quadrature import gauss_legendre_rule, integrate_panels

#: Gauss-Legendre nodes per panel in the shared pass (cheap per node, so generous).
SHARED_NODES = 32


def panel_integrals(
    background: Background, scale_factors: NDArray, *, distances: bool, tail_tolerance: float
) -> tuple[NDArray, NDArray | None, NDArray[np.int8]]:
    """Integrals over [0, a_0], [a_0, a_1], ..., [a_{k-2}, 1] for every sample.

    Returns time panels (n, k), distance panels (n, k) or None, and exclusion codes (n,).
    The distance over the first panel is not computed to tolerance (it is never used).
    """
    codes = background.exclusion.copy()
    check = codes == Exclusion.KEPT
    codes[check & no_big_bang(background)] = Exclusion.NO_BIG_BANG
    usable = np.flatnonzero(codes == Exclusion.KEPT)
    n, k = background.size, scale_factors.size
    n_integrands = 2 if distances else 1
    values = np.full((n, k, n_integrands), np.nan)
    required = np.ones((k, n_integrands), dtype=bool)
    if distances:
        required[0, 1] = False
    if usable.size:
        bg = background if usable.size == n else background.take(usable)
        with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
            shared, accepted = _shared_node_pass(bg, scale_factors, required, tail_tolerance)
            values[usable[accepted]] = shared[accepted]
            rest = np.flatnonzero(~accepted)
            if rest.size:
                own, converged = _own_node_pass(
                    bg.take(rest), scale_factors, required, tail_tolerance
                )
                values[usable[rest]] = np.where(converged[:, None, None], own, np.nan)
                codes[usable[rest[~converged]]] = Exclusion.NOT_CONVERGED
    return values[..., 0], (values[..., 1] if distances else None), codes


def conformal_map(background: Background) -> tuple[NDArray, NDArray]:
    """alpha and beta of a = alpha v^2 + beta v for every sample (beta = 1 if both vanish)."""
    alpha = background.omega_m / 4.0
    beta = np.sqrt(background.omega_radiation_early)
    return alpha, np.where((alpha <= 0) & (beta <= 0), 1.0, beta)


def _v_of_a(a: NDArray, alpha: NDArray | float, beta: NDArray | float) -> NDArray:
    """Inverse of a = alpha v^2 + beta v on v >= 0 (stable form, alpha >= 0)."""
    return 2.0 * a / (beta + np.sqrt(beta * beta + 4.0 * alpha * a))


def _shared_node_pass(
    bg: Background, scale_factors: NDArray, required: NDArray, tail_tolerance: float
) -> tuple[NDArray, NDArray[np.bool_]]:
    """Panel integrals (n, k, m) on nodes shared by all samples, and which samples pass."""
    alpha, beta = conformal_map(bg)
    alpha0, beta0 = float(np.median(alpha)), float(np.median(beta))
    edges = _v_of_a(scale_factors, alpha0, beta0)
    lower = np.concatenate([[0.0], edges[:-1]])
    nodes_unit, rule = gauss_legendre_rule(SHARED_NODES)
    half = 0.5 * (edges - lower)  # (k,)
    v = (0.5 * (edges + lower))[:, None] + half[:, None] * nodes_unit[None, :]  # (k, N)
    a = v * (alpha0 * v + beta0)
    da_dv = 2.0 * alpha0 * v + beta0
    inverse_root = bg.scaled_h2_on_grid(a.ravel())
    np.sqrt(inverse_root, out=inverse_root)
    np.reciprocal(inverse_root, out=inverse_root)
    inverse_root = inverse_root.reshape(bg.size, *a.shape)
    factors = [a * da_dv * half[:, None]]
    if required.shape[1] == 2:
        factors.append(da_dv * half[:, None])
    sums = np.stack(
        [np.einsum("skn,nr->skr", inverse_root * f[None], rule) for f in factors], axis=2
    )  # (n, k, m, 1 + tail)
    estimate = sums[..., 0]
    tail = np.max(np.abs(sums[..., 1:]), axis=-1)
    passed = (tail <= tail_tolerance * np.abs(estimate)) | ~required[None]
    return estimate, np.all(passed, axis=(1, 2))


def _own_node_pass(
    bg: Background, scale_factors: NDArray, required: NDArray, tail_tolerance: float
) -> tuple[NDArray, NDArray[np.bool_]]:
    """Adaptive panel integrals with each sample's own map; (n, k, m) and convergence."""
    alpha, beta = conformal_map(bg)
    v_edges = _v_of_a(scale_factors[None, :], alpha[:, None], beta[:, None])
    lower = np.concatenate([np.zeros((bg.size, 1)), v_edges[:, :-1]], axis=1)
    with_distance = required.shape[1] == 2

    def integrand(sample: NDArray[np.intp], v: NDArray) -> NDArray:
        al, be = alpha[sample][:, None], beta[sample][:, None]
        a = v * (al * v + be)
        inverse_root = (2.0 * al * v + be) / np.sqrt(bg.scaled_h2(a, index=sample))
        if with_distance:
            return np.stack([a * inverse_root, inverse_root], axis=-1)
        return (a * inverse_root)[..., None]

    result = integrate_panels(
        integrand,
        lower,
        v_edges,
        n_integrands=required.shape[1],
        tail_tolerance=tail_tolerance,
        required=required,
    )
    return result.values, result.converged
