"""The compare, confront and reweight commands, in process through agepost.cli.main."""

from __future__ import annotations

import json
import subprocess
import sys

import matplotlib

matplotlib.use("Agg")

import numpy as np
import pytest

from agepost.cli import main

OBJECTS = (
    "name,z,age_gyr,age_err_gyr,kind\nOkapi-1,3.2,1.6,0.3,gaussian\nHeron,0,12.0,,lower_limit\n"
)


def one_line_error(capsys, fragment: str) -> str:
    """The command printed exactly one line, an error naming ``fragment``, and no traceback."""
    captured = capsys.readouterr()
    lines = captured.err.strip().splitlines()
    assert len(lines) == 1, captured.err
    assert lines[0].startswith("agepost: error:")
    assert fragment in lines[0]
    return lines[0]


@pytest.fixture
def two_chains(chain_file):
    return (
        chain_file("lantern_lcdm.txt", h0_mean=67.5, n=400, seed=1),
        chain_file("lantern_shifted.txt", h0_mean=71.0, h0_sd=1.5, n=400, seed=2),
    )


@pytest.fixture
def objects_file(tmp_path):
    path = tmp_path / "objects.csv"
    path.write_text(OBJECTS)
    return path


@pytest.mark.slow  # draws every figure (a few seconds)
def test_compare_writes_tables_figures_and_json(two_chains, tmp_path, capsys):
    out = tmp_path / "cmp"
    args = [
        "--quiet",
        "compare",
        *map(str, two_chains),
        "--z",
        "1",
        "--out",
        str(out),
        "--draws",
        "3000",
        "--band-samples",
        "100",
        "--labels",
        "A,B",
        "--json",
        "--seed",
        "9",
    ]
    assert main(args) == 0
    printed = json.loads(capsys.readouterr().out)
    written = json.loads((out / "comparison.json").read_text())
    assert printed == written
    assert set(written["quantities"]) == {"age", "lookback_z1", "cosmic_time_z1"}
    pair = written["quantities"]["age"]["differences"]["B - A"]
    assert pair["difference"]["median"] < 0  # the higher-H0 run is younger
    assert pair["prob_same_sign"] > 0.9 and pair["tension_sigma"] > 1
    assert written["resampling"]["seed"] == 9
    assert written["time_bands"]["subsample"]["A"] == {"size": 100, "of": 400}
    assert written["provenance"]["inputs"]["A"][0]["sha256"]
    for name in (
        "comparison.csv",
        "comparison_marginals.png",
        "comparison_times.pdf",
        "comparison_corner.png",
    ):
        assert (out / name).stat().st_size > 0
    # A second run refuses to overwrite, in one line, and leaves the files as they were.
    before = (out / "comparison.json").read_bytes()
    assert main(args) == 2
    one_line_error(capsys, "already exists; pass --force")
    assert (out / "comparison.json").read_bytes() == before


def test_compare_runs_with_no_shared_quantity(run_folder, tmp_path, capsys):
    a = run_folder("a", {"lookback_z1": np.linspace(7, 8, 20)})
    b = run_folder("b", {"lookback_z2": np.linspace(10, 11, 20)})
    assert main(["--quiet", "compare", str(a), str(b), "--out", str(tmp_path / "o")]) == 2
    one_line_error(capsys, "share no derived quantity")
    assert not (tmp_path / "o").exists()


@pytest.mark.parametrize(
    ("extra", "fragment"),
    [
        ([], "at least two runs"),
        (["--levels", "68"], "outside (0, 1)"),
        (["--draws", "0"], "--draws 0 must be a whole number >= 1"),
    ],
)
def test_compare_usage_errors(two_chains, tmp_path, capsys, extra, fragment):
    runs = [str(two_chains[0])] if not extra else list(map(str, two_chains))
    assert main(["--quiet", "compare", *runs, "--out", str(tmp_path / "o"), *extra]) == 2
    one_line_error(capsys, fragment)


def test_confront_reports_each_object_by_name(two_chains, objects_file, tmp_path, capsys):
    out = tmp_path / "conf"
    assert (
        main(
            [
                "--quiet",
                "confront",
                str(two_chains[0]),
                "--objects",
                str(objects_file),
                "--out",
                str(out),
                "--json",
                "--band-samples",
                "100",
            ]
        )
        == 0
    )
    record = json.loads(capsys.readouterr().out)
    okapi = record["objects"]["Okapi-1"]
    assert 0 < okapi["p_universe_younger"] < 0.5
    assert okapi["formation_z"]["median"] > 3.2
    assert set(okapi["formation_z"]["intervals"]["0.68"]) == {"equal_tail", "hpd", "upper", "lower"}
    assert 0 <= okapi["frac_no_formation"] < 0.5
    heron = record["objects"]["Heron"]
    assert heron["p_universe_younger"] == 0.0 and heron["formation_z_is_lower_bound"]
    assert (out / "confront_objects.png").stat().st_size > 0


@pytest.mark.parametrize(
    ("row", "fragment"),
    [
        ("Far,25,0.2,0.05,gaussian", "'Far' at z = 25 lies beyond the computed range 0 <= z <= 20"),
        ("Bad,1,-3,0.5,gaussian", "line 2, column age_gyr: -3.0 Gyr is not a positive age"),
        ("Bad,1,nan,0.5,gaussian", "line 2, column age_gyr: nan is not finite"),
    ],
)
def test_confront_bad_objects(two_chains, tmp_path, capsys, row, fragment):
    path = tmp_path / "objects.csv"
    path.write_text("name,z,age_gyr,age_err_gyr,kind\n" + row + "\n")
    assert (
        main(
            [
                "--quiet",
                "confront",
                str(two_chains[0]),
                "--objects",
                str(path),
                "--out",
                str(tmp_path / "o"),
            ]
        )
        == 2
    )
    one_line_error(capsys, fragment)
    assert not (tmp_path / "o").exists()


def test_confront_range_can_be_raised(two_chains, tmp_path, capsys):
    path = tmp_path / "objects.csv"
    path.write_text("name,z,age_gyr,age_err_gyr\nFar,25,0.05,0.01\n")
    assert (
        main(
            [
                "--quiet",
                "confront",
                str(two_chains[0]),
                "--objects",
                str(path),
                "--out",
                str(tmp_path / "o"),
                "--z-max",
                "30",
                "--band-samples",
                "50",
                "--json",
            ]
        )
        == 0
    )
    assert json.loads(capsys.readouterr().out)["objects"]["Far"]["formation_z"]["median"] > 25


@pytest.mark.slow  # draws every figure (a few seconds)
def test_reweight_writes_a_run_folder_that_confront_reads(
    two_chains, objects_file, tmp_path, capsys
):
    out = tmp_path / "rw"
    assert (
        main(
            [
                "--quiet",
                "reweight",
                str(two_chains[0]),
                "--kind",
                "gaussian",
                "--age",
                "14.1",
                "--age-err",
                "0.1",
                "--out",
                str(out),
                "--json",
                "--ess-floor",
                "350",
            ]
        )
        == 0
    )
    captured = capsys.readouterr()
    record = json.loads(captured.out)
    assert record["constraint"] == {
        "kind": "gaussian",
        "age_gyr": 14.1,
        "age_err_gyr": 0.1,
        "description": "t0 = 14.1 +- 0.1 Gyr",
    }
    assert record["ess_kish_after"] < record["ess_kish_before"] == 400
    assert (
        record["quantities"]["age"]["after"]["median"]
        > record["quantities"]["age"]["before"]["median"]
    )
    assert record["parameters"]["H0"]["median_shift"] < 0  # an older universe wants a lower H0
    assert any("below the floor 350" in w for w in record["warnings"])
    assert "below the floor 350" in captured.err  # also said where a JSON reader will not look
    assert (out / "reweight_marginals.png").stat().st_size > 0
    assert (
        main(
            [
                "--quiet",
                "confront",
                str(out),
                "--objects",
                str(objects_file),
                "--out",
                str(tmp_path / "c"),
                "--band-samples",
                "50",
            ]
        )
        == 0
    )


def test_reweight_leaving_zero_effective_samples(two_chains, tmp_path, capsys):
    assert (
        main(
            ["--quiet", "reweight", str(two_chains[0]), "--age", "30", "--out", str(tmp_path / "o")]
        )
        == 2
    )
    one_line_error(capsys, "leaves zero effective samples")
    assert not (tmp_path / "o").exists()


def test_reweight_needs_an_error_for_a_gaussian(two_chains, tmp_path, capsys):
    assert (
        main(
            [
                "--quiet",
                "reweight",
                str(two_chains[0]),
                "--kind",
                "gaussian",
                "--age",
                "13",
                "--out",
                str(tmp_path / "o"),
            ]
        )
        == 2
    )
    one_line_error(capsys, "needs its one-sigma error")


@pytest.mark.slow  # a fresh interpreter imports everything
def test_installed_command_runs_in_a_subprocess(run_folder, tmp_path):
    a = run_folder("a", {"lookback_z1": np.linspace(7, 8, 20)})
    b = run_folder("b", {"lookback_z2": np.linspace(10, 11, 20)})
    done = subprocess.run(
        [sys.executable, "-m", "agepost", "compare", str(a), str(b), "--out", str(tmp_path / "o")],
        capture_output=True,
        text=True,
        check=False,
    )
    assert done.returncode == 2
    assert done.stderr.strip().startswith("agepost: error: the runs share no derived quantity")
    assert "Traceback" not in done.stderr
