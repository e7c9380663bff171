"""Figures of weighted samples in the house style, and saving them safely.

Every function takes an optional ``fig``, returns the :class:`~matplotlib.figure.Figure`,
and never opens a window; figures are built without pyplot, so no global figure state is
left behind. :func:`save_figure` writes each format through
:meth:`agepost.outputs.OutputFolder.atomic_path`.
"""

from __future__ import annotations

import logging
from collections.abc import Mapping, Sequence
from pathlib import Path

import corner
import numpy as np
import pandas as pd
from matplotlib.colors import to_rgba
from matplotlib.figure import Figure
from numpy.typing import ArrayLike

from agepost.errors import InputError
from agepost.outputs import OutputFolder
from agepost.report import style
from agepost.stats.intervals import check_level
from agepost.stats.quantiles import check_weighted

logger = logging.getLogger(__name__)

#: Histogram bins per axis of the corner plot.
CORNER_BINS = 30
#: Central weighted fraction of each quantity spanned by the corner-plot axes.
RANGE_FRACTION = 0.999


def _varying_columns(parameters: pd.DataFrame) -> list[str]:
    varying = []
    for name in parameters.columns:
        column = parameters[name].to_numpy(dtype=np.float64)
        if np.any(~np.isfinite(column)):
            raise InputError(
                f"column {name!r} has non-finite values; pass only kept rows to the corner plot"
            )
        if column.max() > column.min():
            varying.append(name)
        else:
            logger.info("corner plot leaves out %s: it has the single value %g", name, column[0])
    if not varying:
        raise InputError("no column of the corner plot varies; there is nothing to draw")
    return varying


def corner_figure(
    parameters: pd.DataFrame,
    weights: ArrayLike | None,
    *,
    levels: Sequence[float] = (0.68, 0.95),
    labels: Mapping[str, str] | None = None,
    fig: Figure | None = None,
) -> Figure:
    """Corner plot: 1-D histograms on the diagonal, credible contours below it.

    Parameters
    ----------
    parameters : DataFrame (n_samples, n_columns)
        One column per quantity, finite values. Columns holding a single value are left
        out (logged at INFO level).
    weights : (n_samples,) array or None
        Non-negative weights.
    levels : sequence of float in (0, 1)
        Posterior mass enclosed by each 2-D contour (filled, darker for smaller levels).
    labels : mapping or None
        Axis label (matplotlib text, LaTeX allowed) per column name; defaults to the name.
    fig : Figure or None
        Empty figure to draw into, or one with exactly ``k * k`` axes for ``k`` varying
        columns; a new one is made if None.

    Returns
    -------
    Figure
        Each axis spans the central :data:`RANGE_FRACTION` of the weighted samples.
        Sized for one journal column (3.4 in) up to four quantities, growing to a page
        width (7 in) for more.
    """
    levels = sorted(check_level(level) for level in levels)
    columns = _varying_columns(parameters)
    w = check_weighted(parameters[columns[0]].to_numpy(dtype=np.float64), weights)[1]
    labels = labels or {}
    size = min(max(style.COLUMN_WIDTH_IN, 0.85 * len(columns)), style.PAGE_WIDTH_IN)
    with style.house_style():
        if fig is None:
            fig = Figure(figsize=(size, size))
        fill = [to_rgba(style.MAIN, alpha) for alpha in np.linspace(0.25, 0.8, len(levels))]
        corner.corner(
            parameters[columns].to_numpy(dtype=np.float64),
            weights=w,
            bins=CORNER_BINS,
            range=[RANGE_FRACTION] * len(columns),
            smooth=1.0,
            smooth1d=None,
            levels=levels,
            labels=[labels.get(name, name) for name in columns],
            plot_datapoints=False,
            plot_density=False,
            fill_contours=True,
            contourf_kwargs={"colors": [(1, 1, 1, 0), *fill]},
            contour_kwargs={"colors": style.DARK, "linewidths": 0.6},
            hist_kwargs={
                "histtype": "stepfilled",
                "facecolor": to_rgba(style.MAIN, 0.18),
                "edgecolor": style.DARK,
                "linewidth": 0.8,
            },
            label_kwargs={"fontsize": 7.5},
            max_n_ticks=3,
            labelpad=0.08,
            fig=fig,
        )
        for ax in fig.axes:
            ax.tick_params(labelsize=6.0, direction="in", length=2.0, width=0.5)
    return fig


def save_figure(
    fig: Figure,
    folder: OutputFolder,
    stem: str,
    *,
    formats: Sequence[str] = ("png", "pdf"),
) -> list[Path]:
    """Write ``fig`` as ``<stem>.<format>`` for each format, each file atomically.

    All target names are checked before anything is written, so a refused overwrite
    leaves no partial set. PNG is written at :data:`~agepost.report.style.PNG_DPI`; PDF is
    vector, with no creation date (identical inputs give identical files).

    Returns
    -------
    list of Path, the files written, in the order of ``formats``.
    """
    names = [f"{stem}.{fmt}" for fmt in formats]
    folder.check_free(*names)
    written = []
    with style.house_style():
        for fmt, name in zip(formats, names, strict=True):
            metadata = {"CreationDate": None} if fmt == "pdf" else None
            with folder.atomic_path(name) as temporary:
                fig.savefig(temporary, format=fmt, dpi=style.PNG_DPI, metadata=metadata)
            written.append(folder.root / name)
    return written
