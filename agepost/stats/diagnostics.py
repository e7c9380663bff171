"""Chain diagnostics: autocorrelation time, effective sample size and split R-hat.

Monte Carlo standard errors built on these live in :mod:`agepost.stats.mcse`.

Methods
-------
Integrated autocorrelation time (per chain)
    The normalised autocorrelation function ``rho(t)`` of each chain is computed with a
    fast Fourier transform, ``tau(M) = 1 + 2 sum_{t=1}^{M} rho(t)``, and the window ``M``
    is the smallest one with ``M >= c tau(M)``, ``c = 5`` (Sokal's automatic windowing,
    the same estimator emcee documents). A chain whose values never change has
    ``tau = n`` (it carries one effective sample). Below ``50 tau`` rows the estimate is
    unreliable (emcee's documented rule of thumb) and a warning is issued.
Effective sample size
    ``ess_autocorr = sum_c n_c / tau_c`` over chains, computed on rows in chain order
    (weights not used); ``ess_kish = (sum w)^2 / sum w^2`` for the weights; the quoted
    ``ess`` is the smaller of the two (only Kish's when no chain order is given).
Split R-hat
    Rank-normalised split R-hat of Vehtari et al. (2021): each chain is cut into halves,
    all rows are replaced by normal scores of their pooled ranks,
    ``Phi^-1((r - 3/8) / (S + 1/4))``, and the classic Gelman-Rubin ratio is computed on
    the halves, for the values ("bulk") and for their distance to the median ("tail");
    the larger is returned. Halves of unequal length use the mean length in the
    between-chain term. Weights are not used. Above :data:`RHAT_WARNING` it is a warning.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import scipy.fft
from numpy.typing import ArrayLike, NDArray
from scipy import special, stats

from agepost.errors import InputError
from agepost.stats.quantiles import kish_ess

#: Sokal window constant used for the integrated autocorrelation time.
WINDOW_C = 5.0
#: A chain shorter than this many autocorrelation times gives an unreliable estimate.
RELIABLE_TAUS = 50.0
#: R-hat above this value is reported as a warning (Vehtari et al. 2021).
RHAT_WARNING = 1.01
#: Each half chain needs at least this many rows for R-hat.
RHAT_MIN_HALF = 2


@dataclasses.dataclass(frozen=True)
class AutocorrESS:
    """Autocorrelation times and the effective sample size they imply.

    Attributes
    ----------
    ess : float
        ``sum_c n_c / tau_c``.
    tau : (n_chains,) float
        Integrated autocorrelation time of each chain, in rows.
    n_rows : (n_chains,) int
        Rows of each chain.
    """

    ess: float
    tau: NDArray[np.float64]
    n_rows: NDArray[np.int64]

    @property
    def reliable(self) -> bool:
        """True when every chain is at least :data:`RELIABLE_TAUS` times its tau long."""
        return bool(np.all(self.n_rows >= RELIABLE_TAUS * self.tau))


def split_chains(values: ArrayLike, chain_id: ArrayLike) -> list[NDArray[np.float64]]:
    """Rows of each chain, in their original order, one array per distinct chain id."""
    x = np.asarray(values, dtype=np.float64)
    ids = np.asarray(chain_id)
    if ids.shape != x.shape:
        raise InputError(f"chain ids have shape {ids.shape} but samples have shape {x.shape}")
    if np.any(ids[1:] < ids[:-1]):
        order = np.argsort(ids, kind="stable")
        x, ids = x[order], ids[order]
    starts = np.flatnonzero(ids[1:] != ids[:-1]) + 1
    return np.split(x, starts)


def autocorrelation(series: ArrayLike) -> NDArray[np.float64]:
    """Normalised autocorrelation function ``rho(t)``, t = 0..n-1, of one chain (FFT).

    A constant series has no defined autocorrelation and gives all NaN.
    """
    x = np.asarray(series, dtype=np.float64)
    n = x.size
    centred = x - x.mean()
    size = scipy.fft.next_fast_len(2 * n - 1, real=True)
    spectrum = scipy.fft.rfft(centred, n=size)
    acov = scipy.fft.irfft(spectrum.real**2 + spectrum.imag**2, n=size)[:n]
    if not acov[0] > 0:
        return np.full(n, np.nan)
    return acov / acov[0]


def integrated_time(series: ArrayLike, *, c: float = WINDOW_C) -> float:
    """Integrated autocorrelation time of one chain in rows (Sokal's windowing).

    Parameters
    ----------
    series : (n,) array
        One chain in sampling order.
    c : float
        Window constant: the window is the smallest ``M`` with ``M >= c tau(M)``.

    Returns
    -------
    float in ``[1/log10(n), n]`` rows; a constant chain returns ``n``. The floor caps the
    effective size of an anti-correlated chain at ``n log10(n)``, as Vehtari et al. (2021)
    do.
    """
    rho = autocorrelation(series)
    n = rho.size
    if np.isnan(rho[0]):
        return float(n)
    taus = 2.0 * np.cumsum(rho) - 1.0
    lags = np.arange(n)
    inside = lags < c * taus
    window = int(np.argmin(inside)) if not np.all(inside) else n - 1
    return float(min(max(taus[window], 1.0 / np.log10(max(n, 10))), n))


def autocorr_ess(values: ArrayLike, chain_id: ArrayLike) -> AutocorrESS:
    """Effective sample size ``sum_c n_c / tau_c`` over the chains given by ``chain_id``.

    Parameters
    ----------
    values : (n,) array
        Samples; rows of one chain must be in sampling order.
    chain_id : (n,) int array
    """
    chains = split_chains(values, chain_id)
    tau = np.array([integrated_time(chain) for chain in chains])
    n_rows = np.array([chain.size for chain in chains], dtype=np.int64)
    return AutocorrESS(float(np.sum(n_rows / tau)), tau, n_rows)


def combined_ess(values: ArrayLike, weights: ArrayLike, chain_id: ArrayLike | None) -> float:
    """The smaller of Kish's ESS and the autocorrelation ESS (Kish's alone without chain ids)."""
    kish = kish_ess(weights)
    if chain_id is None:
        return kish
    return min(kish, autocorr_ess(values, chain_id).ess)


def _gelman_rubin(halves: list[NDArray[np.float64]]) -> float:
    lengths = np.array([h.size for h in halves], dtype=np.float64)
    means = np.array([h.mean() for h in halves])
    within = float(np.mean([h.var(ddof=1) for h in halves]))
    if not within > 0:
        return float("nan")
    n_mean = lengths.mean()
    between_over_n = float(np.var(means, ddof=1))
    pooled = (n_mean - 1.0) / n_mean * within + between_over_n
    return float(np.sqrt(pooled / within))


def _normal_scores(x: NDArray[np.float64]) -> NDArray[np.float64]:
    ranks = stats.rankdata(x, method="average")
    return special.ndtri((ranks - 0.375) / (x.size + 0.25))


def _comparable_chains(x: NDArray[np.float64], ids: NDArray) -> tuple[NDArray, NDArray]:
    """Leave out chains shorter than half the median chain length: R-hat assumes chains
    of similar length, and a very short chain's noisy mean would raise a false alarm."""
    _, inverse, counts = np.unique(ids, return_inverse=True, return_counts=True)
    keep = (counts >= 0.5 * np.median(counts))[inverse]
    return x[keep], ids[keep]


def split_rhat(values: ArrayLike, chain_id: ArrayLike) -> float | None:
    """Rank-normalised split R-hat (Vehtari et al. 2021); None when it is not defined.

    Parameters
    ----------
    values : (n,) array
        Samples; rows of one chain in sampling order.
    chain_id : (n,) int array
        At least two distinct chains are needed.

    Returns
    -------
    float, or None for fewer than two chains, a half chain shorter than
    :data:`RHAT_MIN_HALF` rows, or no spread within the halves.
    """
    x = np.asarray(values, dtype=np.float64)
    ids = np.asarray(chain_id)
    if np.unique(ids).size < 2:
        return None
    x, ids = _comparable_chains(x, ids)
    if np.unique(ids).size < 2:
        return None
    bulk = _normal_scores(x)
    tail = _normal_scores(np.abs(x - np.median(x)))
    results = []
    for scores in (bulk, tail):
        halves = []
        for chain in split_chains(scores, ids):
            half = chain.size // 2
            halves += [chain[:half], chain[chain.size - half :]]
        if min(h.size for h in halves) < RHAT_MIN_HALF:
            return None
        results.append(_gelman_rubin(halves))
    if not np.all(np.isfinite(results)):
        return None
    return float(max(results))
