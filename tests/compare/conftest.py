"""Small runs for the comparison tests: in memory, as chain files, and as run folders."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from agepost.compare.runs import LoadedRun
from agepost.derive import ModelSettings
from agepost.report.samples_file import DerivedSamplesWriter


def loaded_run(
    parameters: dict,
    quantities: dict,
    *,
    weights=None,
    chain_id=None,
    model: ModelSettings | None = None,
    label: str = "run",
) -> LoadedRun:
    """A LoadedRun built straight from arrays (no files)."""
    frame = pd.DataFrame(parameters)
    n = len(frame) if len(frame.columns) else len(next(iter(quantities.values())))
    return LoadedRun(
        label=label,
        source=f"memory:{label}",
        parameters=frame,
        quantities=pd.DataFrame(quantities),
        weights=np.ones(n) if weights is None else np.asarray(weights, float),
        chain_id=np.zeros(n, np.int64) if chain_id is None else np.asarray(chain_id, np.int64),
        model=model or ModelSettings(),
        fixed={},
        redshifts=(),
        n_rows=n,
        n_excluded=0,
        input_files=(),
    )


@pytest.fixture
def make_run():
    return loaded_run


def write_chain(path: Path, h0, omega_m, weights=None) -> Path:
    """Text chain with a header row: weight H0 Omega_m."""
    h0 = np.asarray(h0, float)
    omega_m = np.broadcast_to(np.asarray(omega_m, float), h0.shape)
    weights = np.ones_like(h0) if weights is None else np.asarray(weights, float)
    rows = "".join(
        f"{float(w)!r} {float(h)!r} {float(m)!r}\n"
        for w, h, m in zip(weights, h0, omega_m, strict=True)
    )
    path.write_text("weight H0 Omega_m\n" + rows)
    return path


@pytest.fixture
def chain_file(tmp_path):
    """Factory: a flat LambdaCDM chain of ``n`` Gaussian H0 draws (invented 'Lantern' values)."""

    def make(
        name: str, *, h0_mean=68.0, h0_sd=1.0, omega_m=0.31, omega_m_sd=0.01, n=600, seed=1
    ) -> Path:
        rng = np.random.default_rng(seed)
        h0 = rng.normal(h0_mean, h0_sd, n)
        om = rng.normal(omega_m, omega_m_sd, n) if omega_m_sd else np.full(n, omega_m)
        return write_chain(tmp_path / name, h0, om)

    return make


@pytest.fixture
def run_folder(tmp_path):
    """Factory: a run folder (samples.h5 + summary.json) holding the given derived columns."""

    def make(name: str, derived: dict, *, h0=None, radiation="none") -> Path:
        folder = tmp_path / name
        folder.mkdir()
        n = len(next(iter(derived.values())))
        h0 = np.full(n, 70.0) if h0 is None else np.asarray(h0, float)
        parameters = pd.DataFrame({"H0": h0, "Omega_m": np.full(n, 0.3)})
        with DerivedSamplesWriter(folder / "samples.h5") as writer:
            writer.append(
                parameters,
                pd.DataFrame(derived),
                weights=np.ones(n),
                chain_id=np.zeros(n, np.int64),
                exclusion=np.zeros(n, np.int8),
            )
        summary = {
            "redshifts": [],
            "model": {
                "radiation": radiation,
                "t_cmb_k": 2.7255,
                "n_massive": 1,
                "assumed_for_missing_parameters": {"Omega_k": 0.0, "w0": -1.0},
            },
        }
        (folder / "summary.json").write_text(json.dumps(summary))
        return folder

    return make
