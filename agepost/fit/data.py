"""Read the user's distance measurements (tables and covariance files) into checked arrays.

Three kinds of data are understood, each a text table with named columns:

``distance_modulus``
    Distance moduli mu(z) (mag) with their errors. The absolute-magnitude offset is left
    free and marginalised in :mod:`agepost.fit.likelihood`, so only the shape of mu(z)
    matters. Default columns ``z``, ``mu``, ``mu_err``.
``expansion_rate``
    Expansion-rate points H(z) in km/s/Mpc with errors. Default columns ``z``, ``H``,
    ``H_err``.
``sound_horizon_ratio``
    Distance ratios D/r_d: the transverse comoving distance (``DM``), the
    volume-averaged distance (``DV``) or the Hubble distance c/H(z) (``DH``) divided by a
    sound-horizon scale r_d that the fit treats as a parameter. Default columns ``z``,
    ``ratio``, ``ratio_err`` and ``quantity`` (one of DM, DV, DH on each row).

Table layout: ``#`` starts a comment, blank lines are skipped, the first remaining line
names the columns, fields are separated by commas if the header holds a comma and by
white space otherwise. Rows may come in any redshift order and redshifts may repeat; the
order of the rows is the order of a covariance file's rows and columns.

Covariance files hold n x n numbers as text (white space or commas, ``#`` comments), optionally
preceded by the single number n, or a NumPy ``.npy`` array. They must be finite, symmetric
and positive definite (checked by a Cholesky factorisation).
"""

from __future__ import annotations

import dataclasses
import hashlib
import math
from collections.abc import Mapping
from pathlib import Path

import numpy as np
from numpy.typing import NDArray
from scipy.linalg import lapack

from agepost.errors import InputError

DATA_KINDS: tuple[str, ...] = ("distance_modulus", "expansion_rate", "sound_horizon_ratio")
RATIO_QUANTITIES: tuple[str, ...] = ("DM", "DV", "DH")

#: Column names used when the config names none, by data kind and role.
DEFAULT_COLUMNS: dict[str, dict[str, str]] = {
    "distance_modulus": {"z": "z", "value": "mu", "error": "mu_err"},
    "expansion_rate": {"z": "z", "value": "H", "error": "H_err"},
    "sound_horizon_ratio": {
        "z": "z",
        "value": "ratio",
        "error": "ratio_err",
        "quantity": "quantity",
    },
}
#: Largest accepted |C - C^T| relative to the largest |C| entry.
SYMMETRY_TOLERANCE = 1e-10


@dataclasses.dataclass(frozen=True)
class DistanceData:
    """One checked data set of ``n`` measurements.

    Attributes
    ----------
    kind : one of :data:`DATA_KINDS`.
    source : file name, for messages and provenance.
    redshifts : (n,) in file order (z > 0, or z >= 0 for expansion rates).
    values : (n,) measured mu (mag), H (km/s/Mpc) or D/r_d (dimensionless).
    covariance : (n, n) full covariance of ``values`` (errors squared on the diagonal).
    quantities : (n,) ratio kind of each row (DM, DV, DH), or None for other kinds.
    checksums : SHA-256 of every file read, by file name.
    """

    kind: str
    source: str
    redshifts: NDArray[np.float64]
    values: NDArray[np.float64]
    covariance: NDArray[np.float64]
    quantities: tuple[str, ...] | None
    checksums: dict[str, str]

    @property
    def size(self) -> int:
        """Number of measurements."""
        return int(self.values.size)


def load_distance_data(
    path: str | Path,
    *,
    kind: str,
    columns: Mapping[str, str] | None = None,
    covariance_path: str | Path | None = None,
    covariance_includes_errors: bool = True,
) -> DistanceData:
    """Read and check one data set.

    Parameters
    ----------
    path : table file (CSV or white-space separated, with a header line).
    kind : one of :data:`DATA_KINDS`.
    columns : role -> column name overrides (roles ``z``, ``value``, ``error``, ``quantity``).
    covariance_path : optional file with the n x n covariance of the values.
    covariance_includes_errors : if True (default) the covariance file is the full
        covariance and the error column is not needed; if False the squared errors are
        added to its diagonal.
    """
    if kind not in DATA_KINDS:
        raise InputError(
            f"{path}: data kind {kind!r} is unknown; use one of {', '.join(DATA_KINDS)}"
        )
    names = _column_names(kind, columns, path)
    need_errors = covariance_path is None or not covariance_includes_errors
    roles = (
        ["z", "value"]
        + (["error"] if need_errors else [])
        + (["quantity"] if "quantity" in names else [])
    )
    table = _read_table(Path(path), {role: names[role] for role in roles}, text_roles={"quantity"})
    lines = table.pop("_line")
    z = _checked(
        table["z"],
        lines,
        path,
        names["z"],
        minimum=0.0,
        strict=kind != "expansion_rate",
        what="a redshift",
    )
    values = _checked(
        table["value"],
        lines,
        path,
        names["value"],
        minimum=None if kind == "distance_modulus" else 0.0,
        strict=True,
        what="a measurement",
    )
    quantities = _quantities(table.get("quantity"), lines, path, names.get("quantity"))
    checksums = {str(path): _sha256(Path(path))}
    covariance = np.zeros((z.size, z.size))
    if covariance_path is not None:
        covariance = load_covariance(
            covariance_path, z.size, table_path=path, positive_definite=not need_errors
        )
        checksums[str(covariance_path)] = _sha256(Path(covariance_path))
    if need_errors:
        errors = _checked(
            table["error"],
            lines,
            path,
            names["error"],
            minimum=0.0,
            strict=True,
            what="an error (a standard deviation)",
        )
        covariance = covariance + np.diag(errors**2)
        if covariance_path is not None:
            check_covariance(
                covariance, source=f"{covariance_path} plus the squared errors of {path}"
            )
    return DistanceData(kind, str(path), z, values, covariance, quantities, checksums)


def load_covariance(
    path: str | Path,
    n: int,
    *,
    table_path: str | Path = "the data table",
    positive_definite: bool = True,
) -> NDArray[np.float64]:
    """Read an n x n covariance: finite, symmetric and (if asked) positive definite.

    A covariance of systematic errors only, to which the statistical errors are added
    later, may be singular: pass ``positive_definite=False`` and check the sum.
    """
    path = Path(path)
    if path.suffix == ".npy":
        try:
            numbers = np.load(path, allow_pickle=False).astype(float).ravel()
        except (OSError, ValueError) as error:
            raise InputError(
                f"{path}: cannot read the covariance as a .npy array ({error})"
            ) from None
    else:
        numbers = np.array(_numbers_in(path))
    if numbers.size == n * n + 1 and numbers[0] == n:
        numbers = numbers[1:]
    if numbers.size != n * n:
        side = math.isqrt(numbers.size) if numbers.size else 0
        shape = f"{side} x {side}" if side * side == numbers.size else f"{numbers.size} numbers"
        raise InputError(
            f"{path}: covariance holds {shape} but {table_path} has {n} rows; "
            f"give a {n} x {n} matrix in the table's row order"
        )
    matrix = numbers.reshape(n, n)
    check_covariance(matrix, source=str(path), positive_definite=positive_definite)
    return matrix


def check_covariance(
    matrix: NDArray[np.float64], *, source: str, positive_definite: bool = True
) -> None:
    """Raise :class:`InputError` unless ``matrix`` is finite, symmetric and positive definite."""
    if not np.all(np.isfinite(matrix)):
        row, col = np.argwhere(~np.isfinite(matrix))[0]
        raise InputError(
            f"{source}: covariance entry ({row + 1}, {col + 1}) is not a finite number"
        )
    scale = float(np.max(np.abs(matrix))) if matrix.size else 0.0
    asymmetry = np.abs(matrix - matrix.T)
    if asymmetry.size and asymmetry.max() > SYMMETRY_TOLERANCE * scale:
        row, col = np.unravel_index(int(np.argmax(asymmetry)), matrix.shape)
        raise InputError(
            f"{source}: covariance is not symmetric: entry ({row + 1}, {col + 1}) = "
            f"{float(matrix[row, col])!r} "
            f"but ({col + 1}, {row + 1}) = {float(matrix[col, row])!r}; check the file's row order"
        )
    if not positive_definite:
        return
    _, info = lapack.dpotrf(matrix, lower=True, clean=False)
    if info > 0:
        raise InputError(
            f"{source}: covariance is not positive definite (Cholesky factorisation fails at "
            f"row {info}); "
            "check for duplicated rows, a wrong sign or variances given as standard deviations"
        )


def _column_names(kind: str, columns: Mapping[str, str] | None, path: str | Path) -> dict[str, str]:
    names = dict(DEFAULT_COLUMNS[kind])
    for role, name in (columns or {}).items():
        if role not in names:
            raise InputError(
                f"{path}: column role {role!r} is not used by {kind} data; "
                f"roles are {', '.join(names)}"
            )
        if not isinstance(name, str) or not name:
            raise InputError(
                f"{path}: the column name for role {role!r} must be a non-empty string"
            )
        names[role] = name
    return names


def _read_table(path: Path, wanted: dict[str, str], *, text_roles: set[str]) -> dict[str, list]:
    """Columns of a text table by role; ``_line`` holds each row's line number in the file."""
    rows = _data_lines(path)
    if not rows:
        raise InputError(
            f"{path}: the file is empty; it needs a header line and at least one data row"
        )
    header_line, header = rows[0]
    separator = "," if "," in header else None
    names = [name.strip() for name in header.split(separator)]
    missing = [name for name in wanted.values() if name not in names]
    if missing:
        raise InputError(
            f"{path}: column {missing[0]!r} not found in the header (columns: {', '.join(names)}); "
            "rename it in the file or map it under [data.columns] in the config"
        )
    if len(rows) == 1:
        raise InputError(f"{path}: no data rows below the header on line {header_line}")
    index = {role: names.index(name) for role, name in wanted.items()}
    table: dict[str, list] = {role: [] for role in wanted}
    table["_line"] = []
    for line_number, text in rows[1:]:
        fields = [field.strip() for field in text.split(separator)]
        if len(fields) != len(names):
            raise InputError(
                f"{path} line {line_number}: {len(fields)} fields but the header names "
                f"{len(names)} columns"
            )
        for role, position in index.items():
            table[role].append(
                fields[position]
                if role in text_roles
                else _number(fields[position], path, line_number, wanted[role])
            )
        table["_line"].append(line_number)
    return table


def _data_lines(path: Path) -> list[tuple[int, str]]:
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise InputError(f"{path}: file not found; check the path in the config") from None
    except (OSError, UnicodeDecodeError) as error:
        raise InputError(f"{path}: cannot read the file as text ({error})") from None
    rows = []
    for number, line in enumerate(text.splitlines(), start=1):
        stripped = line.split("#", 1)[0].strip()
        if stripped:
            rows.append((number, stripped))
    return rows


def _number(field: str, path: Path, line_number: int, column: str) -> float:
    try:
        return float(field)
    except ValueError:
        raise InputError(
            f"{path} line {line_number}: column {column!r} holds {field!r}, not a number"
        ) from None


def _numbers_in(path: Path) -> list[float]:
    numbers = []
    for line_number, text in _data_lines(path):
        for field in text.replace(",", " ").split():
            numbers.append(_number(field, path, line_number, "covariance"))
    return numbers


def _checked(
    raw: list[float],
    lines: list[int],
    path: str | Path,
    column: str,
    *,
    minimum: float | None,
    strict: bool,
    what: str,
) -> NDArray[np.float64]:
    """Array of a numeric column; NaN, infinities and values below ``minimum`` are refused."""
    values = np.asarray(raw, dtype=float)
    bad = ~np.isfinite(values)
    if minimum is not None:
        bad |= (values <= minimum) if strict else (values < minimum)
    if np.any(bad):
        row = int(np.flatnonzero(bad)[0])
        bound = "" if minimum is None else f": it must be {'>' if strict else '>='} {minimum:g}"
        raise InputError(
            f"{path} line {lines[row]}: column {column!r} holds {float(values[row])!r}, "
            f"which is not {what}{bound}; "
            "fix or remove that row"
        )
    return values


def _quantities(
    raw: list[str] | None, lines: list[int], path: str | Path, column: str | None
) -> tuple[str, ...] | None:
    if raw is None:
        return None
    for text, line_number in zip(raw, lines, strict=True):
        if text not in RATIO_QUANTITIES:
            raise InputError(
                f"{path} line {line_number}: column {column!r} holds {text!r}; use one of "
                f"{', '.join(RATIO_QUANTITIES)} (D_M, D_V or D_H over r_d)"
            )
    return tuple(raw)


def _sha256(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()
