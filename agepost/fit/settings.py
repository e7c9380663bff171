"""Validate a fit configuration (TOML) into typed objects; paths are relative to the file.

Layout (every key is described in docs/fitting.md)::

    [[data]]                              # one table per data set, several allowed
    kind = "distance_modulus"             # distance_modulus | expansion_rate | sound_horizon_ratio
    file = "lantern_distances.csv"
    covariance = "lantern_distances_cov.txt"   # optional
    covariance_includes_errors = false         # default true
    columns = { z = "z", value = "mu", error = "mu_err" }   # optional renames

    [parameters]                          # a number fixes, a table frees
    H0 = { prior = "uniform", min = 50, max = 90 }
    Omega_m = { prior = "gaussian", mean = 0.3, sd = 0.1, min = 0.01, start = 0.3 }
    w0 = -1.0

    [model]
    radiation = "full"                    # none | massless | full
    n_massive = 1
    t_cmb = 2.7255

    [sampler]
    walkers = 32
    max_steps = 20000
    seed = 1234

    [output]
    folder = "lantern_fit"
    redshifts = [0.5, 1, 2]               # passed to the age run config
"""

from __future__ import annotations

import dataclasses
import difflib
import math
import os
import tomllib
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from agepost.errors import ConfigError
from agepost.fit.data import DATA_KINDS
from agepost.fit.priors import FitModel, FreeParameter, Prior
from agepost.fit.sampler import SamplerSettings
from agepost.physics.background import DEFAULTS

SECTIONS = ("data", "parameters", "model", "sampler", "output")
_DATA_KEYS = ("kind", "file", "covariance", "covariance_includes_errors", "columns")
_PRIOR_KEYS = ("prior", "min", "max", "mean", "sd", "start")
_MODEL_KEYS = ("radiation", "n_massive", "t_cmb")
_SAMPLER_KEYS = tuple(f.name for f in dataclasses.fields(SamplerSettings))
_OUTPUT_KEYS = ("folder", "redshifts")


@dataclasses.dataclass(frozen=True)
class DataSpec:
    """Where one data set is and how to read it; see :mod:`agepost.fit.data`."""

    kind: str
    file: Path
    covariance: Path | None
    covariance_includes_errors: bool
    columns: dict[str, str]


@dataclasses.dataclass(frozen=True)
class FitConfig:
    """A validated fit configuration.

    ``output_folder`` is absolute; ``redshifts`` go to the age run config.
    """

    source: Path
    data: tuple[DataSpec, ...]
    model: FitModel
    sampler: SamplerSettings
    output_folder: Path
    redshifts: tuple[float, ...]


def load_fit_config(path: str | Path) -> FitConfig:
    """Read and validate a fit configuration file."""
    path = Path(path)
    try:
        document = tomllib.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise ConfigError(f"fit configuration {path} does not exist; check the path") from None
    except (OSError, UnicodeDecodeError) as error:
        raise ConfigError(f"fit configuration {path} cannot be read: {error}") from None
    except tomllib.TOMLDecodeError as error:
        raise ConfigError(f"fit configuration {path} is not valid TOML: {error}") from None
    base = path.resolve().parent
    _check_keys(document, SECTIONS, str(path))
    data = document.get("data", [])
    if not isinstance(data, list) or not data:
        raise ConfigError(
            f'{path}: add at least one [[data]] table with kind = "..." and file = "..."'
        )
    specs = tuple(
        _data_spec(table, base, where=f"{path} [[data]] #{i + 1}") for i, table in enumerate(data)
    )
    model = _model(document.get("parameters", {}), document.get("model", {}), where=str(path))
    sampler = _table(document.get("sampler", {}), _SAMPLER_KEYS, f"{path} [sampler]")
    output = _table(document.get("output", {}), _OUTPUT_KEYS, f"{path} [output]")
    try:
        settings = SamplerSettings(**sampler)
    except (ConfigError, TypeError) as error:
        raise ConfigError(f"{path} [sampler]: {error}") from None
    redshifts = output.get("redshifts", [])
    if not isinstance(redshifts, list) or not all(_is_number(z) and z >= 0 for z in redshifts):
        raise ConfigError(
            f"{path} [output]: redshifts must be a list of numbers >= 0, e.g. [0.5, 1, 2]"
        )
    folder = output.get("folder", f"{path.stem}_output")
    if not isinstance(folder, str) or not folder:
        raise ConfigError(f"{path} [output]: folder must be a non-empty string")
    return FitConfig(
        path,
        specs,
        model,
        settings,
        Path(os.path.normpath(base / folder)),
        tuple(float(z) for z in redshifts),
    )


def _data_spec(table: Any, base: Path, *, where: str) -> DataSpec:
    table = _table(table, _DATA_KEYS, where)
    kind = table.get("kind")
    if kind not in DATA_KINDS:
        raise ConfigError(f"{where}: kind = {kind!r}; use one of {', '.join(DATA_KINDS)}")
    if not isinstance(table.get("file"), str):
        raise ConfigError(f'{where}: give the data table as file = "path"')
    covariance = table.get("covariance")
    if covariance is not None and not isinstance(covariance, str):
        raise ConfigError(f'{where}: covariance must be a path string, e.g. covariance = "cov.txt"')
    includes = table.get("covariance_includes_errors", True)
    if not isinstance(includes, bool):
        raise ConfigError(f"{where}: covariance_includes_errors must be true or false")
    columns = table.get("columns", {})
    if not isinstance(columns, Mapping):
        raise ConfigError(
            f'{where}: columns must be a table such as {{ z = "zcmb", value = "mu" }}'
        )
    return DataSpec(
        kind,
        base / table["file"],
        None if covariance is None else base / covariance,
        includes,
        dict(columns),
    )


def _model(parameters: Any, physics: Any, *, where: str) -> FitModel:
    parameters = _table(
        parameters,
        tuple(parameters) if isinstance(parameters, Mapping) else (),
        f"{where} [parameters]",
    )
    physics = _table(physics, _MODEL_KEYS, f"{where} [model]")
    free, fixed = [], {}
    for name, entry in parameters.items():
        if _is_number(entry):
            fixed[name] = float(entry)
        elif isinstance(entry, Mapping):
            free.append(_free_parameter(name, entry, where=f"{where} [parameters] {name}"))
        else:
            raise ConfigError(
                f"{where} [parameters]: {name} must be a number (fixed) "
                "or a table with a prior (free)"
            )
    n_massive = physics.get("n_massive", int(DEFAULTS["n_massive"]))
    t_cmb = physics.get("t_cmb", DEFAULTS["t_cmb"])
    if not isinstance(n_massive, int) or not _is_number(t_cmb) or t_cmb < 0:
        raise ConfigError(
            f"{where} [model]: n_massive must be 0, 1, 2 or 3 and t_cmb a temperature >= 0 K"
        )
    try:
        return FitModel(
            tuple(free),
            fixed,
            radiation=str(physics.get("radiation", "full")),
            n_massive=n_massive,
            t_cmb=float(t_cmb),
        )
    except ConfigError as error:
        raise ConfigError(f"{where}: {error.message}") from None


def _free_parameter(name: str, entry: Mapping[str, Any], *, where: str) -> FreeParameter:
    entry = _table(entry, _PRIOR_KEYS, where)
    numbers = {key: entry[key] for key in ("min", "max", "mean", "sd", "start") if key in entry}
    bad = [key for key, value in numbers.items() if not _is_number(value)]
    if bad:
        raise ConfigError(f"{where}: {bad[0]} = {entry[bad[0]]!r} must be a number")
    try:
        prior = Prior(
            kind=str(entry.get("prior", "")),
            minimum=float(numbers.get("min", -math.inf)),
            maximum=float(numbers.get("max", math.inf)),
            mean=float(numbers.get("mean", math.nan)),
            sd=float(numbers.get("sd", math.nan)),
        )
        return FreeParameter(name, prior, float(numbers.get("start", prior.typical)))
    except ConfigError as error:
        raise ConfigError(f"{where}: {error.message}") from None


def _table(table: Any, allowed: tuple[str, ...], where: str) -> dict[str, Any]:
    if not isinstance(table, Mapping):
        raise ConfigError(f"{where} must be a table of key = value pairs")
    _check_keys(table, allowed, where)
    return dict(table)


def _check_keys(table: Mapping[str, Any], allowed: tuple[str, ...], where: str) -> None:
    for key in table:
        if key not in allowed:
            near = difflib.get_close_matches(key, allowed, n=1)
            hint = f"; did you mean {near[0]!r}?" if near else f"; allowed: {', '.join(allowed)}"
            raise ConfigError(f"{where}: unknown key {key!r}{hint}")


def _is_number(value: Any) -> bool:
    return isinstance(value, int | float) and not isinstance(value, bool) and math.isfinite(value)
