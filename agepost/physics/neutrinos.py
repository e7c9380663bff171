"""Energy density of a massive neutrino species from the Fermi-Dirac distribution.

The ratio F(y) of a massive species' energy density to that of the same species were it
massless, with y = m c^2 / (k_B T_nu), is

    F(y) = (120 / (7 pi^4)) * integral_0^inf x^2 sqrt(x^2 + y^2) / (exp(x) + 1) dx,

so F(0) = 1 and F(y) -> 180 zeta(3) y / (7 pi^4) when the species is non-relativistic.
F is computed once by scipy quad (relative tolerance 1e-13) with its exact slope on a grid
of step 0.01 in ln y; cubic Hermite interpolation in (ln y, ln F) between those points is
accurate to about 1e-11. That interpolant is sampled once more on a fine grid (step 2.5e-4)
that fast evaluation reads by linear interpolation, relative error below 1e-8 (the
fine-grid error, h^2/8 times the second derivative in ln y). Outside
the table the two-term series at small and large y are used; both are exact to better than
1e-12 there.
"""

from __future__ import annotations

import functools
import math

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy import integrate, special

_NORMALISATION = 120.0 / (7.0 * math.pi**4)
_LN_Y_MIN = -12.0
_LN_Y_MAX = 14.0
_LN_Y_STEP = 0.01
_FINE_STEP = 2.5e-4
_SMALL_Y_COEFFICIENT = 5.0 / (7.0 * math.pi**2)
_LARGE_Y_LINEAR = _NORMALISATION * 1.5 * special.zeta(3.0)
_LARGE_Y_INVERSE = _NORMALISATION * 11.25 * special.zeta(5.0)


def _fermi_dirac_moment(y: float, *, derivative: bool) -> float:
    """Integral defining F(y) (or dF/dy when ``derivative``), by adaptive quadrature."""

    def integrand(x: float) -> float:
        root = math.sqrt(x * x + y * y)
        weight = x * x / (math.exp(x) + 1.0) if x < 700.0 else 0.0
        return weight * (y / root if derivative else root)

    value, _ = integrate.quad(integrand, 0.0, np.inf, epsabs=0.0, epsrel=1e-13, limit=400)
    return _NORMALISATION * value


@functools.lru_cache(maxsize=1)
def _table() -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Values ln F and slopes d ln F / d ln y on the uniform ln-y grid (computed once)."""
    ln_y = np.arange(_LN_Y_MIN, _LN_Y_MAX + 0.5 * _LN_Y_STEP, _LN_Y_STEP)
    y = np.exp(ln_y)

    def moments(x: float) -> NDArray[np.float64]:
        root = np.sqrt(x * x + y * y)
        weight = x * x / (np.exp(x) + 1.0) if x < 700.0 else 0.0
        return weight * np.concatenate([root, y / root])

    both, _ = integrate.quad_vec(moments, 0.0, np.inf, epsabs=0.0, epsrel=1e-13, norm="max")
    values, derivatives = np.split(_NORMALISATION * both, 2)
    return np.log(values), derivatives * y / values


@functools.lru_cache(maxsize=1)
def _fine_table() -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """F and its forward difference on the fine ln-y grid, for linear interpolation."""
    ln_y = np.arange(_LN_Y_MIN, _LN_Y_MAX + 0.5 * _FINE_STEP, _FINE_STEP)
    values = _hermite_ratio(ln_y)
    return values, np.append(np.diff(values), 0.0)


def energy_density_ratio_from_log(ln_y: ArrayLike) -> NDArray[np.float64]:
    """F(y) for given ln y by linear interpolation on the fine table; any shape.

    Parameters
    ----------
    ln_y : array_like
        Natural log of m c^2 / (k_B T_nu); ``-inf`` (massless) gives exactly 1.
    """
    ln_y = np.asarray(ln_y, dtype=float)
    values, steps = _fine_table()
    position = np.array(ln_y - _LN_Y_MIN, ndmin=1)
    position *= 1.0 / _FINE_STEP
    np.clip(position, 0.0, values.size - 1.0, out=position)
    index = position.astype(np.intp)
    position -= index
    result = steps[index]
    result *= position
    result += values[index]
    if ln_y.size and (ln_y.min() < _LN_Y_MIN or ln_y.max() > _LN_Y_MAX):
        _series_outside_table(ln_y.reshape(result.shape), result)
    return result.reshape(ln_y.shape)


def _series_outside_table(ln_y: NDArray, result: NDArray) -> None:
    """Overwrite ``result`` with the small- and large-y series where ln y is off the table."""
    small = ln_y < _LN_Y_MIN
    result[small] = 1.0 + _SMALL_Y_COEFFICIENT * np.exp(2.0 * ln_y[small])
    large = ln_y > _LN_Y_MAX
    y = np.exp(ln_y[large])
    result[large] = _LARGE_Y_LINEAR * y + _LARGE_Y_INVERSE / y


def _hermite_ratio(ln_y: ArrayLike) -> NDArray[np.float64]:
    """F(y) for given ln y by cubic Hermite interpolation on the quad table; any shape.

    Parameters
    ----------
    ln_y : array_like
        Natural log of m c^2 / (k_B T_nu); ``-inf`` (massless) gives exactly 1.
    """
    ln_y = np.asarray(ln_y, dtype=float)
    ln_f, slopes = _table()
    position = (np.clip(ln_y, _LN_Y_MIN, _LN_Y_MAX) - _LN_Y_MIN) / _LN_Y_STEP
    index = np.minimum(position.astype(np.intp), ln_f.size - 2)
    s = position - index
    s2 = s * s
    s3 = s2 * s
    h00 = 2.0 * s3 - 3.0 * s2 + 1.0
    h10 = s3 - 2.0 * s2 + s
    h01 = 1.0 - h00
    h11 = s3 - s2
    interpolated = (
        h00 * ln_f[index]
        + h01 * ln_f[index + 1]
        + _LN_Y_STEP * (h10 * slopes[index] + h11 * slopes[index + 1])
    )
    result = np.exp(interpolated)
    _series_outside_table(ln_y, result)
    return result


def energy_density_ratio(y: ArrayLike) -> NDArray[np.float64]:
    """F(y) = rho_massive / rho_massless at the same temperature, y = m c^2 / (k_B T_nu) >= 0."""
    y = np.asarray(y, dtype=float)
    with np.errstate(divide="ignore"):
        return energy_density_ratio_from_log(np.log(y))


def reference_energy_density_ratio(y: float) -> float:
    """F(y) by direct adaptive quadrature (slow; for tests and table checks)."""
    return _fermi_dirac_moment(float(y), derivative=False)
