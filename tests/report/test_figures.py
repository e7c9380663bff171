"""Corner, age-redshift and marginal figures; atomic saving."""

from __future__ import annotations

import matplotlib

matplotlib.use("Agg")

import numpy as np
import pandas as pd
import pytest
from matplotlib.figure import Figure
from numpy.testing import assert_allclose

from agepost.errors import InputError, OutputExistsError
from agepost.outputs import OutputFolder
from agepost.report.figures import (
    age_redshift_figure,
    corner_figure,
    marginal_figure,
    save_figure,
)
from agepost.stats.quantiles import weighted_quantile
from agepost.stats.summary import summarise


@pytest.fixture(scope="module")
def parameters():
    rng = np.random.default_rng(51)
    n = 4000
    h0 = rng.normal(67.5, 1.0, n)
    return pd.DataFrame(
        {
            "H0": h0,
            "Omega_m": rng.normal(0.31, 0.01, n),
            "w0": np.full(n, -1.0),
            "age": 13.8 - 0.02 * (h0 - 67.5),
        }
    )


def test_corner_has_one_panel_per_pair_of_varying_columns(parameters):
    fig = corner_figure(parameters, np.ones(len(parameters)), labels={"age": "age [Gyr]"})
    assert isinstance(fig, Figure)
    assert len(fig.axes) == 9  # w0 is constant and left out: 3 x 3
    assert fig.axes[6].get_xlabel() == "H0" and fig.axes[8].get_xlabel() == "age [Gyr]"
    width, height = fig.get_size_inches()
    assert width == pytest.approx(3.4) and height == pytest.approx(3.4)
    # The 2-D panels carry filled contours (one band per level plus the transparent outside).
    assert fig.axes[3].collections


def test_corner_draws_into_given_figure(parameters):
    fig = Figure()
    assert corner_figure(parameters[["H0", "age"]], None, fig=fig) is fig
    assert len(fig.axes) == 4


def test_corner_rejects_nothing_to_draw(parameters):
    with pytest.raises(InputError, match="varies"):
        corner_figure(parameters[["w0"]], None)
    bad = parameters.copy()
    bad.loc[3, "H0"] = np.nan
    with pytest.raises(InputError, match="H0"):
        corner_figure(bad, None)


def test_save_figure_writes_each_format_atomically(tmp_path, parameters):
    folder = OutputFolder(tmp_path / "out")
    fig = corner_figure(parameters[["H0", "age"]], None)
    paths = save_figure(fig, folder, "corner")
    assert [p.name for p in paths] == ["corner.png", "corner.pdf"]
    assert paths[0].read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert paths[1].read_bytes()[:5] == b"%PDF-"
    assert sorted(p.name for p in (tmp_path / "out").iterdir()) == ["corner.pdf", "corner.png"]


def test_save_figure_refuses_overwrite_before_writing_anything(tmp_path, parameters):
    folder = OutputFolder(tmp_path)
    (tmp_path / "corner.pdf").write_text("keep me")
    fig = corner_figure(parameters[["H0", "age"]], None)
    with pytest.raises(OutputExistsError):
        save_figure(fig, folder, "corner")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["corner.pdf"]
    assert (tmp_path / "corner.pdf").read_text() == "keep me"


def einstein_de_sitter(n, rng):
    """t(z) = t0 (1 + z)^(-3/2) for a matter-only flat universe (textbook), t0 scattered."""
    z = np.r_[0.0, np.geomspace(0.01, 20.0, 40)]
    t0 = rng.normal(13.8, 0.15, n)
    times = t0[:, None] * (1 + z) ** -1.5
    return z, t0, times, t0[:, None] - times


def test_age_redshift_median_follows_closed_form():
    rng = np.random.default_rng(52)
    z, t0, times, lookback = einstein_de_sitter(3000, rng)
    w = rng.uniform(0.5, 2.0, t0.size)
    fig = age_redshift_figure(z, times, w, lookback=lookback, levels=(0.68, 0.95))
    ax = fig.axes[0]
    # Scaling every sample by (1 + z)^(-3/2) scales the weighted median by the same factor.
    median_t0 = weighted_quantile(t0, 0.5, w)
    assert_allclose(ax.lines[0].get_ydata(), median_t0 * (1 + z) ** -1.5, rtol=1e-12)
    assert_allclose(ax.lines[1].get_ydata(), median_t0 * (1 - (1 + z) ** -1.5), rtol=1e-9)
    assert len(ax.collections) == 4  # two bands for each of the two curves
    assert ax.get_xscale() == "linear" and ax.get_title(loc="right") == "3,000 samples"


def test_age_redshift_log_axis_and_subsample_note():
    z, _, times, _ = einstein_de_sitter(500, np.random.default_rng(53))
    fig = age_redshift_figure(z, times, None, log_z=True, subsample_of=80_000)
    ax = fig.axes[0]
    assert ax.get_xscale() == "log"
    assert_allclose(ax.lines[0].get_xdata(), 1 + z)
    assert ax.get_title(loc="right") == "500 of 80,000 samples, drawn by weight"
    assert len(ax.collections) == 2


def test_age_redshift_bad_shapes():
    z, _, times, _ = einstein_de_sitter(100, np.random.default_rng(54))
    with pytest.raises(InputError, match="expected"):
        age_redshift_figure(z[:-1], times, None)
    with pytest.raises(InputError, match="increasing"):
        age_redshift_figure(z[::-1], times, None)
    with pytest.raises(InputError, match="lookback"):
        age_redshift_figure(z, times, None, lookback=times[:, :-1])


def test_marginal_shades_quoted_levels_only():
    x = np.random.default_rng(55).gamma(4.0, 0.5, size=150)
    summary = summarise(x)  # 150 samples: the 0.95 level is not quoted
    fig = marginal_figure(x, None, summary, label="lookback [Gyr]")
    ax = fig.axes[0]
    assert len(ax.collections) == 1
    median_line = ax.lines[-1]
    assert median_line.get_xdata()[0] == pytest.approx(summary.median)
    assert ax.get_xlabel() == "lookback [Gyr]"
    with pytest.raises(InputError, match="interval"):
        marginal_figure(x, None, summary, label="x", interval="central")


def test_marginal_shaded_region_matches_interval():
    x = np.random.default_rng(56).normal(size=20_000)
    summary = summarise(x)
    fig = marginal_figure(x, None, summary, label="x", interval="hpd")
    ax = fig.axes[0]
    assert len(ax.collections) == 2
    inner = ax.collections[-1].get_paths()[0].vertices[:, 0]  # 0.68 band, drawn last
    low, high = summary.intervals["0.68"].hpd
    # The shading follows the density grid, whose step is range / 2048.
    step = np.ptp(x) / 2048
    assert inner.min() == pytest.approx(low, abs=2 * step)
    assert inner.max() == pytest.approx(high, abs=2 * step)


def test_pdf_output_is_vector(tmp_path):
    z, _, times, lookback = einstein_de_sitter(500, np.random.default_rng(57))
    fig = age_redshift_figure(z, times, None, lookback=lookback)
    pdf = save_figure(fig, OutputFolder(tmp_path), "age_z", formats=("pdf",))[0]
    assert b"/Subtype /Image" not in pdf.read_bytes()
