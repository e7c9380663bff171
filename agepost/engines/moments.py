"""Weighted moments, extremes and Kish sums of one quantity that merge exactly across chunks.

Each chunk gives a :class:`Moments`; :meth:`Moments.merge` combines two of them with the
pairwise update of Chan, Golub & LeVeque (1979, "Updating formulae and a pairwise
algorithm for computing sample variances"): with ``d = mean_b - mean_a`` and
``W = W_a + W_b``,

    mean = mean_a + d W_b / W,    M2 = M2_a + M2_b + d^2 W_a W_b / W,

so the merged mean and ``M2 = sum w (x - mean)^2`` equal those of the joined chunks in
exact arithmetic, whatever the order (in floating point they agree to rounding). Sums use
numpy's own loops (``sum``, ``einsum``), not BLAS, so a chunk gives the same bits in any
process whatever its thread count. Kish's
sums are kept scaled by the largest weight, as :func:`agepost.stats.quantiles.kish_ess`
scales them, so very large weights do not overflow.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
from numpy.typing import ArrayLike


@dataclasses.dataclass(frozen=True)
class Moments:
    """Running weighted statistics of one quantity over the rows seen so far.

    Attributes
    ----------
    n_rows : int
        Rows counted (all with weight > 0).
    weight : float
        Sum of weights ``W``.
    mean : float
        Weighted mean (NaN when no rows).
    m2 : float
        ``sum w (x - mean)^2``.
    low, high : float
        Smallest and largest value (``+inf``/``-inf`` when no rows).
    weight_max : float
        Largest weight (0 when no rows).
    scaled_sum, scaled_sum_sq : float
        ``sum (w / weight_max)`` and ``sum (w / weight_max)^2``, for Kish's ESS.
    """

    n_rows: int = 0
    weight: float = 0.0
    mean: float = math.nan
    m2: float = 0.0
    low: float = math.inf
    high: float = -math.inf
    weight_max: float = 0.0
    scaled_sum: float = 0.0
    scaled_sum_sq: float = 0.0

    @classmethod
    def of(cls, values: ArrayLike, weights: ArrayLike) -> Moments:
        """Moments of finite ``values`` (n,) with positive ``weights`` (n,)."""
        x = np.asarray(values, dtype=np.float64)
        w = np.asarray(weights, dtype=np.float64)
        if x.size == 0:
            return cls()
        total = float(w.sum())
        mean = float(np.einsum("i,i->", w, x) / total)
        deviation = x - mean
        top = float(w.max())
        scaled = w / top
        return cls(
            n_rows=int(x.size),
            weight=total,
            mean=mean,
            m2=float(np.einsum("i,i,i->", w, deviation, deviation)),
            low=float(x.min()),
            high=float(x.max()),
            weight_max=top,
            scaled_sum=float(scaled.sum()),
            scaled_sum_sq=float(np.einsum("i,i->", scaled, scaled)),
        )

    def merge(self, other: Moments) -> Moments:
        """The moments of both sets of rows together (Chan et al. pairwise update)."""
        if other.n_rows == 0:
            return self
        if self.n_rows == 0:
            return other
        total = self.weight + other.weight
        delta = other.mean - self.mean
        top = max(self.weight_max, other.weight_max)
        a, b = self.weight_max / top, other.weight_max / top
        return Moments(
            n_rows=self.n_rows + other.n_rows,
            weight=total,
            mean=self.mean + delta * other.weight / total,
            m2=self.m2 + other.m2 + delta * delta * self.weight * (other.weight / total),
            low=min(self.low, other.low),
            high=max(self.high, other.high),
            weight_max=top,
            scaled_sum=self.scaled_sum * a + other.scaled_sum * b,
            scaled_sum_sq=self.scaled_sum_sq * a * a + other.scaled_sum_sq * b * b,
        )

    @property
    def std(self) -> float:
        """Standard deviation of the weighted distribution, ``sqrt(M2 / W)``."""
        return math.sqrt(max(self.m2, 0.0) / self.weight) if self.weight > 0 else math.nan

    @property
    def kish_ess(self) -> float:
        """Kish's effective sample size ``(sum w)^2 / sum w^2``."""
        return self.scaled_sum**2 / self.scaled_sum_sq if self.scaled_sum_sq > 0 else 0.0

    @property
    def spread(self) -> bool:
        """True when the rows hold more than one distinct value."""
        return self.n_rows > 0 and self.high > self.low


def merge_all(parts: dict[str, Moments], more: dict[str, Moments]) -> dict[str, Moments]:
    """Merge two name -> Moments tables key by key."""
    names = list(dict.fromkeys([*parts, *more]))
    return {name: parts.get(name, Moments()).merge(more.get(name, Moments())) for name in names}
