"""``agepost run`` and ``agepost derive`` end to end on small chains written in tmp_path."""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

import numpy as np
import pytest

from agepost.cli import main

REPOSITORY = Path(__file__).resolve().parents[2]


def write_chain(path: Path, n: int = 4000, *, seed: int = 3, h_column: bool = False) -> Path:
    rng = np.random.default_rng(seed)
    h0 = rng.normal(68.0, 0.8, n)
    omega_m = rng.normal(0.31, 0.01, n)
    weight = rng.integers(1, 4, n)
    first = "h" if h_column else "H0"
    values = h0 / 100 if h_column else h0
    np.savetxt(path, np.column_stack([weight, values, omega_m]), header=f"weight {first} Omega_m",
               comments="", fmt=["%d", "%.6f", "%.6f"])
    return path


def checksum(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def test_derive_writes_every_output_and_json(tmp_path, capsys):
    chain = write_chain(tmp_path / "chain.txt")
    before = checksum(chain)
    out = tmp_path / "out"
    code = main(["derive", str(chain), "--out", str(out), "--z", "0.5,2", "--json", "--quiet"])
    assert code == 0, capsys.readouterr().err
    record = json.loads(capsys.readouterr().out)
    assert checksum(chain) == before  # the input is never modified
    for name in ("summary.json", "summary.csv", "summary.tex", "corner.png", "corner.pdf", "samples.h5",
                 "provenance.json", "age_redshift.png", "age_redshift.pdf", "marginal_age.png",
                 "marginal_lookback_z0.5.pdf", "marginal_lookback_z2.png", "report.html"):
        assert (out / name).stat().st_size > 0, name
    report = (out / "report.html").read_text()
    assert report.count("data:image/png;base64,") == 5  # corner, band, three marginals
    assert "http" not in report.replace("http-equiv", "") and "<script" not in report
    assert json.loads((out / "summary.json").read_text()) == record
    assert set(record["quantities"]) == {"age", "lookback_z0.5", "cosmic_time_z0.5", "lookback_z2",
                                         "cosmic_time_z2"}
    age = record["quantities"]["age"]
    for key in ("mean", "median", "std", "intervals"):
        assert key in age
    assert set(age["intervals"]) == {"0.68", "0.95"}
    lo, hi = age["intervals"]["0.68"]["equal_tail"]
    assert lo < age["median"] < hi
    assert record["n_samples"] == 4000 and record["n_excluded"] == 0
    assert record["model"]["assumed_for_missing_parameters"]["Omega_k"] == 0.0
    assert not list(out.glob("*.part"))


def test_weighted_age_interval_matches_a_direct_calculation(tmp_path, capsys):
    # Independent check: derive the ages with the notebook API, expand the multiplicities
    # into repeated rows, and take plain (unweighted) percentiles with numpy.
    import agepost

    chain = write_chain(tmp_path / "chain.txt", n=3000)
    assert main(["derive", str(chain), "--out", str(tmp_path / "o"), "--json", "--quiet"]) == 0
    record = json.loads(capsys.readouterr().out)
    weight, h0, omega_m = np.loadtxt(chain, skiprows=1, unpack=True)
    ages = np.repeat(agepost.age_gyr(h0=h0, omega_m=omega_m), weight.astype(int))
    median = record["quantities"]["age"]["median"]
    # Tolerance: a fraction of the spread, far below the width yet above interpolation-rule
    # differences between a weighted rule and numpy's default on expanded rows.
    assert abs(median - np.median(ages)) < 0.02 * ages.std()
    lo, hi = record["quantities"]["age"]["intervals"]["0.95"]["equal_tail"]
    assert abs(lo - np.percentile(ages, 2.5)) < 0.05 * ages.std()
    assert abs(hi - np.percentile(ages, 97.5)) < 0.05 * ages.std()
    # The weighted mean is exactly the mean of the expanded rows.
    assert abs(record["quantities"]["age"]["mean"] - ages.mean()) < 1e-9


def test_h_column_and_existing_outputs(tmp_path, capsys):
    chain = write_chain(tmp_path / "chain.txt", h_column=True)
    out = tmp_path / "out"
    assert main(["derive", str(chain), "--out", str(out), "--quiet"]) == 0
    first = (out / "summary.json").read_text()
    capsys.readouterr()
    assert main(["derive", str(chain), "--out", str(out), "--quiet"]) == 2
    assert "already exists" in capsys.readouterr().err
    assert (out / "summary.json").read_text() == first  # nothing overwritten
    assert main(["derive", str(chain), "--out", str(out), "--quiet", "--force"]) == 0


def test_run_config_with_flag_override_recorded(tmp_path, capsys):
    write_chain(tmp_path / "a.txt", seed=1)
    write_chain(tmp_path / "b.txt", seed=2)
    config = tmp_path / "job.toml"
    config.write_text(
        '[chain]\nfiles = ["*.txt"]\nweight_column = "weight"\nburn_in = 0.1\n'
        '[model]\nradiation = "massless"\n[quantities]\nredshifts = [1]\n[output]\nfolder = "res"\n'
    )
    assert main(["run", str(config), "--quiet"]) == 0
    summary = json.loads((tmp_path / "res" / "summary.json").read_text())
    assert summary["n_chains"] == 2 and summary["n_samples"] == 2 * 3600
    assert summary["model"]["radiation"] == "massless"
    assert "rhat" in summary["quantities"]["age"]
    capsys.readouterr()
    assert main(["derive", "--config", str(config), "--burn-in", "0.5", "--out", str(tmp_path / "r2"), "--quiet"]) == 0
    provenance = json.loads((tmp_path / "r2" / "provenance.json").read_text())
    assert provenance["setting_sources"]["chain.burn_in"] == "command line"
    assert provenance["setting_sources"]["chain.weight_column"] == "config"
    assert len(provenance["inputs"]) == 2 and len(provenance["inputs"][0]["sha256"]) == 64


@pytest.mark.parametrize(
    ("content", "expected"),
    [
        ("", "empty"),
        ("weight H0 Omega_x\n1 70 0.3\n", "Omega_m"),
        ("weight H0 Omega_m\n-1 70 0.3\n2 70 0.3\n", "weight"),
    ],
)
def test_bad_chains_exit_2_with_one_line(tmp_path, capsys, content, expected):
    chain = tmp_path / "bad.txt"
    chain.write_text(content)
    code = main(["derive", str(chain), "--out", str(tmp_path / "out")])
    err = capsys.readouterr().err
    assert code == 2
    assert expected.lower() in err.lower() and "Traceback" not in err
    assert not (tmp_path / "out" / "summary.json").exists()


def test_all_samples_excluded_is_an_error_without_outputs(tmp_path, capsys):
    chain = tmp_path / "closed.txt"
    chain.write_text("H0 Omega_m Omega_k\n70 0.3 -1.5\n71 0.3 -1.6\n")
    assert main(["derive", str(chain), "--out", str(tmp_path / "out")]) == 2
    err = capsys.readouterr().err
    assert "no_big_bang" in err and "excluded" in err
    assert not (tmp_path / "out").exists() or not any((tmp_path / "out").iterdir())


def test_demo_config_runs(tmp_path, capsys):
    assert main(["run", str(REPOSITORY / "configs" / "demo.toml"), "--out", str(tmp_path / "demo"), "--quiet"]) == 0
    summary = json.loads((tmp_path / "demo" / "summary.json").read_text())
    assert 13.0 < summary["quantities"]["age"]["median"] < 14.5
