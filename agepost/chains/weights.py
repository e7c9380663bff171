"""Find and check a chain's weights and its stored log-posterior column."""

from __future__ import annotations

import dataclasses
import difflib
from collections.abc import Mapping

import numpy as np
from numpy.typing import NDArray

from agepost.chains.checks import row_text
from agepost.chains.options import ReadOptions
from agepost.errors import ChainFormatError

#: Column names taken as weights (multiplicities) without being told.
WEIGHT_ALIASES: tuple[str, ...] = ("weight", "weights", "multiplicity")

#: Column names taken as a log-posterior-like column without being told, with their kind.
LOG_POSTERIOR_ALIASES: dict[str, str] = {
    "log_posterior": "log_posterior",
    "log_prob": "log_posterior",
    "minus_log_posterior": "minus_log_posterior",
    "log_likelihood": "log_likelihood",
}


@dataclasses.dataclass(frozen=True)
class Bookkeeping:
    """Weights and log-posterior of a block of rows, and where they came from.

    ``log_posterior`` is a log-posterior (or log-likelihood, per ``log_posterior_kind``),
    already negated when the column held minus the log-posterior.
    """

    weights: NDArray[np.float64]
    log_posterior: NDArray[np.float64] | None
    recognition: tuple[tuple[str, str], ...]
    used_columns: frozenset[str]


def _require(column: str, columns: Mapping[str, NDArray], *, option: str, source: str) -> None:
    if column not in columns:
        close = difflib.get_close_matches(column, list(columns), n=1, cutoff=0.6)
        hint = (
            f"; did you mean {close[0]!r}?"
            if close
            else f"; the file's columns: {', '.join(columns)}"
        )
        raise ChainFormatError(f"{source}: {option} = {column!r} is not a column of the file{hint}")


def pick_bookkeeping(
    columns: Mapping[str, NDArray],
    options: ReadOptions,
    *,
    n_rows: int,
    source: str,
    rows: NDArray | None = None,
) -> Bookkeeping:
    """Weights (default all ones) and the log-posterior column (default none)."""
    weights, weight_origin, weight_column = _weights(columns, options, n_rows, source, rows)
    log_posterior, log_origin, log_column = _log_posterior(columns, options, source)
    recognition = [("weight", weight_origin)]
    if log_origin is not None:
        recognition.append(("log_posterior", log_origin))
    used = frozenset(c for c in (weight_column, log_column) if c is not None)
    return Bookkeeping(weights, log_posterior, tuple(recognition), used)


def _weights(
    columns: Mapping[str, NDArray],
    options: ReadOptions,
    n_rows: int,
    source: str,
    rows: NDArray | None,
) -> tuple[NDArray, str, str | None]:
    """Checked weights, where they came from, and the column used."""
    if options.log_weight_column is not None:
        name = options.log_weight_column
        _require(name, columns, option="log_weight_column", source=source)
        log_w = np.asarray(columns[name], dtype=float)
        _check_finite(log_w, name, source, rows)
        weights = np.exp(log_w - np.max(log_w)) if n_rows else log_w
        return weights, f"exp(column {name} - its maximum)", name
    if options.weight_column is not None:
        _require(options.weight_column, columns, option="weight_column", source=source)
    found = options.weight_column or next((a for a in WEIGHT_ALIASES if a in columns), None)
    if found is None:
        return np.ones(n_rows), "absent: every row weighs 1", None
    name = found
    weights = np.asarray(columns[name], dtype=float)
    check_weights(weights, column=name, source=source, rows=rows)
    return weights, f"column {name}", name


def _log_posterior(
    columns: Mapping[str, NDArray], options: ReadOptions, source: str
) -> tuple[NDArray | None, str | None, str | None]:
    """The log-posterior-like column (negated if it holds minus the log-posterior)."""
    name = options.log_posterior_column
    kind = options.log_posterior_kind
    if name is None:
        name = next((a for a in LOG_POSTERIOR_ALIASES if a in columns), None)
        if name is None:
            return None, None, None
        kind = LOG_POSTERIOR_ALIASES[name]
    else:
        _require(name, columns, option="log_posterior_column", source=source)
    values = np.asarray(columns[name], dtype=float)
    if kind == "minus_log_posterior":
        return -values, f"minus column {name} (minus log posterior)", name
    return values.copy(), f"column {name} ({kind.replace('_', ' ')})", name


def _check_finite(values: NDArray, column: str | None, source: str, rows: NDArray | None) -> None:
    bad = ~np.isfinite(values)
    if bad.any():
        raise ChainFormatError(
            f"{source}: weight column {column!r} has {int(bad.sum())} NaN or infinite value(s), "
            f"first at {row_text(rows, int(np.argmax(bad)))}; weights must be finite numbers >= 0"
        )


def check_weights(
    weights: NDArray, *, column: str | None, source: str, rows: NDArray | None = None
) -> None:
    """Refuse non-finite or negative weights."""
    _check_finite(weights, column, source, rows)
    negative = weights < 0
    if negative.any():
        row = int(np.argmax(negative))
        raise ChainFormatError(
            f"{source}: weight column {column!r} has {int(negative.sum())} negative value(s), "
            f"first {weights[row]:g} at {row_text(rows, row)}; weights must be >= 0 (if the column "
            "holds log-weights, give it as log_weight_column)"
        )
