"""Loading runs: chain files, run folders written by the run commands, and damaged folders."""

from __future__ import annotations

import json

import h5py
import numpy as np
import pytest
from numpy.testing import assert_allclose

from agepost.cli import main
from agepost.compare.runs import default_label, load_run, load_runs
from agepost.compare.timegrid import time_bands
from agepost.derive import ModelSettings
from agepost.errors import ConfigError, InputError


def test_chain_file_is_derived_at_the_redshifts(chain_file):
    path = chain_file("lantern_a.txt", n=300)
    run = load_run(path, redshifts=[1.0, 2.0], model=ModelSettings(radiation="none"))
    assert run.label == "lantern_a"
    assert list(run.quantities.columns) == [
        "age",
        "lookback_z1",
        "cosmic_time_z1",
        "lookback_z2",
        "cosmic_time_z2",
    ]
    assert run.n_samples == 300 and run.n_excluded == 0
    assert_allclose(
        run.quantities["age"],
        run.quantities["lookback_z1"] + run.quantities["cosmic_time_z1"],
        rtol=1e-12,
    )
    assert run.model.radiation == "none"
    assert run.input_files == (path,)


def test_rows_without_a_derived_value_are_left_out_and_counted(tmp_path):
    path = tmp_path / "bad_row.txt"
    path.write_text("weight H0 Omega_m\n1 68 0.3\n1 nan 0.3\n0 68 0.31\n2 69 0.3\n")
    run = load_run(path)
    assert run.n_rows == 4 and run.n_samples == 2 and run.n_excluded == 2
    assert run.weights.tolist() == [1.0, 2.0]


def test_run_folder_written_by_the_run_command_round_trips(chain_file, tmp_path):
    path = chain_file("lantern_b.txt", n=400, seed=3)
    out = tmp_path / "derived"
    config = tmp_path / "massless.toml"  # no figures: only the files compare reads
    config.write_text(
        f'[chain]\nfiles = ["{path}"]\n[model]\nradiation = "massless"\n'
        '[quantities]\nredshifts = [0.5]\n[output]\nfolder = "derived"\nfigures = []\n'
    )
    assert main(["--quiet", "run", str(config)]) == 0
    folder_run = load_run(out)
    chain_run = load_run(path, redshifts=[0.5], model=ModelSettings(radiation="massless"))
    assert folder_run.label == "derived"
    assert folder_run.model.radiation == "massless"
    assert folder_run.redshifts == (0.5,)
    assert list(folder_run.quantities.columns) == list(chain_run.quantities.columns)
    assert_allclose(folder_run.quantities.to_numpy(), chain_run.quantities.to_numpy(), rtol=1e-12)
    assert_allclose(folder_run.parameters.to_numpy(), chain_run.parameters.to_numpy(), rtol=0)
    # The rebuilt expansion history reproduces the stored ages (time_bands checks them).
    bands = time_bands(folder_run, [0.0, 1.0], size=50, rng=0)
    assert bands.size == 50


def test_parameters_fixed_by_the_reader_are_recovered_from_provenance(chain_file, tmp_path):
    # m_nu = 0.3 eV changes the age by ~1e-2 relative; were it lost, rebuilding would fail.
    path = chain_file("lantern_c.txt", n=200, seed=5)
    config = tmp_path / "fixed.toml"
    config.write_text(
        f'[chain]\nfiles = ["{path}"]\nfixed = {{ m_nu = 0.3 }}\n'
        '[output]\nfolder = "out"\nfigures = []\n'
    )
    assert main(["--quiet", "run", str(config)]) == 0
    run = load_run(tmp_path / "out")
    assert run.fixed == {"m_nu": 0.3}
    time_bands(run, [0.0, 2.0], size=40, rng=1)  # raises if the stored ages are not reproduced


def test_labels(tmp_path, chain_file):
    assert default_label("chains/lantern_lcdm_*.txt") == "lantern_lcdm"
    a, b = chain_file("a.txt", n=50), chain_file("b.txt", n=50, seed=2)
    runs = load_runs([a, b], labels=["first", "second"])
    assert [r.label for r in runs] == ["first", "second"]
    with pytest.raises(ConfigError, match="both labelled 'same'"):
        load_runs([a, b], labels=["same", "same"])
    with pytest.raises(ConfigError, match="1 labels given for 2 runs"):
        load_runs([a, b], labels=["one"])
    with pytest.raises(ConfigError, match="both labelled 'a'"):
        load_runs([a, a])


def test_damaged_folders(tmp_path, run_folder):
    empty = tmp_path / "empty"
    empty.mkdir()
    with pytest.raises(InputError, match="has no samples.h5"):
        load_run(empty)
    folder = run_folder("ok", {"age": np.full(5, 13.0)})
    (folder / "summary.json").write_text("{not json")
    with pytest.raises(InputError, match="cannot be read as JSON"):
        load_run(folder)
    (folder / "summary.json").write_text(json.dumps({"redshifts": []}))
    with pytest.raises(InputError, match="no 'model' record"):
        load_run(folder)
    (folder / "summary.json").unlink()
    with pytest.raises(InputError, match="summary.json is missing"):
        load_run(folder)
    broken = run_folder("broken", {"age": np.full(5, 13.0)})
    (broken / "samples.h5").write_bytes(b"not an hdf5 file")
    with pytest.raises(InputError, match="not a readable HDF5 file"):
        load_run(broken)
    lacking = run_folder("lacking", {"age": np.full(5, 13.0)})
    with h5py.File(lacking / "samples.h5", "a") as handle:
        del handle["weight"]
    with pytest.raises(InputError, match="lacks the 'weight' entry"):
        load_run(lacking)


def test_folder_with_every_weight_zero(tmp_path, run_folder):
    folder = run_folder("zero", {"age": np.full(3, 13.0)})
    with h5py.File(folder / "samples.h5", "a") as handle:
        handle["weight"][...] = 0.0
    with pytest.raises(InputError, match="no sample has a derived value and a positive weight"):
        load_run(folder)
