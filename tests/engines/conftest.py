"""Samples files written through the real derive-pass tally, for tests of the passes."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from agepost.chains import SampleSet
from agepost.derive import DerivedSamples
from agepost.engines.derive_pass import RunTally, chunk_result
from agepost.report.samples_file import DerivedSamplesWriter


def write_samples(
    path: Path,
    quantities: dict[str, np.ndarray],
    weights: np.ndarray,
    chain_id: np.ndarray,
    *,
    chunk_rows: int,
    exclusion: np.ndarray | None = None,
) -> RunTally:
    """Write ``derived/<name>`` columns (plus an H0 parameter) chunk by chunk; the tally."""
    n = weights.size
    exclusion = np.zeros(n, dtype=np.int8) if exclusion is None else exclusion
    frame = pd.DataFrame(quantities)
    with DerivedSamplesWriter(path) as writer:
        tally = RunTally(writer)
        for start in range(0, n, chunk_rows):
            rows = slice(start, start + chunk_rows)
            samples = SampleSet(
                parameters=pd.DataFrame({"H0": np.full(len(weights[rows]), 70.0)}),
                weights=weights[rows],
                chain_id=chain_id[rows],
                source=str(path),
            )
            derived = DerivedSamples(
                quantities=frame.iloc[rows].reset_index(drop=True),
                exclusion=exclusion[rows],
                weights=weights[rows],
                chain_id=chain_id[rows],
                redshifts=(),
                filled={},
            )
            tally.add(chunk_result(samples, derived))
    return tally


@pytest.fixture
def samples_writer(tmp_path):
    """Factory: ``write(quantities, weights, chain_id, chunk_rows=...) -> (path, tally)``."""

    def write(quantities, weights, chain_id, *, chunk_rows=1000, exclusion=None):
        path = tmp_path / f"samples_{len(list(tmp_path.iterdir()))}.h5"
        tally = write_samples(
            path, quantities, weights, chain_id, chunk_rows=chunk_rows, exclusion=exclusion
        )
        return path, tally

    return write
