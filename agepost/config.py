"""TOML run configurations validated into one typed :class:`RunSettings` object.

Layout of a configuration (paths are relative to the configuration file)::

    [chain]                 # where the samples are and how to read them
    files = ["chains/run_*.txt"]
    weight_column = "weight"
    burn_in = 0.2           # any other key of agepost.chains.ReadOptions

    [model]                 # physics not carried by the chain
    radiation = "full"      # none | massless | full
    t_cmb = 2.7255
    n_massive = 1
    assume = { m_nu = 0.06, n_eff = 3.044 }   # values for parameters the chain lacks

    [quantities]
    redshifts = [0.5, 1, 2, 1100]
    levels = [0.68, 0.95]

    [output]
    folder = "results/demo"
    figures = ["corner", "age_redshift", "marginals"]   # the default: all
    report = true                                       # report.html
"""

from __future__ import annotations

import dataclasses
import difflib
import os
import tomllib
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from agepost.chains.options import ReadOptions
from agepost.derive import ModelSettings, unique_redshifts
from agepost.errors import ConfigError
from agepost.physics.background import DEFAULTS

SECTIONS = ("chain", "model", "quantities", "output")
_MODEL_KEYS = ("radiation", "t_cmb", "n_massive", "assume")
_QUANTITY_KEYS = ("redshifts", "levels")
_OUTPUT_KEYS = ("folder", "figures", "report")
#: Figure groups (see agepost.report.run_figures); all are drawn unless [output] figures says.
FIGURES = ("corner", "age_redshift", "marginals")
_ASSUMABLE = {"Omega_k": "omega_k", "w0": "w0", "wa": "wa", "m_nu": "m_nu", "N_eff": "n_eff"}


@dataclasses.dataclass(frozen=True)
class RunSettings:
    """Everything one run needs, resolved from a configuration and command-line flags.

    ``sources`` records, per setting, whether the value came from the ``command line``,
    the ``config`` or the ``default`` (written to the provenance record).
    """

    chain_files: tuple[str, ...]
    read: ReadOptions
    model: ModelSettings
    redshifts: tuple[float, ...]
    levels: tuple[float, ...] = (0.68, 0.95)
    output: Path = Path("agepost-output")
    figures: tuple[str, ...] = FIGURES
    report: bool = True
    force: bool = False
    config_file: Path | None = None
    sources: dict[str, str] = dataclasses.field(default_factory=dict)


def load_config(path: str | Path) -> dict[str, Any]:
    """Parse a TOML file; a missing or malformed file is a ConfigError naming it."""
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise ConfigError(f"configuration {path} does not exist; check the path") from None
    except (OSError, UnicodeDecodeError) as error:
        raise ConfigError(f"configuration {path} cannot be read: {error}") from None
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as error:
        raise ConfigError(f"configuration {path} is not valid TOML: {error}") from None


def settings_from_config(path: str | Path) -> RunSettings:
    """Validate a configuration file into :class:`RunSettings` (paths made absolute)."""
    path = Path(path)
    document = load_config(path)
    base = path.resolve().parent
    check_keys(document, SECTIONS, f"{path}")
    chain = dict(document.get("chain", {}))
    files = chain.pop("files", None)
    read = ReadOptions.from_table(chain, where=f"{path} [chain]")
    if isinstance(files, str):
        files = [files]
    if not files or not all(isinstance(f, str) for f in files):
        raise ConfigError(f'{path} [chain]: give the chain file(s) as files = ["path", ...]')
    if read.names_file is not None and not Path(read.names_file).is_absolute():
        read = dataclasses.replace(read, names_file=base / read.names_file)
    model = model_from_table(document.get("model", {}), where=f"{path} [model]")
    quantities = document.get("quantities", {})
    check_keys(quantities, _QUANTITY_KEYS, f"{path} [quantities]")
    output = document.get("output", {})
    check_keys(output, _OUTPUT_KEYS, f"{path} [output]")
    figures = tuple(output.get("figures", FIGURES))
    unknown = [f for f in figures if f not in FIGURES]
    if unknown:
        raise ConfigError(
            f"{path} [output]: unknown figure {unknown[0]!r}; available: {', '.join(FIGURES)}"
        )
    folder = Path(output.get("folder", "agepost-output"))
    sources = {
        "chain_files": "config",
        "redshifts": "config" if "redshifts" in quantities else "default",
        "levels": "config" if "levels" in quantities else "default",
        "output": "config" if "folder" in output else "default",
    }
    return RunSettings(
        chain_files=tuple(os.path.normpath(base / f) for f in files),
        read=read,
        model=model,
        redshifts=_redshifts(quantities.get("redshifts", []), where=f"{path} [quantities]"),
        levels=_levels(quantities.get("levels", (0.68, 0.95)), where=f"{path} [quantities]"),
        output=Path(os.path.normpath(base / folder)),
        figures=figures,
        report=_boolean(output.get("report", True), f"{path} [output] report"),
        config_file=path.resolve(),
        sources=sources,
    )


def model_from_table(table: Mapping[str, Any], *, where: str) -> ModelSettings:
    """Validate a ``[model]`` table into :class:`~agepost.derive.ModelSettings`."""
    check_keys(table, _MODEL_KEYS, where)
    assume = dict(table.get("assume", {}))
    check_keys(assume, tuple(_ASSUMABLE), f"{where} assume")
    defaults = {k: DEFAULTS[k] for k in _ASSUMABLE.values()}
    for name, value in assume.items():
        defaults[_ASSUMABLE[name]] = number_value(value, f"{where} assume.{name}")
    try:
        return ModelSettings(
            radiation=str(table.get("radiation", "full")),
            n_massive=int(table.get("n_massive", DEFAULTS["n_massive"])),
            t_cmb=number_value(table.get("t_cmb", DEFAULTS["t_cmb"]), f"{where} t_cmb"),
            defaults=defaults,
        )
    except ConfigError as error:
        raise ConfigError(f"{where}: {error.message}") from None


def _redshifts(values: Any, *, where: str) -> tuple[float, ...]:
    if not isinstance(values, list | tuple):
        raise ConfigError(f"{where}: redshifts must be a list of numbers, e.g. [0.5, 1, 2]")
    try:
        return unique_redshifts([number_value(v, f"{where} redshifts") for v in values])
    except ConfigError as error:
        raise ConfigError(f"{where}: {error.message}") from None


def _levels(values: Any, *, where: str) -> tuple[float, ...]:
    if not isinstance(values, list | tuple) or not values:
        raise ConfigError(f"{where}: levels must be a non-empty list such as [0.68, 0.95]")
    levels = tuple(number_value(v, f"{where} levels") for v in values)
    bad = [v for v in levels if not 0 < v < 1]
    if bad:
        raise ConfigError(f"{where}: credible level {bad[0]} must lie strictly between 0 and 1")
    return levels


def _boolean(value: Any, where: str) -> bool:
    if not isinstance(value, bool):
        raise ConfigError(f"{where} = {value!r} must be true or false")
    return value


def number_value(value: Any, where: str) -> float:
    """A TOML number as float; anything else (booleans included) is a ConfigError."""
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise ConfigError(f"{where} = {value!r} must be a number")
    return float(value)


def check_keys(table: Any, allowed: tuple[str, ...], where: str) -> None:
    """ConfigError naming the nearest allowed key when ``table`` has an unknown one."""
    if not isinstance(table, Mapping):
        raise ConfigError(f"{where} must be a table of key = value pairs")
    for key in table:
        if key not in allowed:
            near = difflib.get_close_matches(key, allowed, n=1)
            hint = f"; did you mean {near[0]!r}?" if near else f"; allowed: {', '.join(allowed)}"
            raise ConfigError(f"{where}: unknown key {key!r}{hint}")
