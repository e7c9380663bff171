"""The run's figure set: one figure per requested group, PNG bytes for the report."""

from __future__ import annotations

import matplotlib

matplotlib.use("Agg")

import numpy as np  # noqa: E402
import pandas as pd  # noqa: E402

from agepost.bands import redshift_band  # noqa: E402
from agepost.chains import SampleSet  # noqa: E402
from agepost.derive import ModelSettings, derive  # noqa: E402
from agepost.report.run_figures import axis_label, build_run_figures, png_bytes  # noqa: E402
from agepost.stats.summary import summarise  # noqa: E402


def test_all_groups_and_png():
    rng = np.random.default_rng(4)
    n = 400
    samples = SampleSet(
        parameters=pd.DataFrame({"H0": rng.normal(70, 1, n), "Omega_m": rng.normal(0.3, 0.01, n)}),
        weights=np.ones(n),
        chain_id=np.zeros(n, int),
    )
    derived = derive(samples, [1.0])
    summaries = {
        name: summarise(derived.quantities[name], derived.weights) for name in derived.quantities
    }
    band = redshift_band(samples, ModelSettings(), grid=np.linspace(0, 5, 12))
    figures = build_run_figures(
        parameters=samples.parameters,
        quantities=derived.quantities,
        weights=derived.weights,
        summaries=summaries,
        band=band,
        levels=(0.68, 0.95),
        groups=("corner", "age_redshift", "marginals"),
    )
    assert list(figures) == ["corner", "age_redshift", "marginal_age", "marginal_lookback_z1"]
    assert png_bytes(figures["corner"]).startswith(b"\x89PNG")
    assert axis_label("lookback_z0.5") == r"$t_\mathrm{lb}(z=0.5)$ [Gyr]"
