"""Configurations of compare, confront and reweight: the demo files and bad keys."""

from __future__ import annotations

from pathlib import Path

import pytest

from agepost.compare.config import read_command_config
from agepost.config import settings_from_config
from agepost.errors import ConfigError

CONFIGS = Path(__file__).parents[2] / "configs"


def test_demo_configs_point_at_the_demo_runs_and_objects():
    lcdm = settings_from_config(CONFIGS / "demo.toml").output
    curved = settings_from_config(CONFIGS / "demo_curved.toml").output
    compare = read_command_config(CONFIGS / "compare_demo.toml", "compare")
    assert [Path(p) for p in compare["runs"]] == [lcdm, curved]
    assert len(compare["labels"]) == 2
    confront = read_command_config(CONFIGS / "confront_demo.toml", "confront")
    assert Path(confront["run"]) == lcdm
    assert Path(confront["objects"]).is_file()
    reweight = read_command_config(CONFIGS / "reweight_demo.toml", "reweight")
    assert Path(reweight["run"]) == curved
    assert reweight["kind"] == "lower_limit" and reweight["age_gyr"] > 0
    for values in (compare, confront, reweight):
        assert Path(values["out"]).parent == lcdm.parent


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("[compare]\nrun = ['a']\n", "unknown key 'run'; did you mean 'runs'"),
        ("[compare]\nruns = 'a'\n", "must be a non-empty list of strings"),
        ("[compare]\ndraws = 1.5\n", "must be a whole number"),
        ("[compare]\nlevels = 0.68\n", "must be a list of numbers"),
        ("[comparison]\n", "unknown key 'comparison'"),
        ("[output]\nfolders = 'x'\n", "unknown key 'folders'"),
        ("[compare\n", "not valid TOML"),
    ],
)
def test_bad_configs(tmp_path, text, message):
    path = tmp_path / "bad.toml"
    path.write_text(text)
    with pytest.raises(ConfigError, match=message):
        read_command_config(path, "compare")


def test_paths_are_relative_to_the_config(tmp_path):
    path = tmp_path / "sub" / "c.toml"
    path.parent.mkdir()
    path.write_text("[confront]\nrun = '../runs/x'\nobjects = 'o.csv'\n[output]\nfolder = 'out'\n")
    values = read_command_config(path, "confront")
    assert values == {
        "run": str(tmp_path / "runs" / "x"),
        "objects": str(tmp_path / "sub" / "o.csv"),
        "out": str(tmp_path / "sub" / "out"),
    }
