"""The figures and the one-page report of a run, from arrays the pipeline hands over.

Figures (each written as PNG and vector PDF):

- ``corner``: the varying input parameters with the derived age;
- ``age_redshift``: median cosmic time t(z) and lookback time with credible bands;
- ``marginal_<quantity>``: the 1-D posterior of the age and of each lookback time with
  its intervals shaded.

``report.html`` embeds the PNG versions with the summary table, inputs, model and
warnings (see :mod:`agepost.report.html`).
"""

from __future__ import annotations

import io
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np
import pandas as pd
from matplotlib.figure import Figure
from numpy.typing import NDArray

from agepost.report.figures import age_redshift_figure, corner_figure, marginal_figure
from agepost.stats.summary import QuantitySummary

#: Figure groups a configuration may ask for, and the report.
FIGURE_GROUPS: tuple[str, ...] = ("corner", "age_redshift", "marginals")

_AXIS_LABELS = {
    "age": r"$t_0$ [Gyr]",
    "H0": r"$H_0$ [km/s/Mpc]",
    "Omega_m": r"$\Omega_\mathrm{m}$",
    "Omega_k": r"$\Omega_k$",
    "w0": r"$w_0$",
    "wa": r"$w_a$",
    "m_nu": r"$\sum m_\nu$ [eV]",
    "N_eff": r"$N_\mathrm{eff}$",
}


def axis_label(name: str) -> str:
    """Axis label with units for a parameter or derived quantity name."""
    if name in _AXIS_LABELS:
        return _AXIS_LABELS[name]
    for prefix, symbol in (("lookback_z", r"t_\mathrm{lb}"), ("cosmic_time_z", "t")):
        if name.startswith(prefix):
            return rf"${symbol}(z={name[len(prefix) :]})$ [Gyr]"
    return name


def build_run_figures(
    *,
    parameters: pd.DataFrame,
    quantities: pd.DataFrame,
    weights: NDArray[np.float64],
    summaries: Mapping[str, QuantitySummary],
    band: Any | None,
    levels: Sequence[float],
    groups: Sequence[str],
) -> dict[str, Figure]:
    """Figures by file stem, in display order.

    Parameters
    ----------
    parameters, quantities : DataFrames of the same ``m`` kept rows (inputs that vary,
        derived quantities in Gyr); a plotting subsample is fine.
    weights : (m,) weights of those rows.
    summaries : quantity name -> its summary (intervals shaded on the marginals).
    band : :class:`agepost.bands.RedshiftBand` or None (no age-redshift figure).
    levels : credible levels of contours and bands.
    groups : which of :data:`FIGURE_GROUPS` to draw.
    """
    figures: dict[str, Figure] = {}
    if "corner" in groups:
        frame = pd.concat(
            [parameters.reset_index(drop=True), quantities[["age"]].reset_index(drop=True)], axis=1
        )
        labels = {name: axis_label(name) for name in frame.columns}
        figures["corner"] = corner_figure(frame, weights, levels=levels, labels=labels)
    if "age_redshift" in groups and band is not None:
        figures["age_redshift"] = age_redshift_figure(
            band.redshifts,
            band.cosmic_time_gyr,
            band.weights,
            lookback=band.lookback_gyr,
            levels=levels,
            log_z=True,
            subsample_of=band.n_population if band.subsampled else None,
        )
    if "marginals" in groups:
        for name in quantities.columns:
            if name == "age" or name.startswith("lookback_z"):
                figures[f"marginal_{name}"] = marginal_figure(
                    quantities[name].to_numpy(), weights, summaries[name], label=axis_label(name)
                )
    return figures


def png_bytes(figure: Figure) -> bytes:
    """The figure as PNG bytes (for embedding in the report)."""
    buffer = io.BytesIO()
    figure.savefig(buffer, format="png", dpi=150)
    return buffer.getvalue()


def figure_caption(stem: str) -> str:
    """Plain-text caption of a figure by its file stem."""
    if stem == "corner":
        return "Input parameters and the derived age: credible contours and 1-D marginals."
    if stem == "age_redshift":
        return "Cosmic time t(z) and lookback time: median with credible bands."
    if stem.startswith("marginal_"):
        return f"Posterior of {stem[len('marginal_') :]} with its credible intervals shaded."
    return stem
