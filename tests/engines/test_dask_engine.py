"""The Dask engine: same results as the local engine, clear failures, faults survived.

The clusters here are local ones started by the tests (two single-threaded worker
processes); the fault tests kill one of those worker processes by its id.
"""

from __future__ import annotations

import dataclasses
import logging
import os
import signal
import sys
from pathlib import Path

import dask
import distributed
import h5py
import numpy as np
import pytest
from numpy.testing import assert_allclose

import agepost.engines.dask_engine as dask_engine
from agepost.chains import ReadOptions
from agepost.cli import main
from agepost.config import RunSettings
from agepost.derive import ModelSettings
from agepost.engines import open_engine
from agepost.engines.streamed import StreamSettings
from agepost.errors import ComputationError, ConfigError
from agepost.pipeline import run_to_folder, summary_record
from agepost.stats.intervals import hpd_sorted
from agepost.stats.quantiles import quantiles_sorted, sort_weighted

MODEL = ModelSettings(
    radiation="none", defaults={"omega_k": 0.0, "w0": -1.0, "wa": 0.0, "m_nu": 0.0, "n_eff": 3.044}
)


def start_cluster() -> distributed.LocalCluster:
    with dask.config.set({dask_engine.TRIM_SETTING: None}):  # as the engine starts its own
        return distributed.LocalCluster(
            n_workers=2,
            threads_per_worker=1,
            processes=True,
            dashboard_address=":0",
            silence_logs=logging.ERROR,
        )


@pytest.fixture(scope="module")
def cluster():
    with start_cluster() as running:
        yield running


def write_hdf5_chain(path: Path, n: int, *, seed: int, names=("weight", "H0", "Omega_m")) -> str:
    rng = np.random.default_rng(seed)
    columns = {
        "weight": rng.integers(1, 4, n).astype(float),
        "H0": rng.normal(67.5, 0.6, n),
        "Omega_m": rng.normal(0.31, 0.01, n),
        "w": rng.normal(-1, 0.05, n),
    }
    with h5py.File(path, "w") as handle:
        data = handle.create_dataset("chain", data=np.column_stack([columns[k] for k in names]))
        data.attrs["names"] = list(names)
    return str(path)


def settings_for(paths, out: Path, **changes) -> RunSettings:
    base = RunSettings(
        chain_files=tuple(paths),
        read=ReadOptions(),
        model=MODEL,
        redshifts=(),
        output=out,
        figures=(),
        report=False,
    )
    return dataclasses.replace(base, **changes)


@pytest.mark.slow
def test_local_and_dask_agree_on_a_multi_million_row_chain(tmp_path, cluster):
    paths = [write_hdf5_chain(tmp_path / f"big_{k}.h5", 1_000_000, seed=k) for k in range(2)]
    stream = StreamSettings(in_memory_values=0, chain_memory_rows=100_000)
    records = {}
    for name, scheduler in (("local", None), ("dask", cluster.scheduler_address)):
        settings = settings_for(paths, tmp_path / name)
        with open_engine(name, scheduler=scheduler) as engine:
            summary = run_to_folder(settings, engine, stream=stream, chunk_rows=500_000)
        assert summary.method == "streamed"
        records[name] = summary_record(summary, settings)
    local, spread = records["local"], records["dask"]
    assert local["n_samples"] == spread["n_samples"] == 2_000_000
    with h5py.File(tmp_path / "local" / "samples.h5") as handle:
        age, weight = handle["derived/age"][:], handle["weight"][:]
    sample = sort_weighted(age, weight)
    for level, key in ((0.68, "0.68"), (0.95, "0.95")):
        exact = {
            "equal_tail": quantiles_sorted(sample, [(1 - level) / 2, (1 + level) / 2]),
            "hpd": hpd_sorted(sample, level),
        }
        for record in (local, spread):
            interval = record["quantities"]["age"]["intervals"][key]
            # The stated bound: quantiles and HPD ends exact under the in-memory rule, up
            # to rounding of sums taken in another order.
            assert_allclose(interval["equal_tail"], exact["equal_tail"], rtol=1e-12)
            assert_allclose(interval["hpd"], exact["hpd"], rtol=1e-12)
    for record in (local, spread):
        assert_allclose(
            record["quantities"]["age"]["median"], quantiles_sorted(sample, 0.5), rtol=1e-12
        )
    # Same pieces combined in the same order: the two engines agree to the last bit.
    assert local["quantities"] == spread["quantities"]
    assert local["parameters"] == spread["parameters"]


def test_text_chain_through_dask_equals_local_and_batch_runs_share_the_cluster(
    tmp_path, cluster, capsys
):
    rng = np.random.default_rng(3)
    options = '[model]\nradiation = "none"\n[quantities]\nredshifts = [1]\n'
    options += "[output]\nfigures = []\nreport = false\n"
    for k in range(3):
        np.savetxt(
            tmp_path / f"c{k}.txt",
            np.column_stack([rng.normal(67, 0.5, 1000), rng.normal(0.3, 0.01, 1000)]),
            header="H0 Omega_m",
            comments="",
        )
        (tmp_path / f"one_{k}.toml").write_text(f'[chain]\nfiles = ["c{k}.txt"]\n' + options)
    (tmp_path / "all.toml").write_text('[chain]\nfiles = ["c*.txt"]\n' + options)
    dask_flags = ["--engine", "dask", "--scheduler", cluster.scheduler_address]
    run = ["run", str(tmp_path / "all.toml"), "--quiet", "--json"]
    assert main([*run, "--out", str(tmp_path / "local")]) == 0
    local = capsys.readouterr().out
    assert main([*run, "--out", str(tmp_path / "dask"), *dask_flags]) == 0
    assert capsys.readouterr().out == local  # blocks read here, derived on the workers
    batch = ["run", str(tmp_path / "one_*.toml"), "--out", str(tmp_path / "batch"), "--quiet"]
    assert main([*batch, *dask_flags, "--jobs", "3"]) == 0
    assert all((tmp_path / "batch" / f"one_{k}" / "summary.json").exists() for k in range(3))


def _kill_a_busy_worker(engine_client) -> None:
    """SIGKILL one worker process of the test's own cluster that is running a task."""
    pids = engine_client.run(os.getpid)
    busy = [address for address, keys in engine_client.processing().items() if keys]
    os.kill(pids[(busy or list(pids))[0]], signal.SIGKILL)


def _run_with_a_kill(tmp_path, monkeypatch, scheduler, out):
    paths = [write_hdf5_chain(tmp_path / "chain.h5", 200_000, seed=9)]
    original, calls = dask_engine._result, []

    def result_then_kill(future):
        value = original(future)
        calls.append(1)
        if len(calls) == 2:  # mid-run: some chunks done, others running or queued
            _kill_a_busy_worker(future.client)
        return value

    monkeypatch.setattr(dask_engine, "_result", result_then_kill)
    settings = settings_for(paths, out, redshifts=(1.0,))
    with open_engine("dask", scheduler=scheduler) as engine:
        return run_to_folder(settings, engine, chunk_rows=20_000)


@pytest.mark.slow
def test_a_killed_worker_has_its_tasks_rerun_and_the_run_is_whole(tmp_path, monkeypatch, cluster):
    # The cluster's nanny starts a new worker; the lost tasks run again on either worker.
    summary = _run_with_a_kill(tmp_path, monkeypatch, cluster.scheduler_address, tmp_path / "out")
    assert summary.overview.n_samples == 200_000  # every chunk, none lost with the worker
    with h5py.File(tmp_path / "out" / "samples.h5") as handle:
        assert handle["derived/age"].shape == (200_000,)
        assert np.all(np.isfinite(handle["derived/age"][:]))


@pytest.mark.slow
def test_a_worker_death_the_scheduler_gives_up_on_is_a_clear_failure(tmp_path, monkeypatch):
    with dask.config.set({"distributed.scheduler.allowed-failures": 0}), start_cluster() as own:
        with pytest.raises(ComputationError, match="workers died|cluster was lost") as caught:
            _run_with_a_kill(tmp_path, monkeypatch, own.scheduler_address, tmp_path / "out")
    assert "nothing was written" in str(caught.value)
    assert not (tmp_path / "out").exists() or not any((tmp_path / "out").iterdir())


def test_unreachable_or_malformed_scheduler_exits_2(tmp_path, capsys, monkeypatch):
    monkeypatch.setattr(dask_engine, "CONNECT_TIMEOUT_S", 1)
    chain = write_hdf5_chain(tmp_path / "c.h5", 100, seed=1)
    for address, expected in (
        ("tcp://127.0.0.1:9", "cannot reach the Dask scheduler"),
        ("nowhere://", "scheduler"),
    ):
        code = main(
            [
                "derive",
                chain,
                "--out",
                str(tmp_path / "o"),
                "--engine",
                "dask",
                "--scheduler",
                address,
                "--quiet",
            ]
        )
        err = capsys.readouterr().err
        assert code == 2 and expected in err and "Traceback" not in err
    assert not (tmp_path / "o").exists()


def test_without_dask_the_flag_names_the_extra(tmp_path, capsys, monkeypatch):
    monkeypatch.setitem(sys.modules, "distributed", None)  # import fails as if not installed
    with pytest.raises(ConfigError, match=r"pip install 'agepost\[dask\]'"):
        open_engine("dask")
    chain = write_hdf5_chain(tmp_path / "c.h5", 100, seed=1)
    assert main(["derive", chain, "--out", str(tmp_path / "o"), "--engine", "dask"]) == 2
    assert "agepost[dask]" in capsys.readouterr().err


def test_columns_disagreeing_across_files_exit_2_on_dask(tmp_path, capsys, cluster):
    first = write_hdf5_chain(tmp_path / "a.h5", 500, seed=1)
    second = write_hdf5_chain(
        tmp_path / "b.h5", 500, seed=2, names=("weight", "H0", "Omega_m", "w")
    )
    code = main(
        [
            "derive",
            first,
            second,
            "--out",
            str(tmp_path / "o"),
            "--engine",
            "dask",
            "--scheduler",
            cluster.scheduler_address,
            "--quiet",
        ]
    )
    err = capsys.readouterr().err
    assert code == 2 and "same parameters" in err and "Traceback" not in err
    assert not (tmp_path / "o").exists() or not any((tmp_path / "o").iterdir())


def test_a_local_cluster_is_started_and_closed(tmp_path):
    chain = write_hdf5_chain(tmp_path / "c.h5", 2000, seed=4)
    with open_engine("dask", workers=1) as engine:
        record = engine.describe()
        summary = run_to_folder(settings_for([chain], tmp_path / "o"), engine)
    assert record["local_cluster"] and record["workers"] == 1
    assert engine._cluster.status.name == "closed"
    assert summary.overview.n_samples == 2000
