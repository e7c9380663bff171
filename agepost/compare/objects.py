"""Read and check a table of old objects: name, redshift, age and its uncertainty, kind.

CSV with a header row; lines starting with ``#`` are comments. Columns:

- ``name``: unique, non-empty;
- ``z``: redshift at which the object is observed, finite and >= 0;
- ``age_gyr``: age of the object's stars in Gyr, finite and > 0;
- ``age_err_gyr``: one-sigma uncertainty in Gyr (finite, > 0) for ``gaussian`` objects;
  empty or 0 for ``lower_limit`` objects;
- ``kind`` (optional): ``gaussian`` (default; the age is normal with that mean and sigma,
  truncated to positive ages) or ``lower_limit`` (the object is at least ``age_gyr`` old:
  a hard bound).

Other columns are ignored. Every problem names the file, the row (line number) and the
column, and says how to fix it.
"""

from __future__ import annotations

import csv
import dataclasses
import io
import math
from pathlib import Path

from agepost.errors import InputError

KINDS = ("gaussian", "lower_limit")
REQUIRED = ("name", "z", "age_gyr", "age_err_gyr")


@dataclasses.dataclass(frozen=True)
class AgedObject:
    """One object: ``age_err_gyr`` is 0 for a lower limit."""

    name: str
    z: float
    age_gyr: float
    age_err_gyr: float
    kind: str = "gaussian"


def read_objects(path: str | Path) -> list[AgedObject]:
    """Objects of a CSV file, checked (see the module docstring)."""
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise InputError(f"objects file {path} does not exist; check the path") from None
    except (OSError, UnicodeDecodeError) as error:
        raise InputError(f"objects file {path} cannot be read as text: {error}") from None
    numbered = [
        (i, line)
        for i, line in enumerate(text.splitlines(), 1)
        if line.strip() and not line.lstrip().startswith("#")
    ]
    if not numbered:
        raise InputError(
            f"objects file {path} is empty; give a header row {','.join(REQUIRED)},kind "
            "and one row per object"
        )
    reader = csv.reader(io.StringIO("\n".join(line for _, line in numbered)))
    header = [cell.strip() for cell in next(reader)]
    missing = [c for c in REQUIRED if c not in header]
    if missing:
        raise InputError(
            f"objects file {path}: column {missing[0]!r} is missing "
            f"(header has {', '.join(header)}); "
            f"the columns are {', '.join(REQUIRED)} and optionally kind"
        )
    objects: list[AgedObject] = []
    for (line_number, _), cells in zip(numbered[1:], reader, strict=True):
        if len(cells) != len(header):
            raise InputError(
                f"{path} line {line_number}: {len(cells)} cells for {len(header)} columns"
            )
        row = dict(zip(header, (c.strip() for c in cells), strict=True))
        objects.append(_parse_row(row, f"{path} line {line_number}"))
    if not objects:
        raise InputError(f"objects file {path} has a header but no object rows")
    names = [o.name for o in objects]
    duplicate = next((n for n in names if names.count(n) > 1), None)
    if duplicate is not None:
        raise InputError(
            f"objects file {path}: the name {duplicate!r} appears twice; names must be unique"
        )
    return objects


def _number(row: dict[str, str], column: str, where: str) -> float:
    text = row[column]
    try:
        value = float(text)
    except ValueError:
        raise InputError(f"{where}, column {column}: {text!r} is not a number") from None
    if not math.isfinite(value):
        raise InputError(f"{where}, column {column}: {text} is not finite; give a number")
    return value


def _parse_row(row: dict[str, str], where: str) -> AgedObject:
    name = row["name"]
    if not name:
        raise InputError(f"{where}, column name: empty; give every object a name")
    kind = row.get("kind", "") or "gaussian"
    if kind not in KINDS:
        raise InputError(f"{where}, column kind: {kind!r} is unknown; use gaussian or lower_limit")
    z = _number(row, "z", where)
    if z < 0:
        raise InputError(f"{where}, column z: {z} is negative; redshifts are >= 0")
    age = _number(row, "age_gyr", where)
    if age <= 0:
        raise InputError(
            f"{where}, column age_gyr: {age} Gyr is not a positive age; give the age in Gyr"
        )
    if kind == "lower_limit":
        err = _number(row, "age_err_gyr", where) if row["age_err_gyr"] else 0.0
        if err != 0:
            raise InputError(
                f"{where}, column age_err_gyr: a lower_limit is a hard bound at age_gyr; leave "
                "age_err_gyr empty (or 0), or use kind gaussian for an age with an uncertainty"
            )
    else:
        if not row["age_err_gyr"]:
            raise InputError(
                f"{where}, column age_err_gyr: empty; a gaussian age needs its one-sigma "
                "error in Gyr"
            )
        err = _number(row, "age_err_gyr", where)
        if err <= 0:
            raise InputError(f"{where}, column age_err_gyr: {err} must be > 0 for a gaussian age")
    return AgedObject(name=name, z=z, age_gyr=age, age_err_gyr=err, kind=kind)
