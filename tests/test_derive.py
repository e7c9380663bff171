"""derive: names of the quantities, repeated redshifts, defaults filled and reported."""

from __future__ import annotations

import numpy as np
import pandas as pd

from agepost.chains import SampleSet
from agepost.derive import derive, quantity_names


def test_names_and_repeats():
    samples = SampleSet(
        parameters=pd.DataFrame({"H0": [70.0], "Omega_m": [0.3]}),
        weights=np.ones(1),
        chain_id=np.zeros(1, int),
    )
    derived = derive(samples, [1, 1.0, 0.25])
    assert list(derived.quantities.columns) == quantity_names([1, 0.25])
    assert derived.redshifts == (1.0, 0.25)
    assert derived.filled == {"Omega_k": 0.0, "w0": -1.0, "wa": 0.0, "m_nu": 0.06, "N_eff": 3.044}
