"""The notebook API: arrays of parameters in, numpy arrays, DataFrames or dataclasses out.

>>> import agepost
>>> round(float(agepost.age_gyr(h0=67.5, omega_m=0.315, radiation="none")[0]), 3)
13.776
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from typing import Any

import numpy as np
import pandas as pd
from numpy.typing import ArrayLike, NDArray

from agepost.chains import SampleSet, read_chains
from agepost.derive import DerivedSamples, ModelSettings, derive
from agepost.physics.background import DEFAULTS, make_background
from agepost.physics.times import ExpansionHistory
from agepost.physics.times import expansion_history as _history
from agepost.pipeline import RunResult, summarise_run


def expansion_history(
    *,
    h0: ArrayLike,
    omega_m: ArrayLike,
    omega_k: ArrayLike = 0.0,
    w0: ArrayLike = -1.0,
    wa: ArrayLike = 0.0,
    m_nu: ArrayLike = DEFAULTS["m_nu"],
    n_eff: ArrayLike = DEFAULTS["n_eff"],
    t_cmb: ArrayLike = DEFAULTS["t_cmb"],
    n_massive: int = 1,
    radiation: str = "full",
    redshifts: ArrayLike = (),
    distances: bool = False,
) -> ExpansionHistory:
    """Age, cosmic and lookback times (Gyr) and optionally comoving distances (Mpc).

    Parameters broadcast to one length ``n`` (scalars allowed); see
    :func:`agepost.physics.background.make_background` for their meaning and units.
    Samples without a big bang or with invalid values are NaN with a reason code in
    ``exclusion``.
    """
    background = make_background(
        h0=h0,
        omega_m=omega_m,
        omega_k=omega_k,
        w0=w0,
        wa=wa,
        m_nu=m_nu,
        n_eff=n_eff,
        t_cmb=t_cmb,
        n_massive=n_massive,
        radiation=radiation,
    )
    return _history(background, redshifts, distances=distances)


def age_gyr(**parameters: Any) -> NDArray[np.float64]:
    """Age today in Gyr, shape (n,); keywords as in :func:`expansion_history`."""
    return expansion_history(**parameters).age_gyr


def lookback_gyr(redshifts: ArrayLike, **parameters: Any) -> NDArray[np.float64]:
    """Lookback times in Gyr, shape (n, n_z); keywords as in :func:`expansion_history`."""
    return expansion_history(redshifts=redshifts, **parameters).lookback_gyr


def summarise_chains(
    paths: str | Sequence[str],
    redshifts: Iterable[float] = (),
    *,
    levels: Sequence[float] = (0.68, 0.95),
    model: ModelSettings | None = None,
    **read_options: Any,
) -> RunResult:
    """Read chain files, derive ages and times, and summarise them (nothing is written).

    ``read_options`` are fields of :class:`agepost.chains.ReadOptions` (for example
    ``weight_column="weight"``, ``burn_in=0.2``).
    """
    from agepost.chains import ReadOptions

    samples = read_chains(paths, ReadOptions(**read_options))
    derived = derive(samples, redshifts, model=model)
    return summarise_run(samples, derived, levels=tuple(levels))


def summary_table(result: RunResult) -> pd.DataFrame:
    """One row per quantity and parameter: median, mean, std and every interval end."""
    rows = {}
    for name, summary in (result.quantities | result.parameters).items():
        row = {
            "mean": summary.mean,
            "median": summary.median,
            "std": summary.std,
            "ess": summary.ess,
        }
        for key, interval in summary.intervals.items():
            row[f"equal_tail_{key}_lo"], row[f"equal_tail_{key}_hi"] = interval.equal_tail
            row[f"hpd_{key}_lo"], row[f"hpd_{key}_hi"] = interval.hpd
        rows[name] = row
    return pd.DataFrame.from_dict(rows, orient="index")


__all__ = [
    "DerivedSamples",
    "ExpansionHistory",
    "ModelSettings",
    "RunResult",
    "SampleSet",
    "age_gyr",
    "derive",
    "expansion_history",
    "lookback_gyr",
    "read_chains",
    "summarise_chains",
    "summary_table",
]
