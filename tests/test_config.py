"""Configuration validation: unknown keys, bad values, relative paths."""

from __future__ import annotations

import pytest

from agepost.config import settings_from_config
from agepost.errors import ConfigError


def write(tmp_path, text):
    path = tmp_path / "c.toml"
    path.write_text(text)
    return path


def test_paths_are_relative_to_the_config(tmp_path):
    settings = settings_from_config(
        write(tmp_path, '[chain]\nfiles = ["x/*.txt"]\n[output]\nfolder = "o"\n')
    )
    assert settings.chain_files == (str(tmp_path / "x" / "*.txt"),)
    assert settings.output == tmp_path / "o"
    assert settings.levels == (0.68, 0.95) and settings.sources["levels"] == "default"


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ('[chain]\nfiles = ["a"]\n[quantities]\nredshift = [1]\n', "did you mean 'redshifts'"),
        ('[chain]\nfiles = ["a"]\n[quantities]\nlevels = [1.5]\n', "strictly between 0 and 1"),
        ('[chain]\nfiles = ["a"]\n[quantities]\nredshifts = [-2]\n', "z >= 0"),
        ('[chain]\nfiles = ["a"]\n[model]\nradiation = "warm"\n', "radiation model"),
        ('[chain]\nfiles = ["a"]\n[model]\nassume = { n_eff = 3 }\n', "did you mean 'N_eff'"),
        ('[chain]\nfile = ["a"]\n', "unknown key 'file'"),
        ("[chain\n", "not valid TOML"),
        ('[chains]\nfiles = ["a"]\n', "unknown key 'chains'"),
    ],
)
def test_invalid_configs_name_the_problem(tmp_path, text, expected):
    with pytest.raises(ConfigError, match=None) as error:
        settings_from_config(write(tmp_path, text))
    assert expected in str(error.value)


def test_missing_file(tmp_path):
    with pytest.raises(ConfigError, match="does not exist"):
        settings_from_config(tmp_path / "nope.toml")


def test_repeated_redshifts_are_kept_once(tmp_path):
    settings = settings_from_config(
        write(tmp_path, '[chain]\nfiles = ["a"]\n[quantities]\nredshifts = [1, 0.5, 1.0, 2, 0.5]\n')
    )
    assert settings.redshifts == (1.0, 0.5, 2.0)
