"""Overlaid figures of several runs, of old objects against t(z), and of a reweighted posterior.

Built in the house style of :mod:`agepost.report.style` (one journal column, Okabe-Ito
colours, each run also told apart by its line style so the figures survive greyscale).
Every function takes an optional ``fig``, returns the Figure and never opens a window;
save with :func:`agepost.report.figures.save_figure`.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

import corner
import numpy as np
import pandas as pd
from matplotlib.figure import Figure
from matplotlib.ticker import FormatStrFormatter
from numpy.typing import ArrayLike, NDArray

from agepost.errors import InputError
from agepost.report import style
from agepost.report.figures import CORNER_BINS, RANGE_FRACTION
from agepost.stats.density import density_curve
from agepost.stats.intervals import check_level
from agepost.stats.quantiles import weighted_quantile, weighted_quantile_columns

#: Run colours in order (Okabe-Ito), then line styles; both cycle.
RUN_COLOURS = (style.MAIN, style.SECOND, "#009E73", style.ACCENT, "#CC79A7", "#56B4E9")
RUN_LINESTYLES = ("-", "--", "-.", ":")

#: A weighted sample: values (n,) and weights (n,) or None.
Weighted = tuple[ArrayLike, ArrayLike | None]


def run_colour(index: int) -> str:
    """Colour of the ``index``-th run."""
    return RUN_COLOURS[index % len(RUN_COLOURS)]


def run_linestyle(index: int) -> str:
    """Line style of the ``index``-th run."""
    return RUN_LINESTYLES[index % len(RUN_LINESTYLES)]


def _span(samples: Sequence[Weighted]) -> tuple[float, float]:
    """Union of the central RANGE_FRACTION of each weighted sample."""
    ends = [
        weighted_quantile(v, [(1 - RANGE_FRACTION) / 2, (1 + RANGE_FRACTION) / 2], w)
        for v, w in samples
    ]
    low, high = min(e[0] for e in ends), max(e[1] for e in ends)
    if high <= low:
        pad = abs(low) * 1e-3 or 1e-3
        low, high = low - pad, high + pad
    return float(low), float(high)


def overlaid_marginals_figure(
    panels: Sequence[tuple[str, Mapping[str, Weighted]]],
    *,
    fig: Figure | None = None,
) -> Figure:
    """One panel per quantity with the smoothed 1-D posterior of every run overlaid.

    Parameters
    ----------
    panels : sequence of (axis label, {run label: (values, weights)})
        The axis label carries the unit; every panel lists the runs in the same order.
        Curves are :func:`agepost.stats.density.density_curve`; a tick at the bottom marks
        each run's weighted median.
    fig : Figure or None

    Returns
    -------
    Figure, one column wide, two panels per row.
    """
    if not panels:
        raise InputError("no quantity to draw")
    n_cols = 1 if len(panels) == 1 else 2
    n_rows = -(-len(panels) // n_cols)
    with style.house_style():
        fig = fig or Figure(figsize=(style.COLUMN_WIDTH_IN, 1.45 * n_rows + 0.35))
        axes = fig.subplots(n_rows, n_cols, squeeze=False).ravel()
        for ax, (axis_label, runs) in zip(axes, panels, strict=False):
            for index, (label, (values, weights)) in enumerate(runs.items()):
                centres, density = density_curve(values, weights)
                colour = run_colour(index)
                if centres.size > 1:
                    ax.plot(
                        centres,
                        density / density.max(),
                        color=colour,
                        linestyle=run_linestyle(index),
                        label=label,
                    )
                median = float(weighted_quantile(values, 0.5, weights))
                ax.plot([median, median], [0, 0.08], color=colour, linewidth=1.2)
            ax.set_xlim(*_span(list(runs.values())))
            ax.set_ylim(0, 1.12)
            ax.set_yticks([])
            ax.set_xlabel(axis_label)
            ax.tick_params(axis="x", labelsize=5.5)
        for ax in axes[len(panels) :]:
            ax.set_visible(False)
        axes[0].legend(loc="upper left", fontsize=5.5, handlelength=1.8)
        fig.supylabel("posterior density (peak = 1)", fontsize=6.5)
        fig.tight_layout(pad=0.3, h_pad=0.6, w_pad=0.4)
    return fig


def _band(ax, x, matrix, weights, levels, colour, linestyle, label):  # noqa: ANN001
    rows = [0.5] + [p for level in levels for p in ((1 - level) / 2, (1 + level) / 2)]
    edges = weighted_quantile_columns(matrix, rows, weights)
    for i, level in sorted(enumerate(levels), key=lambda item: -item[1]):
        ax.fill_between(
            x,
            edges[1 + 2 * i],
            edges[2 + 2 * i],
            color=colour,
            alpha=0.6 * style.band_alpha(level),
            linewidth=0,
        )
    ax.plot(x, edges[0], color=colour, linestyle=linestyle, linewidth=1.0, label=label)
    return edges[0]


def overlaid_bands_figure(
    z_grid: ArrayLike,
    cosmic_times: Mapping[str, NDArray[np.float64]],
    *,
    levels: Sequence[float] = (0.68, 0.95),
    subsample_sizes: Mapping[str, tuple[int, int]] | None = None,
    fig: Figure | None = None,
) -> Figure:
    """Cosmic time t(z) of every run (top) and its offset from the first run's median (bottom).

    Parameters
    ----------
    z_grid : (n_z,) redshifts from 0, increasing; drawn on a log axis in ``1 + z``.
    cosmic_times : {run label: (n, n_z) Gyr}
        Equally weighted rows (a weighted subsample) of each run.
    levels : credible levels of the equal-tailed bands.
    subsample_sizes : {run label: (n drawn, n kept)} stated in the legend, or None.
    fig : Figure or None

    Returns
    -------
    Figure, one column wide (3.4 x 3.6 in).
    """
    z = np.asarray(z_grid, dtype=np.float64)
    levels = [check_level(level) for level in levels]
    x = 1 + z
    with style.house_style():
        fig = fig or Figure(figsize=(style.COLUMN_WIDTH_IN, 3.6))
        top, bottom = fig.subplots(2, 1, sharex=True, gridspec_kw={"height_ratios": (1.3, 1)})
        reference = None
        for index, (label, times) in enumerate(cosmic_times.items()):
            matrix = np.asarray(times, dtype=np.float64)
            if matrix.ndim != 2 or matrix.shape[1] != z.size:
                raise InputError(
                    f"times of {label} have shape {matrix.shape}; expected (n, {z.size})"
                )
            text = label
            if subsample_sizes and label in subsample_sizes:
                drawn, kept = subsample_sizes[label]
                text = f"{label} ({drawn:,} of {kept:,} by weight)"
            colour, linestyle = run_colour(index), run_linestyle(index)
            median = _band(top, x, matrix, None, levels, colour, linestyle, text)
            reference = median if reference is None else reference
            _band(bottom, x, 1e3 * (matrix - reference), None, levels, colour, linestyle, label)
        top.set_xscale("log")
        top.set_xlim(x[0], x[-1])
        top.set_ylabel("cosmic time $t(z)$ [Gyr]")
        bands = ", ".join(f"{100 * v:g}%" for v in sorted(levels))
        top.legend(
            loc="upper right", fontsize=5.5, title=f"median; {bands} bands", title_fontsize=5.5
        )
        bottom.axhline(0, color="0.5", linewidth=0.5)
        bottom.set_ylabel(
            f"$t(z) - t_{{\\rm {_tex(next(iter(cosmic_times)))}}}(z)$ [Myr]", fontsize=6.5
        )
        bottom.set_xlabel("$1 + z$")
        bottom.xaxis.set_major_formatter(FormatStrFormatter("%g"))
        fig.tight_layout(pad=0.3, h_pad=0.3)
    return fig


def _tex(text: str) -> str:
    """Run label made safe inside matplotlib math text."""
    return "".join(f"\\{c}" if c in "_#$%&{}" else ("\\ " if c == " " else c) for c in text)


def overlaid_corner_figure(
    frames: Mapping[str, tuple[pd.DataFrame, ArrayLike | None]],
    *,
    levels: Sequence[float] = (0.68, 0.95),
    labels: Mapping[str, str] | None = None,
    fig: Figure | None = None,
) -> Figure:
    """Corner plot of the shared columns with each run's contours and histograms overlaid.

    Parameters
    ----------
    frames : {run label: (DataFrame (n, k), weights (n,) or None)}
        The same columns in every frame, finite values. Columns that hold one value in
        every run are left out.
    levels : credible levels of the 2-D contours (line contours, one colour per run).
    labels : axis label per column (matplotlib text).
    fig : Figure or None

    Returns
    -------
    Figure; axes span the union of the runs' central :data:`RANGE_FRACTION`.
    """
    levels = sorted(check_level(level) for level in levels)
    items = list(frames.items())
    columns = [
        c
        for c in items[0][1][0].columns
        if any(np.ptp(frame[c].to_numpy(float)) > 0 for _, (frame, _) in items)
    ]
    if not columns:
        raise InputError("no shared column varies in any run; there is no corner plot to draw")
    ranges = [_span([(frame[c].to_numpy(float), w) for _, (frame, w) in items]) for c in columns]
    labels = labels or {}
    size = min(max(style.COLUMN_WIDTH_IN, 0.85 * len(columns)), style.PAGE_WIDTH_IN)
    with style.house_style():
        fig = fig or Figure(figsize=(size, size))
        for index, (_, (frame, weights)) in enumerate(items):
            _corner_layer(
                fig,
                frame[columns].to_numpy(float),
                weights,
                index,
                ranges,
                levels,
                [labels.get(c, c) for c in columns],
            )
        for ax in fig.axes:
            ax.tick_params(labelsize=6.0, direction="in", length=2.0, width=0.5)
        for i, column in enumerate(columns):  # each layer rescaled the diagonal to its own run
            peak = max(
                np.histogram(
                    frame[column].to_numpy(float),
                    bins=CORNER_BINS,
                    range=ranges[i],
                    weights=weights,
                    density=True,
                )[0].max()
                for _, (frame, weights) in items
            )
            fig.axes[i * (len(columns) + 1)].set_ylim(0, 1.1 * peak)
        handles = [
            fig.axes[0].plot([], [], color=run_colour(i), linestyle=run_linestyle(i), label=label)[
                0
            ]
            for i, (label, _) in enumerate(items)
        ]
        bands = ", ".join(f"{100 * v:g}%" for v in levels)
        fig.legend(
            handles=handles,
            loc="upper right",
            fontsize=6.5,
            title=f"{bands} contours",
            title_fontsize=6.0,
        )
    return fig


def _corner_layer(fig, values, weights, index, ranges, levels, axis_labels) -> None:  # noqa: ANN001
    """One run's histograms and line contours in its colour and line style."""
    colour, linestyle = run_colour(index), run_linestyle(index)
    corner.corner(
        values,
        weights=weights,
        bins=CORNER_BINS,
        range=ranges,
        smooth=1.0,
        levels=levels,
        labels=axis_labels,
        plot_datapoints=False,
        plot_density=False,
        fill_contours=False,
        color=colour,
        contour_kwargs={"colors": [colour], "linewidths": 0.8, "linestyles": linestyle},
        hist_kwargs={"color": colour, "linewidth": 0.9, "linestyle": linestyle, "density": True},
        label_kwargs={"fontsize": 7.5},
        max_n_ticks=3,
        labelpad=0.08,
        fig=fig,
    )


def objects_figure(
    z_grid: ArrayLike,
    cosmic_time: ArrayLike,
    objects: Sequence[tuple[str, float, float, float, str]],
    *,
    levels: Sequence[float] = (0.68, 0.95),
    subsample_of: int | None = None,
    fig: Figure | None = None,
) -> Figure:
    """Cosmic time t(z) with credible bands, and the ages of objects at their redshifts.

    Parameters
    ----------
    z_grid : (n_z,) redshifts from 0, increasing (log axis in ``1 + z``).
    cosmic_time : (n, n_z) Gyr, equally weighted rows (a weighted subsample).
    objects : sequence of (name, z, age_gyr, age_err_gyr, kind)
        ``kind`` is ``"gaussian"`` (point with a one-sigma bar) or ``"lower_limit"``
        (point with an upward arrow).
    levels, subsample_of : as in :func:`agepost.report.figures.age_redshift_figure`.
    fig : Figure or None

    Returns
    -------
    Figure, one column wide (3.4 x 2.6 in plus the legend below), both axes logarithmic.
    An object above the band is older than the universe at its redshift.
    """
    z = np.asarray(z_grid, dtype=np.float64)
    times = np.asarray(cosmic_time, dtype=np.float64)
    levels = [check_level(level) for level in levels]
    with style.house_style():
        fig = fig or Figure(figsize=(style.COLUMN_WIDTH_IN, 2.6))
        ax = fig.add_subplot() if not fig.axes else fig.axes[0]
        bands = ", ".join(f"{100 * v:g}%" for v in sorted(levels))
        _band(
            ax, 1 + z, times, None, levels, style.MAIN, "-", f"age of the universe $t(z)$ ({bands})"
        )
        for index, item in enumerate(objects):
            _draw_object(ax, index, *item)
        ax.set_xscale("log")
        ax.set_yscale("log")
        ax.set_xlim(0.93 * (1 + z[0]), 1 + z[-1])
        ax.set_xlabel("$1 + z$")
        ax.set_ylabel("age [Gyr]")
        ax.xaxis.set_major_formatter(FormatStrFormatter("%g"))
        ax.yaxis.set_major_formatter(FormatStrFormatter("%g"))
        n = times.shape[0]
        ax.set_title(
            f"{n:,} of {subsample_of:,} samples, drawn by weight"
            if subsample_of
            else f"{n:,} samples",
            loc="right",
            fontsize=6.0,
        )
        ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.2), fontsize=5.5, ncol=2)
    return fig


_MARKERS = ("o", "s", "D", "^", "v", "P", "X")


def _draw_object(ax, index, name, z_obj, age, err, kind) -> None:  # noqa: ANN001
    """A point with a one-sigma bar (gaussian) or an upward arrow (lower limit)."""
    common: dict[str, Any] = {
        "color": style.SECOND if kind == "gaussian" else style.DARK,
        "marker": _MARKERS[index % len(_MARKERS)],
        "markersize": 3.5,
        "linestyle": "none",
        "capsize": 1.5,
        "elinewidth": 0.8,
        "label": name,
    }
    if kind == "lower_limit":  # an upward arrow a quarter of the age long (log axis)
        ax.errorbar(1 + z_obj, age, yerr=[[0.0], [0.25 * age]], lolims=True, **common)
    else:
        ax.errorbar(1 + z_obj, age, yerr=err, **common)


def reweight_figure(
    panels: Sequence[tuple[str, ArrayLike, ArrayLike, ArrayLike]],
    *,
    constraint_label: str,
    fig: Figure | None = None,
) -> Figure:
    """Posteriors before and after reweighting, one panel per quantity.

    Parameters
    ----------
    panels : sequence of (axis label, values (n,), weights before (n,), weights after (n,))
    constraint_label : legend text of the reweighted curve (the constraint applied).
    fig : Figure or None
    """
    series = [
        (label, {"before": (values, before), f"after: {constraint_label}": (values, after)})
        for label, values, before, after in panels
    ]
    return overlaid_marginals_figure(series, fig=fig)
