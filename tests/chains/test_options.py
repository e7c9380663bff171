"""ReadOptions: validation, the [chain] config table, and command-line overlay."""

from pathlib import Path

import pytest

from agepost.chains.options import ReadOptions
from agepost.errors import ConfigError


def test_defaults_are_valid_and_neutral():
    options = ReadOptions()
    assert options.burn_in == 0 and options.thin == 1
    assert options.nan_policy == "exclude"
    assert options.burn_in_rows(1000) == 0


def test_from_table_converts_lists_and_records_config_fields():
    table = {
        "names": ["weight", "H0", "Omega_m"],
        "burn_in": 0.25,
        "thin": 3,
        "mapping": {"Omega_m": "(omega_b + omega_c) / (H0/100)**2"},
        "fixed": {"m_nu": 0.06},
    }
    options = ReadOptions.from_table(table, where="run.toml [chain]")
    assert options.names == ("weight", "H0", "Omega_m")
    assert options.from_config == frozenset(table)
    # fraction 0.25 of 1000 rows is 250 rows (floor)
    assert options.burn_in_rows(1000) == 250
    assert options.fixed == {"m_nu": 0.06}


def test_unknown_key_names_the_nearest_valid_one():
    with pytest.raises(ConfigError, match=r"run.toml \[chain\]: unknown key 'burnin'.*'burn_in'"):
        ReadOptions.from_table({"burnin": 0.3}, where="run.toml [chain]")


def test_ignored_keys_are_left_to_the_caller():
    options = ReadOptions.from_table({"files": ["a.txt"], "thin": 2}, where="x", ignore=("files",))
    assert options.thin == 2


@pytest.mark.parametrize(
    ("table", "pattern"),
    [
        ({"burn_in": 1.0}, "not a fraction in"),
        ({"burn_in": -5}, "negative"),
        ({"burn_in": "half"}, "fraction in"),
        ({"thin": 0}, "thin = 0 must be"),
        ({"thin": 1.5}, "thin = 1.5 must be"),
        ({"nan_policy": "drop"}, "exclude, raise"),
        ({"log_posterior_kind": "chi2"}, "minus_log_posterior"),
        ({"names": ["H0", "H0"]}, "more than once"),
        ({"mapping": {"Omega_M": "Om"}}, "did you mean 'Omega_m'"),
        ({"fixed": {"m_nu": "0.06"}}, "must be a number"),
        ({"fixed": {"H0": 70}, "mapping": {"H0": "h*100"}}, "both in mapping and in fixed"),
        ({"weight_column": "w", "log_weight_column": "lw"}, "not both"),
        ({"layout": "fits"}, "text, hdf5"),
    ],
)
def test_invalid_values_are_refused_with_the_place(table, pattern):
    with pytest.raises(ConfigError, match=pattern) as info:
        ReadOptions.from_table(table, where="cfg.toml [chain]")
    assert str(info.value).startswith("cfg.toml [chain]: ")


def test_overlay_says_which_source_won_for_each_field():
    config = ReadOptions.from_table({"thin": 4, "burn_in": 100}, where="cfg")
    merged, sources = config.overlay({"burn_in": "0.5", "names": "H0, Omega_m", "thin": None})
    assert merged.burn_in == 0.5 and merged.thin == 4
    assert merged.names == ("H0", "Omega_m")
    assert sources["burn_in"] == "command line"
    assert sources["names"] == "command line"
    assert sources["thin"] == "config"
    assert sources["nan_policy"] == "default"


def test_overlay_names_that_are_a_file_become_names_file(tmp_path: Path):
    names = tmp_path / "cols.txt"
    names.write_text("H0\nOmega_m\n")
    merged, sources = ReadOptions().overlay({"names": str(names)})
    assert merged.names_file == names and merged.names is None
    assert sources["names_file"] == "command line"


def test_overlay_refuses_bad_values_from_the_command_line():
    with pytest.raises(ConfigError, match="command line: thin = 'x'"):
        ReadOptions().overlay({"thin": "x"})
    with pytest.raises(ConfigError, match="command line: burn_in = 2.5"):
        ReadOptions().overlay({"burn_in": "2.5"})
