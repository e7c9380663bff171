"""Overlaid figures of several runs, the objects figure and the reweighting figure."""

from __future__ import annotations

import matplotlib

matplotlib.use("Agg")

import numpy as np
import pandas as pd
import pytest
from matplotlib.figure import Figure
from numpy.testing import assert_allclose

from agepost.errors import InputError
from agepost.outputs import OutputFolder
from agepost.report.compare_figures import (
    objects_figure,
    overlaid_bands_figure,
    overlaid_corner_figure,
    overlaid_marginals_figure,
    reweight_figure,
    run_colour,
    run_linestyle,
)
from agepost.report.figures import save_figure


@pytest.fixture(scope="module")
def two_runs():
    rng = np.random.default_rng(12)
    return {
        "narrow": (rng.normal(13.8, 0.02, 4000), None),
        "wide": (rng.normal(13.6, 0.10, 4000), rng.uniform(0.5, 1.5, 4000)),
    }


def test_marginals_overlay_each_run_with_its_peak_at_its_mode(two_runs):
    fig = overlaid_marginals_figure(
        [("$t_0$ [Gyr]", two_runs), ("again", two_runs), ("third", two_runs)]
    )
    assert isinstance(fig, Figure)
    visible = [ax for ax in fig.axes if ax.get_visible()]
    assert len(visible) == 3  # the fourth cell of the 2 x 2 grid is hidden
    curves = [line for line in visible[0].get_lines() if len(line.get_xdata()) > 2]
    assert [c.get_label() for c in curves] == ["narrow", "wide"]
    assert [c.get_color() for c in curves] == [run_colour(0), run_colour(1)]
    assert [c.get_linestyle() for c in curves] == [run_linestyle(0), run_linestyle(1)]
    for curve, centre, width in zip(curves, (13.8, 13.6), (0.02, 0.10), strict=True):
        peak = curve.get_xdata()[np.argmax(curve.get_ydata())]
        assert abs(peak - centre) < 0.25 * width  # a smoothed normal peaks at its mean
    with pytest.raises(InputError):
        overlaid_marginals_figure([])


def test_bands_draw_the_median_and_the_offset_from_the_first_run():
    rng = np.random.default_rng(3)
    z = np.array([0.0, 1.0, 3.0])
    first = 13.8 / (1 + z)[None, :] ** 1.5 + rng.normal(0, 0.01, (500, 1))
    second = first + 0.05
    fig = overlaid_bands_figure(
        z,
        {"A": first, "B": second},
        levels=(0.68,),
        subsample_sizes={"A": (500, 9000), "B": (500, 8000)},
    )
    top, bottom = fig.axes
    median_a, median_b = (
        line
        for line in top.get_lines()
        if line.get_label() in ("A (500 of 9,000 by weight)", "B (500 of 8,000 by weight)")
    )
    assert_allclose(median_a.get_ydata(), np.median(first, axis=0), rtol=1e-12)
    offset_b = next(line for line in bottom.get_lines() if line.get_label() == "B")
    assert_allclose(offset_b.get_ydata(), 50.0, rtol=1e-9)  # 0.05 Gyr = 50 Myr
    assert top.get_xscale() == "log"
    with pytest.raises(InputError, match="expected"):
        overlaid_bands_figure(z, {"A": first[:, :2]})


def test_corner_overlay_keeps_every_histogram_in_view(two_runs):
    rng = np.random.default_rng(5)
    frames = {
        label: (
            pd.DataFrame({"age": values, "H0": rng.normal(68, 1, values.size), "w0": -1.0}),
            weights,
        )
        for label, (values, weights) in two_runs.items()
    }
    fig = overlaid_corner_figure(frames, levels=(0.68, 0.95))
    assert len(fig.axes) == 4  # w0 holds one value in both runs and is left out
    diagonal = fig.axes[0]
    narrow_peak = np.histogram(
        two_runs["narrow"][0], bins=30, range=diagonal.get_xlim(), density=True
    )[0].max()
    assert diagonal.get_ylim()[1] >= narrow_peak  # the narrow run is not clipped
    constant = {k: (pd.DataFrame({"w0": np.full(3, -1.0)}), None) for k in ("a", "b")}
    with pytest.raises(InputError, match="no shared column varies"):
        overlaid_corner_figure(constant)


def test_objects_figure_and_saving(tmp_path):
    z = np.linspace(0.0, 10.0, 20)
    times = 13.8 / (1 + z)[None, :] ** 1.5 * np.ones((50, 1))
    objects = [("Okapi-1", 3.2, 1.6, 0.3, "gaussian"), ("Heron", 0.0, 12.9, 0.0, "lower_limit")]
    fig = objects_figure(z, times, objects, subsample_of=900)
    ax = fig.axes[0]
    assert ax.get_xscale() == "log" and ax.get_yscale() == "log"
    assert len(ax.containers) == 2  # one error-bar container per object
    assert "50 of 900 samples" in ax.get_title(loc="right")
    written = save_figure(fig, OutputFolder(tmp_path), "objects")
    assert [p.name for p in written] == ["objects.png", "objects.pdf"]
    assert all(p.stat().st_size > 1000 for p in written)


def test_reweight_figure_labels_the_constraint(two_runs):
    values, _ = two_runs["wide"]
    after = np.exp(-0.5 * ((values - 13.7) / 0.05) ** 2)
    fig = reweight_figure(
        [("$t_0$", values, np.ones_like(values), after)], constraint_label="t0 = 13.7"
    )
    labels = [line.get_label() for line in fig.axes[0].get_lines() if len(line.get_xdata()) > 2]
    assert labels == ["before", "after: t0 = 13.7"]
