"""Write derived samples to HDF5 beside the summary (never into the input file).

Layout (our own): datasets ``parameters/<name>`` and ``derived/<name>`` of shape
(n_samples,), ``weight``, ``chain_id`` and ``exclusion`` (int8 reason code, 0 = kept, the
meaning of every code in the attribute ``exclusion_codes``); units in each dataset's
``unit`` attribute; the agepost version in the file's ``agepost_version`` attribute.
Rows can be appended chunk by chunk, so a chain larger than memory is written in pieces.
"""

from __future__ import annotations

import json
from pathlib import Path

import h5py
import numpy as np
import pandas as pd
from numpy.typing import NDArray

from agepost import __version__
from agepost.exclusions import Exclusion

SAMPLES_FILE = "samples.h5"
_UNITS = {"H0": "km/s/Mpc", "m_nu": "eV"}


class DerivedSamplesWriter:
    """Append rows of inputs, derived quantities, weights, chain ids and reasons to HDF5.

    Use as a context manager on a path (normally a temporary one from
    :meth:`agepost.outputs.OutputFolder.atomic_path`).
    """

    def __init__(self, path: str | Path) -> None:
        self._file = h5py.File(path, "w")
        self._file.attrs["agepost_version"] = __version__
        self._file.attrs["exclusion_codes"] = json.dumps({int(c): c.description for c in Exclusion})
        self.n_rows = 0

    def __enter__(self) -> DerivedSamplesWriter:
        return self

    def __exit__(self, *exc: object) -> None:
        self._file.close()

    def append(
        self,
        parameters: pd.DataFrame,
        derived: pd.DataFrame,
        *,
        weights: NDArray,
        chain_id: NDArray,
        exclusion: NDArray,
    ) -> None:
        """Add rows; every array has the same length."""
        columns = {
            f"parameters/{name}": parameters[name].to_numpy(float) for name in parameters.columns
        }
        columns |= {f"derived/{name}": derived[name].to_numpy(float) for name in derived.columns}
        columns |= {
            "weight": np.asarray(weights, float),
            "chain_id": np.asarray(chain_id, np.int64),
            "exclusion": np.asarray(exclusion, np.int8),
        }
        n = len(derived)
        for name, values in columns.items():
            if name not in self._file:
                dataset = self._file.create_dataset(
                    name,
                    shape=(0,),
                    maxshape=(None,),
                    dtype=values.dtype,
                    chunks=(min(max(n, 1), 1 << 16),),
                )
                if name.startswith("derived/"):
                    dataset.attrs["unit"] = "Gyr"
                elif name.startswith("parameters/"):
                    dataset.attrs["unit"] = _UNITS.get(name.split("/", 1)[1], "")
            dataset = self._file[name]
            dataset.resize((self.n_rows + n,))
            dataset[self.n_rows :] = values
        self.n_rows += n
