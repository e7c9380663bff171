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
from matplotlib.axes import Axes
from matplotlib.colors import to_rgba
from matplotlib.figure import Figure
from matplotlib.ticker import FormatStrFormatter
from numpy.typing import ArrayLike, NDArray

from agepost.errors import InputError
from agepost.outputs import OutputFolder
from agepost.report import style
from agepost.stats.density import density_curve
from agepost.stats.intervals import check_level
from agepost.stats.quantiles import check_weighted, weighted_quantile, weighted_quantile_columns
from agepost.stats.summary import QuantitySummary

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


def _band_rows(levels: Sequence[float]) -> list[float]:
    """Cumulative weights of the band edges: median, then each level's two ends."""
    rows = [0.5]
    for level in levels:
        rows += [(1 - level) / 2, (1 + level) / 2]
    return rows


def _draw_bands(
    ax: Axes,
    x: NDArray[np.float64],
    matrix: NDArray[np.float64],
    weights: ArrayLike | None,
    levels: list[float],
    colour: str,
    name: str,
) -> None:
    """Median line (labelled ``name``) and one equal-tailed band per level, widest palest."""
    edges = weighted_quantile_columns(matrix, _band_rows(levels), weights)
    for i, level in sorted(enumerate(levels), key=lambda item: -item[1]):
        ax.fill_between(
            x,
            edges[1 + 2 * i],
            edges[2 + 2 * i],
            color=colour,
            alpha=style.band_alpha(level),
            linewidth=0,
        )
    ax.plot(x, edges[0], color=colour, linewidth=1.1, label=name)


def age_redshift_figure(
    z_grid: ArrayLike,
    cosmic_time_samples: ArrayLike,
    weights: ArrayLike | None,
    *,
    lookback: ArrayLike | None = None,
    levels: Sequence[float] = (0.68, 0.95),
    log_z: bool = False,
    subsample_of: int | None = None,
    fig: Figure | None = None,
) -> Figure:
    """Median cosmic time t(z) and lookback time with credible bands over a redshift grid.

    At every redshift the weighted quantiles of the samples give the median (line) and the
    equal-tailed band of each level (the widest palest), by the interpolation rule of
    :mod:`agepost.stats.quantiles`.

    Parameters
    ----------
    z_grid : (n_z,) array
        Redshifts, increasing, >= 0.
    cosmic_time_samples : (n, n_z) array, Gyr
        Cosmic time of every sample at every grid redshift (only kept samples).
    weights : (n,) array or None
        Sample weights; None for an equally weighted set.
    lookback : (n, n_z) array or None, Gyr
        Lookback times of the same samples; drawn in a second colour when given.
    levels : sequence of float in (0, 1)
    log_z : bool
        Logarithmic axis in ``1 + z`` (so z = 0 is allowed) instead of a linear z axis.
    subsample_of : int or None
        When the rows are a weighted subsample of a larger set, that set's size. The
        subsample is expected from :func:`agepost.stats.resample.weighted_subsample`
        (systematic resampling, equal weights afterwards); the figure then states
        "n of N samples, drawn by weight". Otherwise it states "n samples".
    fig : Figure or None

    Returns
    -------
    Figure, one column wide (3.4 x 2.6 in).
    """
    z = np.asarray(z_grid, dtype=np.float64)
    times = np.asarray(cosmic_time_samples, dtype=np.float64)
    if z.ndim != 1 or times.ndim != 2 or times.shape[1] != z.size:
        raise InputError(
            f"cosmic times have shape {times.shape}; expected (n_samples, {z.size}) for the grid"
        )
    if np.any(~np.isfinite(z)) or np.any(z < 0) or np.any(np.diff(z) <= 0):
        raise InputError("the redshift grid must be finite, >= 0 and increasing")
    levels = [check_level(level) for level in levels]
    x = 1 + z if log_z else z
    with style.house_style():
        fig = fig or Figure(figsize=(style.COLUMN_WIDTH_IN, 2.6))
        ax = fig.add_subplot() if not fig.axes else fig.axes[0]
        _draw_bands(ax, x, times, weights, levels, style.MAIN, "cosmic time $t(z)$")
        if lookback is not None:
            matrix = np.asarray(lookback, dtype=np.float64)
            if matrix.shape != times.shape:
                raise InputError(f"lookback times have shape {matrix.shape}, not {times.shape}")
            _draw_bands(ax, x, matrix, weights, levels, style.ACCENT, "lookback time")
        if log_z:
            ax.set_xscale("log")
        ax.set_xlim(x[0], x[-1])
        ax.set_xlabel("$1 + z$" if log_z else "redshift $z$")
        ax.set_ylabel("time [Gyr]")
        n = times.shape[0]
        count = f"{n:,} of {subsample_of:,} samples, drawn by weight" if subsample_of else ""
        ax.set_title(count or f"{n:,} samples", loc="right", fontsize=6.0)
        bands = ", ".join(f"{100 * v:g}%" for v in sorted(levels))
        ax.legend(loc="center right", title=f"median; {bands} bands")
        if log_z:
            ax.xaxis.set_major_formatter(FormatStrFormatter("%g"))
    return fig


def marginal_figure(
    values: ArrayLike,
    weights: ArrayLike | None,
    summary: QuantitySummary,
    *,
    label: str,
    interval: str = "equal_tail",
    fig: Figure | None = None,
) -> Figure:
    """Smoothed 1-D marginal with the credible intervals of ``summary`` shaded.

    Parameters
    ----------
    values : (n,) array
        Kept samples of one quantity.
    weights : (n,) array or None
    summary : QuantitySummary
        Its intervals are shaded (paler for wider levels) and its median drawn as a line;
        levels that are not quoted (NaN) are not shaded.
    label : str
        x-axis label, units included (matplotlib text, LaTeX allowed).
    interval : {"equal_tail", "hpd"}
        Which interval of the summary to shade.
    fig : Figure or None

    Returns
    -------
    Figure, one column wide (3.4 x 2.2 in). The curve is
    :func:`agepost.stats.density.density_curve`; the axis spans the central
    :data:`RANGE_FRACTION` of the weight.
    """
    if interval not in ("equal_tail", "hpd"):
        raise InputError(f"interval {interval!r} is unknown; use 'equal_tail' or 'hpd'")
    centres, density = density_curve(values, weights)
    span = weighted_quantile(values, [(1 - RANGE_FRACTION) / 2, (1 + RANGE_FRACTION) / 2], weights)
    with style.house_style():
        fig = fig or Figure(figsize=(style.COLUMN_WIDTH_IN, 2.2))
        ax = fig.add_subplot() if not fig.axes else fig.axes[0]
        if centres.size > 1:
            ax.plot(centres, density, color=style.DARK, linewidth=1.0)
        for key, item in sorted(summary.intervals.items(), key=lambda kv: -kv[1].level):
            low, high = getattr(item, interval)
            if not np.isfinite([low, high]).all() or centres.size < 2:
                continue
            inside = (centres >= low) & (centres <= high)
            ax.fill_between(
                centres,
                0,
                density,
                where=inside,
                color=style.MAIN,
                alpha=style.band_alpha(item.level),
                linewidth=0,
                label=f"{100 * float(key):g}%",
            )
        ax.axvline(summary.median, color=style.SECOND, linewidth=0.9, label="median")
        if span[1] > span[0]:
            ax.set_xlim(span[0], span[1])
        ax.set_ylim(bottom=0)
        ax.set_yticks([])
        ax.set_xlabel(label)
        ax.set_ylabel("posterior density")
        name = "equal-tailed" if interval == "equal_tail" else "HPD"
        ax.legend(loc="upper right", title=name)
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
