"""``agepost point`` through main() in-process, plus one run of the installed command."""

from __future__ import annotations

import json
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from agepost.cli import main


def run_json(capsys, *args):
    code = main(["point", *args, "--json"])
    captured = capsys.readouterr()
    return code, (json.loads(captured.out) if code == 0 else None), captured.err


def test_json_keys_and_values(capsys):
    code, record, _ = run_json(
        capsys,
        "--H0",
        "67.5",
        "--omega-m",
        "0.315",
        "--radiation",
        "none",
        "--z",
        "0.5",
        "--z",
        "1,2",
    )
    assert code == 0
    # Common practice: 13.776 Gyr for flat LambdaCDM, H0 = 67.5, Omega_m = 0.315, no radiation.
    assert round(record["age_gyr"], 3) == 13.776
    assert set(record["lookback_gyr"]) == {"0.5", "1", "2"} == set(record["age_at_z_gyr"])
    for z in ("0.5", "1", "2"):
        # Identity of the definitions: lookback + age at z = age today.
        assert abs(record["lookback_gyr"][z] + record["age_at_z_gyr"][z] - record["age_gyr"]) < 1e-9
    # 1/H0 = 977.79/H0 Gyr (IAU constants; from memory to 5 digits).
    assert abs(record["hubble_time_gyr"] - 977.79 / 67.5) < 1e-3


def test_redshift_keys_keep_the_text_as_given(capsys):
    _, record, _ = run_json(capsys, "--H0", "70", "--omega-m", "0.3", "--z", "0.50")
    assert list(record["lookback_gyr"]) == ["0.50"]


@pytest.mark.parametrize(
    ("arguments", "expected"),
    [
        (["--H0", "-3", "--omega-m", "0.3"], "--H0 -3.0 is not allowed"),
        (["--H0", "70", "--omega-m", "0.3", "--omega-k", "-1.5"], "no big bang"),
        (["--H0", "70", "--omega-m", "0.3", "--z", "-1"], "redshifts must be finite and >= 0"),
        (["--H0", "70", "--omega-m", "0.0001", "--m-nu", "1"], "massive-neutrino density"),
        (["--H0", "70", "--omega-m", "0.3", "--m-nu", "-0.1"], "--m-nu -0.1 is not allowed"),
    ],
)
def test_bad_points_give_one_line_and_exit_2(capsys, arguments, expected):
    code = main(["point", *arguments])
    err = capsys.readouterr().err
    assert code == 2
    assert expected in err
    assert "Traceback" not in err and len(err.strip().splitlines()) == 1


@pytest.mark.parametrize(
    "arguments",
    [["--H0", "nan", "--omega-m", "0.3"], ["--H0", "70", "--omega-m", "0.3", "--radiation", "hot"]],
)
def test_unusable_flag_values_exit_2(capsys, arguments):
    assert main(["point", *arguments]) == 2
    assert "Traceback" not in capsys.readouterr().err


def test_installed_command_and_module_entry_point():
    executable = shutil.which("agepost") or shutil.which(
        "agepost", path=str(Path(sys.executable).parent)
    )
    if executable is None:
        pytest.skip("the agepost console script is not on PATH (package not installed)")
    done = subprocess.run(
        [executable, "point", "--H0", "70", "--omega-m", "0.3", "--json"],
        capture_output=True,
        text=True,
        timeout=120,
        check=False,
    )
    assert done.returncode == 0, done.stderr
    assert json.loads(done.stdout)["age_gyr"] > 13
    failed = subprocess.run(
        [executable, "point", "--H0", "70", "--omega-m", "0.3", "--omega-k", "-2"],
        capture_output=True,
        text=True,
        timeout=120,
        check=False,
    )
    assert (
        failed.returncode == 2
        and "no big bang" in failed.stderr
        and "Traceback" not in failed.stderr
    )
