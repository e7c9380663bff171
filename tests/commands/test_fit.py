"""``agepost fit`` end to end on small data in tmp_path, then ``agepost run`` on its output."""

from __future__ import annotations

import hashlib
import json
import re
import tomllib
from pathlib import Path

import emcee
import numpy as np
import pytest

from agepost.cli import main
from agepost.physics.background import make_background
from agepost.physics.distances import distance_modulus, hubble_rate
from agepost.physics.times import expansion_history

REPOSITORY = Path(__file__).resolve().parents[2]

PARAMETERS = """
[parameters]
Omega_m = { prior = "uniform", min = 0.05, max = 0.8, start = 0.3 }
H0 = 68.0
"""


def write_inputs(
    folder: Path,
    *,
    parameters: str = PARAMETERS,
    sampler: str = "",
    mu_error: str = "0.1",
    max_steps: int = 3000,
) -> Path:
    """Distance moduli and H(z) from H0 = 68, Omega_m = 0.3 (noise-free) and a fit config."""
    background = make_background(h0=68.0, omega_m=0.3)
    z = np.linspace(0.05, 1.5, 30)
    mu = distance_modulus(
        background, z, expansion_history(background, z, distances=True).comoving_distance_mpc
    )[0]
    rows = [
        f"{a:.4f},{b - 19.3:.5f},{mu_error if i == 7 else '0.1'}"
        for i, (a, b) in enumerate(zip(z, mu, strict=True))
    ]
    (folder / "mu.csv").write_text("z,mu,mu_err\n" + "\n".join(rows) + "\n", encoding="utf-8")
    h = hubble_rate(background, [0.3, 0.9])[0]
    (folder / "hz.txt").write_text(
        f"z H H_err\n0.3 {h[0]:.3f} 3\n0.9 {h[1]:.3f} 5\n", encoding="utf-8"
    )
    config = folder / "fit.toml"
    config.write_text(
        f"""
[[data]]
kind = "distance_modulus"
file = "mu.csv"

[[data]]
kind = "expansion_rate"
file = "hz.txt"
{parameters}
[sampler]
walkers = 8
max_steps = {max_steps}
check_every = 50
seed = 7
{sampler}
[output]
folder = "fitted"
redshifts = [1.0]
""",
        encoding="utf-8",
    )
    return config


def checksum(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def test_fit_writes_chain_summary_and_a_run_config_that_runs(tmp_path, capsys):
    config = write_inputs(tmp_path)
    before = checksum(tmp_path / "mu.csv")
    assert main(["fit", str(config), "--quiet"]) == 0, capsys.readouterr().err
    out = tmp_path / "fitted"
    assert sorted(p.name for p in out.iterdir()) == ["age_run.toml", "chain.h5", "fit_summary.json"]
    assert checksum(tmp_path / "mu.csv") == before  # inputs are never modified
    summary = json.loads((out / "fit_summary.json").read_text())
    assert summary["converged"] is True and summary["warnings"] == []
    assert (
        summary["seeds"]["seed"] == 7
        and summary["steps"] > 50 * summary["autocorrelation_time"]["Omega_m"]
    )
    low, high = summary["parameters"]["Omega_m"]["interval_95"]
    assert low < 0.3 < high  # noise-free data from Omega_m = 0.3
    assert summary["fixed"]["H0"] == 68.0 and summary["data"][0]["points"] == 30
    backend = emcee.backends.HDFBackend(str(out / "chain.h5"), read_only=True)
    assert backend.iteration == summary["steps"]
    run_config = tomllib.loads((out / "age_run.toml").read_text())
    assert (
        run_config["chain"]["names"] == ["Omega_m"] and run_config["chain"]["fixed"]["H0"] == 68.0
    )
    assert run_config["model"]["radiation"] == "full" and run_config["quantities"]["redshifts"] == [
        1.0
    ]
    assert main(["run", str(out / "age_run.toml"), "--quiet"]) == 0, capsys.readouterr().err
    assert (out / "age").is_dir()


@pytest.mark.filterwarnings("default::agepost.fit.products.FitWarning")
def test_existing_outputs_are_kept_unless_forced_and_resume_extends(tmp_path, capsys):
    config = write_inputs(tmp_path, sampler="tau_multiple = 1000.0", max_steps=100)
    assert main(["fit", str(config), "--quiet"]) == 0
    # the command line renders warnings as one stderr line each
    assert (
        "agepost: warning: chain NOT converged: reached max_steps = 100" in capsys.readouterr().err
    )
    out = tmp_path / "fitted"
    assert "# WARNING: chain NOT converged" in (out / "age_run.toml").read_text()
    assert json.loads((out / "fit_summary.json").read_text())["converged"] is False
    first = checksum(out / "chain.h5")
    assert main(["fit", str(config), "--quiet"]) == 2
    assert "already exists; pass --force" in capsys.readouterr().err
    assert checksum(out / "chain.h5") == first
    assert main(["fit", str(config), "--quiet", "--force"]) == 0  # same seed: the same chain again
    assert "NOT converged" in capsys.readouterr().err
    longer = write_inputs(tmp_path, sampler="tau_multiple = 1000.0", max_steps=150)
    assert main(["fit", str(longer), "--resume", "--quiet"]) == 0
    assert "NOT converged" in capsys.readouterr().err
    summary = json.loads((out / "fit_summary.json").read_text())
    assert summary["resumed_from_step"] == 100 and summary["steps"] == 150


@pytest.mark.parametrize(
    ("change", "pattern"),
    [
        ({"mu_error": "-0.1"}, r"mu.csv line 9: column 'mu_err' holds -0.1"),
        (
            {"parameters": PARAMETERS.replace("start = 0.3", "start = 0.9")},
            r"start value 0.9 of Omega_m lies outside its prior range",
        ),
        ({"parameters": "[parameters]\nOmega_m = 0.3\nH0 = 68.0\n"}, "no parameter is free"),
        (
            {"sampler": "walkerz = 3"},
            r"\[sampler\]: unknown key 'walkerz'; did you mean 'walkers'\?",
        ),
    ],
)
def test_bad_input_exits_2_with_one_line(tmp_path, capsys, change, pattern):
    config = write_inputs(tmp_path, **change)
    assert main(["fit", str(config)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith("agepost: error:")
    assert re.search(pattern, err[0]), err[0]
    assert not (tmp_path / "fitted").exists()


def test_covariance_not_positive_definite_exits_2(tmp_path, capsys):
    config = write_inputs(tmp_path)
    covariance = np.eye(30) * 0.01
    covariance[0, 1] = covariance[1, 0] = 0.5
    np.savetxt(tmp_path / "cov.txt", covariance)
    text = config.read_text().replace('file = "mu.csv"', 'file = "mu.csv"\ncovariance = "cov.txt"')
    config.write_text(text)
    assert main(["fit", str(config)]) == 2
    assert "cov.txt: covariance is not positive definite" in capsys.readouterr().err


def test_resume_without_a_chain_is_refused(tmp_path, capsys):
    config = write_inputs(tmp_path)
    assert main(["fit", str(config), "--resume", "--out", str(tmp_path / "elsewhere")]) == 2
    err = capsys.readouterr().err
    assert "--resume:" in err and "does not exist; run without --resume first" in err


def test_demo_config_names_existing_files():
    # the committed demo config reads the committed Lantern files (no fit run here: see docs)
    from agepost.fit.data import load_distance_data
    from agepost.fit.settings import load_fit_config

    config = load_fit_config(REPOSITORY / "configs" / "fit_demo.toml")
    sizes = [
        load_distance_data(
            s.file,
            kind=s.kind,
            columns=s.columns,
            covariance_path=s.covariance,
            covariance_includes_errors=s.covariance_includes_errors,
        ).size
        for s in config.data
    ]
    assert sizes == [200, 16, 8]
    assert config.model.names == ("H0", "Omega_m", "w0", "r_d")
