"""Fit configuration files: layout, paths relative to the file, one clear message per mistake."""

from __future__ import annotations

import pytest

from agepost.errors import ConfigError
from agepost.fit.settings import load_fit_config

GOOD = """
[[data]]
kind = "distance_modulus"
file = "data/mu.csv"
covariance = "data/cov.txt"
covariance_includes_errors = false
columns = { value = "m_b" }

[parameters]
H0 = { prior = "gaussian", mean = 70.0, sd = 3.0 }
Omega_m = { prior = "uniform", min = 0.0, max = 1.0 }
w0 = -0.9

[model]
radiation = "massless"

[sampler]
walkers = 20
seed = 3
moves = "stretch"

[output]
folder = "out"
redshifts = [0.5, 2]
"""


def write(tmp_path, text):
    path = tmp_path / "fit.toml"
    path.write_text(text, encoding="utf-8")
    return path


def test_good_config_resolves_paths_priors_and_defaults(tmp_path):
    config = load_fit_config(write(tmp_path, GOOD))
    (spec,) = config.data
    assert (
        spec.file == tmp_path / "data" / "mu.csv"
        and spec.covariance == tmp_path / "data" / "cov.txt"
    )
    assert spec.columns == {"value": "m_b"} and spec.covariance_includes_errors is False
    assert config.model.names == ("H0", "Omega_m")
    assert config.model.start().tolist() == [
        70.0,
        0.5,
    ]  # Gaussian mean, middle of the uniform range
    assert config.model.fixed == {"w0": -0.9} and config.model.radiation == "massless"
    assert config.sampler.walkers == 20 and config.sampler.moves == "stretch"
    assert config.sampler.max_steps == 20000  # default
    assert config.output_folder == tmp_path / "out" and config.redshifts == (0.5, 2.0)


@pytest.mark.parametrize(
    ("old", "new", "pattern"),
    [
        ("[model]", "[modle]", r"unknown key 'modle'; did you mean 'model'\?"),
        (
            'kind = "distance_modulus"',
            'kind = "supernovae"',
            r"\[\[data\]\] #1: kind = 'supernovae'",
        ),
        ('file = "data/mu.csv"', "file = 3", r'give the data table as file = "path"'),
        (
            'prior = "uniform", min',
            'prior = "uniform", minimum',
            r"Omega_m: unknown key 'minimum'; did you mean 'min'\?",
        ),
        ("min = 0.0, max = 1.0", 'min = 0.0, max = "one"', r"max = 'one' must be a number"),
        ("w0 = -0.9", 'w0 = "fixed"', "w0 must be a number"),
        ("walkers = 20", "walkers = 2.5", "sampler walkers must be a positive integer"),
        ("redshifts = [0.5, 2]", "redshifts = [-1]", "redshifts must be a list of numbers >= 0"),
        (
            "covariance_includes_errors = false",
            "covariance_includes_errors = 0",
            "must be true or false",
        ),
        ("[[data]]\nkind", "[[ignored]]\nkind", "unknown key 'ignored'"),
    ],
)
def test_mistakes_get_one_message(tmp_path, old, new, pattern):
    assert old in GOOD
    with pytest.raises(ConfigError, match=pattern):
        load_fit_config(write(tmp_path, GOOD.replace(old, new)))


def test_missing_data_and_broken_files(tmp_path):
    with pytest.raises(ConfigError, match=r"add at least one \[\[data\]\] table"):
        load_fit_config(write(tmp_path, "[parameters]\nH0 = 70.0\n"))
    with pytest.raises(ConfigError, match="is not valid TOML"):
        load_fit_config(write(tmp_path, "[[data]\n"))
    with pytest.raises(ConfigError, match="does not exist"):
        load_fit_config(tmp_path / "missing.toml")
