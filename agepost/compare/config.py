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

import difflib
import os
from collections.abc import Callable, Mapping
from pathlib import Path
from typing import Any

from agepost.config import load_config
from agepost.errors import ConfigError


def _text(value: Any, where: str) -> str:
    if not isinstance(value, str) or not value.strip():
        raise ConfigError(f"{where} = {value!r} must be a non-empty string")
    return value


def _number(value: Any, where: str) -> float:
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise ConfigError(f"{where} = {value!r} must be a number")
    return float(value)


def _whole(value: Any, where: str) -> int:
    if isinstance(value, bool) or not isinstance(value, int):
        raise ConfigError(f"{where} = {value!r} must be a whole number")
    return int(value)


def _numbers(value: Any, where: str) -> list[float]:
    if not isinstance(value, list):
        raise ConfigError(f"{where} must be a list of numbers, e.g. [0.68, 0.95]")
    return [_number(v, where) for v in value]


def _texts(value: Any, where: str) -> list[str]:
    if not isinstance(value, list) or not value:
        raise ConfigError(f"{where} must be a non-empty list of strings")
    return [_text(v, where) for v in value]


def _burn_in(value: Any, where: str) -> float | int:
    return (
        _whole(value, where)
        if isinstance(value, int) and not isinstance(value, bool)
        else _number(value, where)
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
        "z_max": _number,
        "z": _numbers,
        "burn_in": _burn_in,
    },
    "confront": {
        "run": _text,
        "objects": _text,
        "levels": _numbers,
        "seed": _whole,
        "band_samples": _whole,
        "z_max": _number,
        "burn_in": _burn_in,
    },
    "reweight": {
        "run": _text,
        "kind": _text,
        "age_gyr": _number,
        "age_err_gyr": _number,
        "ess_floor": _number,
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
    _check_keys(document, (command, "output"), str(path))
    table = document.get(command, {})
    output = document.get("output", {})
    allowed = KEYS[command]
    _check_keys(table, tuple(allowed), f"{path} [{command}]")
    _check_keys(output, ("folder",), f"{path} [output]")
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


def _check_keys(table: Any, allowed: tuple[str, ...], where: str) -> None:
    if not isinstance(table, Mapping):
        raise ConfigError(f"{where} must be a table of key = value pairs")
    for key in table:
        if key not in allowed:
            near = difflib.get_close_matches(key, allowed, n=1)
            hint = f"; did you mean {near[0]!r}?" if near else f"; allowed: {', '.join(allowed)}"
            raise ConfigError(f"{where}: unknown key {key!r}{hint}")


def pick(args: Any, config: Mapping[str, Any], key: str, default: Any) -> Any:
    """The command-line value if given (not None), else the configuration's, else ``default``."""
    value = getattr(args, key, None)
    if value is not None:
        return value
    return config.get(key, default)
