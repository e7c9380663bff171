"""Vectorised adaptive Gauss-Legendre quadrature over many independent intervals at once.

Every work item is one interval of one sample. All items are evaluated together with an
n-point Gauss-Legendre rule. The same n values give the integrand's Legendre coefficients
(the discrete Legendre transform on Gauss nodes); when the last coefficients are small the
expansion has converged and the Gauss rule, exact for polynomials of degree 2n - 1, is far
more accurate still (Trefethen, Approximation Theory and Approximation Practice, 2013,
ch. 19). Items whose tail is too large are halved and evaluated again, so a hard sample
costs more without slowing the easy ones.
"""

from __future__ import annotations

import dataclasses
import functools
from collections.abc import Callable

import numpy as np
from numpy.polynomial import legendre
from numpy.typing import NDArray

#: Gauss-Legendre points per interval.
N_NODES = 24
#: Number of highest Legendre coefficients whose size decides convergence.
_N_TAIL = 3

#: Integrand signature: (item sample index (m,), nodes (m, N_NODES)) -> (m, N_NODES, k).
Integrand = Callable[[NDArray[np.intp], NDArray[np.float64]], NDArray[np.float64]]


@functools.lru_cache(maxsize=4)
def gauss_legendre_rule(n_nodes: int) -> tuple[NDArray, NDArray]:
    """Nodes on [-1, 1] and a matrix (n_nodes, 1 + _N_TAIL): column 0 holds the Gauss
    weights, the others map node values to the last Legendre coefficients."""
    nodes, weights = legendre.leggauss(n_nodes)
    degrees = np.arange(n_nodes - _N_TAIL, n_nodes)
    basis = legendre.legvander(nodes, n_nodes - 1)[:, degrees]  # P_k(x_i)
    tail = basis * weights[:, None] * (2.0 * degrees + 1.0) / 2.0
    return nodes, np.concatenate([weights[:, None], tail], axis=1)


@dataclasses.dataclass(frozen=True)
class PanelIntegrals:
    """Integrals over panels, shape ``(n_samples, n_panels, n_integrands)``, and convergence.

    ``converged`` has shape ``(n_samples,)``: False where some panel of that sample did not
    reach the tolerance within the allowed number of halvings.
    """

    values: NDArray[np.float64]
    converged: NDArray[np.bool_]
    n_evaluations: int


def integrate_panels(
    integrand: Integrand,
    lower: NDArray[np.float64],
    upper: NDArray[np.float64],
    *,
    n_integrands: int,
    tail_tolerance: float,
    required: NDArray[np.bool_] | None = None,
    max_halvings: int = 50,
) -> PanelIntegrals:
    """Integrate on every panel ``[lower[s, p], upper[s, p]]`` of every sample ``s``.

    The error estimate of an item is its highest Legendre coefficient times its length.
    An item is accepted when, for every required integrand, that estimate is at most
    ``tail_tolerance`` times the panel's first estimate shared out in proportion to the
    item's length; and all items of a panel are accepted once the panel's summed estimate
    is within ``tail_tolerance`` of its value (this ends the halving towards a weak
    endpoint singularity). Integrands are expected to keep one sign on a panel, as times
    and distances do, so the panel estimate is a fair scale.

    Parameters
    ----------
    lower, upper : (n_samples, n_panels) interval ends.
    required : (n_panels, n_integrands) bool, optional
        Which integrals must converge; the others are returned but not refined for.
    """
    nodes_unit, rule = gauss_legendre_rule(N_NODES)
    n_samples, n_panels = lower.shape
    n_total = n_samples * n_panels
    if required is None:
        required = np.ones((n_panels, n_integrands), dtype=bool)
    values = np.zeros((n_total, n_integrands))
    accepted_error = np.zeros((n_total, n_integrands))
    converged = np.ones(n_samples, dtype=bool)
    panel = np.arange(n_total)
    lo = lower.ravel().astype(float)
    hi = upper.ravel().astype(float)
    nonempty = hi > lo
    panel, lo, hi = panel[nonempty], lo[nonempty], hi[nonempty]
    allowed_per_length = np.zeros((n_total, n_integrands))
    allowed_total = np.zeros((n_total, n_integrands))
    n_evaluations = 0
    for depth in range(max_halvings + 1):
        if panel.size == 0:
            break
        half = 0.5 * (hi - lo)
        nodes = (0.5 * (hi + lo))[:, None] + half[:, None] * nodes_unit[None, :]
        f = integrand(panel // n_panels, nodes)  # (m, N_NODES, k)
        n_evaluations += nodes.size
        sums = np.einsum("mnk,nr->mkr", f, rule)
        estimate = sums[..., 0] * half[:, None]
        error = np.max(np.abs(sums[..., 1:]), axis=-1) * half[:, None]
        error = np.where(required[panel % n_panels], error, 0.0)
        if depth == 0:
            allowed_total[panel] = tail_tolerance * np.abs(estimate)
            allowed_per_length[panel] = allowed_total[panel] / (hi - lo)[:, None]
        done = np.all(error <= allowed_per_length[panel] * (hi - lo)[:, None], axis=1)
        pending = np.zeros((n_total, n_integrands))
        np.add.at(pending, panel, error)
        panel_done = np.all(accepted_error + pending <= allowed_total, axis=1)
        done |= panel_done[panel]
        np.add.at(values, panel[done], estimate[done])
        np.add.at(accepted_error, panel[done], error[done])
        keep = ~done
        panel, lo, hi = panel[keep], lo[keep], hi[keep]
        middle = 0.5 * (lo + hi)
        panel = np.concatenate([panel, panel])
        lo, hi = np.concatenate([lo, middle]), np.concatenate([middle, hi])
    if panel.size:
        converged[np.unique(panel // n_panels)] = False
    return PanelIntegrals(
        values=values.reshape(n_samples, n_panels, n_integrands),
        converged=converged,
        n_evaluations=n_evaluations,
    )
