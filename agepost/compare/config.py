"""TOML configurations of the compare, confront and reweight commands.

Each configuration has one table named after its command and an optional ``[output]``
table with ``folder``; paths are relative to the configuration file. Example::

    [compare]
    runs = ["../runs/demo", "../runs/demo_curved"]
    labels = ["flat LCDM", "curved w0wa"]

    [output]
    folder = "../runs/compare_demo"

Command-line flags override the configuration; keys and their types are listed in
:data:`KEYS` and documented in docs/compare.md.
"""

from __future__ import annotations

import os
from collections.abc import Callable, Mapping
from pathlib import Path
from typing import Any

from agepost.config import check_keys, load_config, number_value
from agepost.errors import ConfigError


def _text(value: Any, where: str) -> str:
    if not isinstance(value, str) or not value.strip():
        raise ConfigError(f"{where} = {value!r} must be a non-empty string")
    return value


def _whole(value: Any, where: str) -> int:
    if isinstance(value, bool) or not isinstance(value, int):
        raise ConfigError(f"{where} = {value!r} must be a whole number")
    return int(value)


def _numbers(value: Any, where: str) -> list[float]:
    if not isinstance(value, list):
        raise ConfigError(f"{where} must be a list of numbers, e.g. [0.68, 0.95]")
    return [number_value(v, where) for v in value]


def _texts(value: Any, where: str) -> list[str]:
    if not isinstance(value, list) or not value:
        raise ConfigError(f"{where} must be a non-empty list of strings")
    return [_text(v, where) for v in value]


def _burn_in(value: Any, where: str) -> float | int:
    return (
        _whole(value, where)
        if isinstance(value, int) and not isinstance(value, bool)
        else number_value(value, where)
    )


Checker = Callable[[Any, str], Any]
#: Path-valued keys are resolved against the configuration's folder.
PATH_KEYS = ("runs", "run", "objects")
#: Allowed keys of each command table and how each is checked.
KEYS: dict[str, dict[str, Checker]] = {
    "compare": {
        "runs": _texts,
        "labels": _texts,
        "levels": _numbers,
        "draws": _whole,
        "seed": _whole,
        "band_samples": _whole,
        "z_max": number_value,
        "z": _numbers,
        "burn_in": _burn_in,
    },
    "confront": {
        "run": _text,
        "objects": _text,
        "levels": _numbers,
        "seed": _whole,
        "band_samples": _whole,
        "z_max": number_value,
        "burn_in": _burn_in,
    },
    "reweight": {
        "run": _text,
        "kind": _text,
        "age_gyr": number_value,
        "age_err_gyr": number_value,
        "ess_floor": number_value,
        "levels": _numbers,
        "z": _numbers,
        "burn_in": _burn_in,
    },
}


def read_command_config(path: str | Path, command: str) -> dict[str, Any]:
    """Validated values of the ``[command]`` table plus ``out`` from ``[output] folder``.

    Paths are made absolute against the configuration's folder.
    """
    path = Path(path)
    document = load_config(path)
    check_keys(document, (command, "output"), str(path))
    table = document.get(command, {})
    output = document.get("output", {})
    allowed = KEYS[command]
    check_keys(table, tuple(allowed), f"{path} [{command}]")
    check_keys(output, ("folder",), f"{path} [output]")
    base = path.resolve().parent
    values = {key: allowed[key](value, f"{path} [{command}] {key}") for key, value in table.items()}
    for key in PATH_KEYS:
        if key in values:
            values[key] = _resolve(values[key], base)
    if "folder" in output:
        values["out"] = _resolve(_text(output["folder"], f"{path} [output] folder"), base)
    return values


def _resolve(value: str | list[str], base: Path) -> str | list[str]:
    if isinstance(value, list):
        return [os.path.normpath(base / v) for v in value]
    return os.path.normpath(base / value)


def pick(args: Any, config: Mapping[str, Any], key: str, default: Any) -> Any:
    """The command-line value if given (not None), else the configuration's, else ``default``."""
    value = getattr(args, key, None)
    if value is not None:
        return value
    return config.get(key, default)
