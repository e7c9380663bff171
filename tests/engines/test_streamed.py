"""A run summarised by passes over samples.h5 reports what the in-memory run reports."""

from __future__ import annotations

import dataclasses
import json
from pathlib import Path

import h5py
import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy.signal import lfilter

from agepost.chains import ReadOptions
from agepost.config import RunSettings
from agepost.derive import ModelSettings
from agepost.engines.local import LocalEngine
from agepost.engines.streamed import StreamSettings
from agepost.pipeline import run_to_folder, summary_record

#: Closed-form physics (no radiation, no neutrinos) keeps derivation fast.
MODEL = ModelSettings(
    radiation="none", defaults={"omega_k": 0.0, "w0": -1.0, "wa": 0.0, "m_nu": 0.0, "n_eff": 3.044}
)


def write_chains(folder: Path, n_per_chain: int, *, n_chains: int = 3, seed: int = 5) -> list[str]:
    """Autocorrelated H0 (AR(1), rho 0.9), independent Omega_m, multiplicities; a few rows
    with no big bang (Omega_k far below zero) and a few with zero weight."""
    rng = np.random.default_rng(seed)
    paths = []
    for c in range(n_chains):
        h0 = 67.5 + 0.6 * lfilter([np.sqrt(1 - 0.81)], [1, -0.9], rng.normal(size=n_per_chain))
        omega_m = rng.normal(0.31, 0.01, n_per_chain)
        omega_k = np.where(rng.uniform(size=n_per_chain) < 0.002, -3.0, 0.0)
        weight = rng.integers(0, 4, n_per_chain).astype(float)
        path = folder / f"chain_{c}.h5"
        with h5py.File(path, "w") as handle:
            data = handle.create_dataset(
                "chain", data=np.column_stack([weight, h0, omega_m, omega_k])
            )
            data.attrs["names"] = ["weight", "H0", "Omega_m", "Omega_k"]
        paths.append(str(path))
    return paths


def run(paths, folder, stream, *, redshifts=(1.0,), chunk_rows=20_000, figures=("corner",)):
    settings = RunSettings(
        chain_files=tuple(paths),
        read=ReadOptions(),
        model=MODEL,
        redshifts=redshifts,
        output=folder,
        figures=figures,
        report=False,
    )
    with LocalEngine() as engine:
        summary = run_to_folder(settings, engine, stream=stream, chunk_rows=chunk_rows)
    return summary, summary_record(summary, settings)


def compare(exact, streamed, path=""):
    """Every number equal to rounding, except Monte Carlo errors (estimates, see below)."""
    if isinstance(exact, dict):
        assert set(exact) == set(streamed), path
        for key in exact:
            compare(exact[key], streamed[key], f"{path}/{key}")
    elif isinstance(exact, list):
        assert len(exact) == len(streamed), path
        for a, b in zip(exact, streamed, strict=True):
            compare(a, b, path)
    elif isinstance(exact, float) and "/mcse/" in path:
        # MCSE: the spread Q(b) - Q(a) is read from the fine grid (density flat in a bin)
        # and batch HPD ends from binned batches: estimates of an error, agreeing to ~15%.
        assert_allclose(streamed, exact, rtol=0.15, atol=1e-12, err_msg=path)
    elif isinstance(exact, float) and path.endswith("/rhat"):
        assert_allclose(streamed, exact, rtol=1e-5, err_msg=path)  # grid ranks (see chainstats)
    elif isinstance(exact, float):
        # Rounding of sums taken in another order; nothing else differs.
        assert_allclose(streamed, exact, rtol=1e-10, atol=1e-300, err_msg=path)
    else:
        assert exact == streamed, path


def test_streamed_summaries_equal_the_in_memory_ones(tmp_path):
    paths = write_chains(tmp_path, 30_000)
    exact_summary, exact = run(paths, tmp_path / "memory", StreamSettings())
    streamed_summary, streamed = run(
        paths,
        tmp_path / "streamed",
        StreamSettings(in_memory_values=0, window_rows=5_000, budget_rows=40_000),
    )
    assert (exact_summary.method, streamed_summary.method) == ("in memory", "streamed")
    assert exact["n_excluded"] > 0 and exact["excluded"] == {"no_big_bang": exact["n_excluded"]}
    compare(exact, streamed)
    with (
        h5py.File(tmp_path / "memory" / "samples.h5") as a,
        h5py.File(tmp_path / "streamed" / "samples.h5") as b,
    ):
        assert np.array_equal(a["derived/age"][:], b["derived/age"][:], equal_nan=True)
    provenance = json.loads((tmp_path / "streamed" / "provenance.json").read_text())
    assert provenance["computation"]["statistics"] == "streamed"
    assert (tmp_path / "streamed" / "corner.png").stat().st_size > 0


def test_long_chains_use_batch_means_and_stay_close(tmp_path):
    paths = write_chains(tmp_path, 40_000, n_chains=2)
    _, exact = run(paths, tmp_path / "memory", StreamSettings(), redshifts=())
    _, streamed = run(
        paths,
        tmp_path / "streamed",
        StreamSettings(in_memory_values=0, chain_memory_rows=10_000),
        redshifts=(),
    )
    age, age_streamed = exact["quantities"]["age"], streamed["quantities"]["age"]
    assert_allclose(age_streamed["median"], age["median"], rtol=1e-12)
    assert_allclose(
        age_streamed["intervals"]["0.95"]["hpd"], age["intervals"]["0.95"]["hpd"], rtol=1e-12
    )
    # Batch means (B = 200 rows, 200 batches per chain) against Sokal's windowed
    # autocorrelation: two estimators of the same tau, each good to ~10-20% here.
    assert_allclose(age_streamed["ess_autocorr"], age["ess_autocorr"], rtol=0.35)


def test_a_constant_quantity_is_summarised_like_in_memory(tmp_path):
    path = tmp_path / "flat.h5"
    weights = np.arange(1.0, 2001.0) % 3
    with h5py.File(path, "w") as handle:
        data = handle.create_dataset(
            "chain", data=np.column_stack([weights, np.full(2000, 70.0), np.full(2000, 0.3)])
        )
        data.attrs["names"] = ["weight", "H0", "Omega_m"]
    # No figure: a corner plot of constant columns has nothing to draw (refused).
    _, exact = run([str(path)], tmp_path / "memory", StreamSettings(), chunk_rows=700, figures=())
    _, streamed = run(
        [str(path)],
        tmp_path / "streamed",
        StreamSettings(in_memory_values=0),
        chunk_rows=700,
        figures=(),
    )
    compare(exact, streamed)
    assert any("zero spread" in w for w in streamed["warnings"])


@pytest.mark.parametrize("stream", [StreamSettings(), StreamSettings(in_memory_values=0)])
def test_reader_notes_and_counts_match_the_whole_file_reader(tmp_path, stream):
    paths = write_chains(tmp_path, 5_000, n_chains=2)
    summary, record = run(paths, tmp_path / "out", stream, chunk_rows=1_500)
    assert record["n_samples"] == 10_000 and record["n_chains"] == 2
    assert summary.overview.source == ", ".join(f"{p}:chain" for p in paths)
    assert record["n_kept"] == 10_000 - record["n_excluded"]
    dataclasses.asdict(summary.overview)  # plain data, for records
