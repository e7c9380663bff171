"""Batch mode: many inputs, one folder each, one index; a failure stays with its input."""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

import numpy as np

from agepost.cli import main
from agepost.engines.batch import BatchEntry, folder_names, index_csv


def write_chain(path: Path, *, h0: float, n: int = 2000, seed: int = 0) -> Path:
    rng = np.random.default_rng(seed)
    np.savetxt(
        path,
        np.column_stack([rng.normal(h0, 0.5, n), rng.normal(0.31, 0.01, n)]),
        header="H0 Omega_m",
        comments="",
    )
    return path


def write_config(path: Path, chain: str) -> Path:
    path.write_text(
        f'[chain]\nfiles = ["{chain}"]\n[model]\nradiation = "none"\n'
        "[quantities]\nredshifts = [1]\n[output]\nfigures = []\n"
    )
    return path


def read_index(folder: Path) -> tuple[list[dict], dict]:
    rows = list(csv.DictReader(io.StringIO((folder / "index.csv").read_text())))
    return rows, json.loads((folder / "index.json").read_text())


def test_run_with_a_glob_of_configs_and_one_broken_input(tmp_path, capsys):
    for k, h0 in enumerate((66.0, 70.0)):
        write_chain(tmp_path / f"chain_{k}.txt", h0=h0, seed=k)
        write_config(tmp_path / f"job_{k}.toml", f"chain_{k}.txt")
    write_config(tmp_path / "job_2.toml", "missing.txt")  # fails: no such chain file
    out = tmp_path / "batch"
    code = main(["run", str(tmp_path / "job_*.toml"), "--out", str(out), "--quiet"])
    assert code == 2  # one input failed
    rows, record = read_index(out)
    status = {run["input"].rsplit("/", 1)[1]: run["status"] for run in record["runs"]}
    assert status == {"job_0.toml": "ok", "job_1.toml": "ok", "job_2.toml": "failed"}
    failed = next(run for run in record["runs"] if run["status"] == "failed")
    assert "missing.txt" in failed["message"] and "no such chain file" in failed["message"]
    for name in ("job_0", "job_1"):
        summary = json.loads((out / name / "summary.json").read_text())
        assert summary["n_samples"] == 2000
    assert not (out / "job_2").exists() or not any((out / "job_2").iterdir())
    ages = {
        row["input"].rsplit("/", 1)[1]: float(row["median"])
        for row in rows
        if row["quantity"] == "age"
    }
    # Higher H0, younger universe (age scales as 1/H0 at fixed Omega_m: 66/70 of the other).
    assert abs(ages["job_1.toml"] / ages["job_0.toml"] - 66.0 / 70.0) < 0.01
    assert {row["quantity"] for row in rows if row["status"] == "ok"} >= {
        "age",
        "lookback_z1",
        "H0",
    }
    assert "failed" in capsys.readouterr().out


def test_derive_batch_runs_each_chain_separately(tmp_path, capsys):
    for k in range(3):
        write_chain(tmp_path / f"run{k}.txt", h0=67.0 + k, seed=k)
    (tmp_path / "run3.txt").write_text("H0 Omega_m\n70 abc\n")  # corrupt
    config = write_config(tmp_path / "each.toml", "run*.txt")  # no figures: quicker
    out = tmp_path / "each"
    derive = ["derive", "--config", str(config), "--batch", "--out", str(out), "--quiet"]
    assert main([*derive, "--json"]) == 2
    record = json.loads(capsys.readouterr().out)
    assert [run["status"] for run in record["runs"]] == ["ok", "ok", "ok", "failed"]
    assert [Path(run["output"]).name for run in record["runs"]] == ["run0", "run1", "run2", "run3"]
    assert all(run["n_samples"] == 2000 for run in record["runs"][:3])
    assert "run3.txt" in record["runs"][3]["message"]
    # An existing index is not overwritten without --force.
    assert main(derive) == 2
    assert "index.csv already exists" in capsys.readouterr().err


def test_folder_names_stay_distinct_and_failed_rows_carry_their_message():
    assert folder_names(["a/job.toml", "b/job.toml", "c/other.toml", "d/job.toml"]) == [
        "job",
        "job-2",
        "other",
        "job-3",
    ]
    text = index_csv([BatchEntry("x.toml", Path("out/x"), "failed", "broken, badly", None)])
    (row,) = csv.DictReader(io.StringIO(text))
    assert row["status"] == "failed" and row["message"] == "broken, badly" and row["quantity"] == ""
