"""Draw an equally weighted subsample of rows from weighted samples.

Systematic resampling (Kitagawa 1996, J. Comput. Graph. Stat. 5, 1): one uniform offset
``u`` in [0, 1) places ``size`` equally spaced points ``(u + i) / size`` on the cumulative
weight, and each point picks the row whose weight interval contains it. A row of weight
``w_i`` (total ``W``) is therefore picked ``floor`` or ``ceil`` of ``size w_i / W`` times:
the subsample reproduces the weighted distribution with less noise than independent
draws, and its rows carry equal weight.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

from agepost.errors import ConfigError
from agepost.stats.quantiles import check_weighted


def weighted_subsample(
    weights: ArrayLike,
    size: int,
    *,
    rng: np.random.Generator | int | None = None,
) -> NDArray[np.int64]:
    """Row indices of an equally weighted subsample of ``size`` rows (systematic resampling).

    Parameters
    ----------
    weights : (n,) array
        Non-negative weights of the rows.
    size : int
        Rows to draw, at least 1; rows may repeat.
    rng : Generator, int seed or None
        Source of the single uniform offset.

    Returns
    -------
    (size,) int array of row indices in increasing order.
    """
    if int(size) != size or size < 1:
        raise ConfigError(f"subsample size must be a whole number >= 1, got {size!r}")
    _, w = check_weighted(np.zeros(np.shape(weights)), weights)
    edges = np.cumsum(w)
    edges /= edges[-1]
    offset = np.random.default_rng(rng).random()
    points = (offset + np.arange(int(size))) / int(size)
    return np.minimum(np.searchsorted(edges, points, side="right"), w.size - 1)
