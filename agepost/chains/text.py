"""Read text chains: comma, tab or whitespace separated, plain or gzip-compressed.

Column names come from, in order: the ``names`` option, the ``names_file`` sidecar, a
header row (the first non-comment line, when it is not all numbers), or a commented
header (the last ``#`` line before the data, when its name count matches the data).
Lines starting with ``#`` and blank lines are skipped. Problems are reported with the
line number in the file (counting from 1).
"""

from __future__ import annotations

import dataclasses
import gzip
import io
from collections.abc import Iterator
from pathlib import Path

import numpy as np
import pandas as pd

from agepost.chains.blocks import RawBlock, read_names_file
from agepost.chains.options import SEPARATORS, ReadOptions
from agepost.errors import ChainFormatError

GZIP_MAGIC = b"\x1f\x8b"


def is_gzip(path: Path) -> bool:
    """True when the file starts with the gzip signature."""
    with open(path, "rb") as handle:
        return handle.read(2) == GZIP_MAGIC


def _open_text(path: Path) -> io.TextIOBase:
    if is_gzip(path):
        return io.TextIOWrapper(gzip.open(path, "rb"), encoding="utf-8", errors="replace")
    return open(path, encoding="utf-8", errors="replace")


@dataclasses.dataclass(frozen=True)
class TextLayout:
    """What sniffing the start of a text chain found."""

    names: tuple[str, ...]
    separator: str
    skip_lines: int
    gzip: bool
    header: str


def _is_number(token: str) -> bool:
    try:
        float(token)
    except ValueError:
        return False
    return True


def _split(line: str, separator: str) -> list[str]:
    if separator == r"\s+":
        return line.split()
    return [t.strip().strip('"').strip("'") for t in line.rstrip("\r\n").split(separator)]


def _detect_separator(line: str) -> str:
    if "," in line:
        return ","
    if "\t" in line.strip():
        return "\t"
    return r"\s+"


def sniff(path: Path, options: ReadOptions) -> TextLayout:
    """Names, separator and where the data starts, from the first lines of the file."""
    last_comment = None
    first_line = None
    skip = 0
    with _open_text(path) as handle:
        for line in handle:
            stripped = line.strip()
            if stripped and not stripped.startswith("#"):
                first_line = line
                break
            if stripped.startswith("#"):
                last_comment = stripped.lstrip("#").strip()
            skip += 1
    if first_line is None:
        raise ChainFormatError(f"{path}: the file is empty (no data rows); check the file name")
    separator = (
        SEPARATORS[options.separator] if options.separator else _detect_separator(first_line)
    )
    tokens = _split(first_line, separator)
    has_header = not all(_is_number(t) for t in tokens)
    n_fields = len(tokens)
    data_skip = skip + 1 if has_header else skip
    if options.names is not None:
        names, header = options.names, "the names option"
    elif options.names_file is not None:
        names, header = read_names_file(options.names_file), f"names file {options.names_file}"
    elif has_header:
        names, header = tuple(tokens), f"header row at line {skip + 1}"
    elif (
        last_comment
        and len(_split(last_comment, separator)) == n_fields
        and not any(_is_number(t) for t in _split(last_comment, separator))
    ):
        names, header = tuple(_split(last_comment, separator)), f"commented header at line {skip}"
    else:
        raise ChainFormatError(
            f"{path}: no column names (line {skip + 1} is all numbers and no commented header "
            f"matches its {n_fields} fields); give names = [...] or names_file in the [chain] "
            "table, or --names"
        )
    _check_names(path, names, header)
    if len(names) != n_fields:
        raise ChainFormatError(
            f"{path}: {header} gives {len(names)} names but line {data_skip + 1} has "
            f"{n_fields} fields; give one name per column"
        )
    return TextLayout(names, separator, data_skip, is_gzip(path), header)


def _check_names(path: Path, names: tuple[str, ...], header: str) -> None:
    seen: set[str] = set()
    for name in names:
        if name in seen:
            raise ChainFormatError(
                f"{path}: column {name!r} appears twice in the {header}; rename one of them "
                "or give names = [...]"
            )
        seen.add(name)


def _frames(path: Path, layout: TextLayout, chunk_rows: int | None) -> Iterator[pd.DataFrame]:
    reader = pd.read_csv(
        path,
        sep=layout.separator,
        header=None,
        names=list(layout.names),
        skiprows=layout.skip_lines,
        comment="#",
        dtype=float,
        skip_blank_lines=True,
        compression="gzip" if layout.gzip else None,
        engine="c",
        chunksize=chunk_rows,
    )
    if chunk_rows is None:
        yield reader
        return
    with reader:
        yield from reader


def find_bad_line(path: Path, layout: TextLayout) -> str | None:
    """A message for the first data line with a wrong field count or an empty field."""
    n_fields = len(layout.names)
    with _open_text(path) as handle:
        for number, line in enumerate(handle, start=1):
            stripped = line.strip()
            if number <= layout.skip_lines or not stripped or stripped.startswith("#"):
                continue
            tokens = _split(line, layout.separator)
            if len(tokens) != n_fields:
                return (
                    f"{path}: line {number} has {len(tokens)} fields but the {layout.header} "
                    f"names {n_fields} columns; fix or remove that line"
                )
            for column, token in zip(layout.names, tokens, strict=True):
                if not token:
                    return (
                        f"{path}: line {number}, column {column!r} is empty; fill it or remove "
                        "the line"
                    )
                if not _is_number(token):
                    return (
                        f"{path}: line {number}, column {column!r} holds {token!r}, not a number; "
                        "fix that line"
                    )
    return None


def iter_text_blocks(
    path: Path, options: ReadOptions, *, chunk_rows: int | None
) -> Iterator[RawBlock]:
    """Blocks of rows of one text chain (one chain id), in file order."""
    layout = sniff(path, options)
    start = 0
    checked = False
    frames = _frames(path, layout, chunk_rows)
    while True:
        try:
            frame = next(frames)
        except StopIteration:
            break
        except (pd.errors.ParserError, ValueError) as error:
            raise ChainFormatError(
                find_bad_line(path, layout) or f"{path}: cannot be read ({error})"
            ) from None
        if not checked and frame.isna().to_numpy().any():
            problem = find_bad_line(path, layout)
            if problem:
                raise ChainFormatError(problem)
            checked = True
        n = len(frame)
        columns = {name: frame[name].to_numpy(dtype=float) for name in layout.names}
        steps = np.arange(start, start + n)
        yield RawBlock(columns=columns, step=steps, walker=None, row=steps, source=str(path))
        start += n
    if start == 0:
        raise ChainFormatError(f"{path}: the file has a header but no data rows")


def count_text_rows(path: Path, options: ReadOptions) -> int:
    """Number of data rows (for a burn-in given as a fraction when streaming)."""
    layout = sniff(path, options)
    count = 0
    with _open_text(path) as handle:
        for number, line in enumerate(handle, start=1):
            stripped = line.strip()
            if number > layout.skip_lines and stripped and not stripped.startswith("#"):
                count += 1
    return count


class TextChain:
    """One text chain file (one chain id) opened for reading."""

    n_walkers = 1
    last_of_each = False

    def __init__(self, path: Path, options: ReadOptions) -> None:
        self.path = path
        self.options = options
        sniff(path, options)

    def n_steps(self) -> int:
        """Number of data rows."""
        return count_text_rows(self.path, self.options)

    def blocks(self, chunk_rows: int | None) -> Iterator[RawBlock]:
        """Rows in blocks of at most ``chunk_rows`` (all at once for None)."""
        return iter_text_blocks(self.path, self.options, chunk_rows=chunk_rows)
