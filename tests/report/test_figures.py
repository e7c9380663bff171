"""Corner figure construction and atomic saving."""

from __future__ import annotations

import matplotlib

matplotlib.use("Agg")

import numpy as np
import pandas as pd
import pytest
from matplotlib.figure import Figure

from agepost.errors import InputError, OutputExistsError
from agepost.outputs import OutputFolder
from agepost.report.figures import corner_figure, save_figure


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
