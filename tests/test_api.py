"""The notebook API returns arrays and DataFrames, never prints."""

from __future__ import annotations

import numpy as np
from numpy.testing import assert_allclose

import agepost


def test_age_and_lookback_shapes(capsys):
    ages = agepost.age_gyr(h0=[60.0, 70.0, 80.0], omega_m=0.3)
    lookback = agepost.lookback_gyr([0.5, 1.0], h0=[60.0, 70.0, 80.0], omega_m=0.3)
    assert ages.shape == (3,) and lookback.shape == (3, 2)
    # Ages scale exactly as 1/H0 when only H0 changes and radiation is off (Friedmann equation).
    flat = agepost.age_gyr(h0=[60.0, 80.0], omega_m=0.3, radiation="none")
    assert_allclose(flat[0] / flat[1], 80.0 / 60.0, rtol=1e-12)
    assert capsys.readouterr() == ("", "")


def test_summarise_chains_on_demo(capsys):
    result = agepost.summarise_chains(
        "sample_chains/lantern_lcdm_*.txt", [1.0], weight_column="weight"
    )
    table = agepost.summary_table(result)
    assert {"age", "lookback_z1", "H0", "Omega_m"} <= set(table.index)
    assert np.all(table["equal_tail_0.68_lo"] < table["median"])
    assert capsys.readouterr() == ("", "")
