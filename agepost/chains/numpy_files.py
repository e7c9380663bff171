"""Read ``.npy`` and ``.npz`` chains; pickled Python objects are always refused.

* ``.npy``: a 2-D (samples, columns) array with names from the options, or a 1-D
  structured array whose field names are the column names. Memory-mapped, so it streams.
* ``.npz``: one 2-D array (chosen by the ``dataset`` option when there are several) with
  names from a ``names`` string array in the archive or from the options; or only 1-D
  arrays of equal length, each one a column.
"""

from __future__ import annotations

import zipfile
from collections.abc import Iterator
from pathlib import Path

import numpy as np

from agepost.chains.blocks import RawBlock, read_names_file
from agepost.chains.options import ReadOptions
from agepost.errors import ChainFormatError

_PICKLE_FIX = (
    "holds Python objects, which would need unpickling and are refused for safety; save a "
    "plain numeric array instead (numpy.save(..., allow_pickle=False))"
)


def _names(path: Path, options: ReadOptions, stored: tuple[str, ...] | None) -> tuple[str, ...]:
    if options.names is not None:
        return options.names
    if options.names_file is not None:
        return read_names_file(options.names_file)
    if stored is None:
        raise ChainFormatError(
            f"{path}: the array carries no column names; give names = [...] or names_file "
            "in the [chain] table, or --names"
        )
    return stored


def _columns_of(
    array: np.ndarray, names: tuple[str, ...] | None, source: str
) -> dict[str, np.ndarray]:
    """Column views of a structured array or of a 2-D array with names."""
    if array.dtype.names is not None:
        return {name: array[name] for name in array.dtype.names}
    if array.ndim != 2 or names is None or len(names) != array.shape[1]:
        count = "no" if names is None else len(names)
        raise ChainFormatError(
            f"{source}: array of shape {array.shape} with {count} column names; a chain must be "
            "a 2-D (samples, columns) array with one name per column"
        )
    return {name: array[:, j] for j, name in enumerate(names)}


class ArrayChain:
    """Columns held as (possibly memory-mapped) arrays; one chain id."""

    n_walkers = 1
    last_of_each = False

    def __init__(self, columns: dict[str, np.ndarray], source: str) -> None:
        lengths = {len(v) for v in columns.values()}
        if len(lengths) != 1:
            raise ChainFormatError(
                f"{source}: the columns have different lengths; one value per sample"
            )
        self.columns = columns
        self.source = source
        self.rows = lengths.pop()

    def n_steps(self) -> int:
        """Number of rows."""
        return self.rows

    def blocks(self, chunk_rows: int | None) -> Iterator[RawBlock]:
        """Rows in slices of at most ``chunk_rows``."""
        if self.rows == 0:
            raise ChainFormatError(f"{self.source}: the array has no rows")
        step = chunk_rows or self.rows
        for start in range(0, self.rows, step):
            stop = min(start + step, self.rows)
            try:
                block = {k: np.asarray(v[start:stop], dtype=float) for k, v in self.columns.items()}
            except (TypeError, ValueError):
                raise ChainFormatError(
                    f"{self.source}: the array holds non-numeric values"
                ) from None
            rows = np.arange(start, stop)
            yield RawBlock(columns=block, step=rows, walker=None, row=rows, source=self.source)


def open_npy(path: Path, options: ReadOptions) -> ArrayChain:
    """A ``.npy`` file, memory-mapped; object arrays refused before any unpickling."""
    try:
        array = np.load(path, mmap_mode="r", allow_pickle=False)
    except ValueError as error:
        if "Python objects" in str(error) or "allow_pickle" in str(error):
            raise ChainFormatError(f"{path}: {_PICKLE_FIX}") from None
        raise ChainFormatError(
            f"{path}: not a readable .npy file ({error}); it may be damaged"
        ) from None
    except OSError as error:
        raise ChainFormatError(
            f"{path}: not a readable .npy file ({error}); it may be truncated"
        ) from None
    names = None if array.dtype.names is not None else _names(path, options, None)
    return ArrayChain(_columns_of(array, names, str(path)), str(path))


def open_npz(path: Path, options: ReadOptions) -> ArrayChain:
    """A ``.npz`` archive of one 2-D array (plus names) or of 1-D columns."""
    try:
        with open(path, "rb") as handle, np.load(handle, allow_pickle=False) as archive:
            arrays = {key: archive[key] for key in archive.files}
    except ValueError as error:
        if "allow_pickle" in str(error) or "object" in str(error).lower():
            raise ChainFormatError(f"{path}: an array in the archive {_PICKLE_FIX}") from None
        raise ChainFormatError(f"{path}: not a readable .npz archive ({error})") from None
    except (zipfile.BadZipFile, OSError, EOFError) as error:
        raise ChainFormatError(
            f"{path}: not a readable .npz archive ({error}); the file may be truncated"
        ) from None
    stored = arrays.pop("names", None)
    stored_names = None if stored is None else tuple(str(n) for n in np.ravel(stored))
    if options.dataset is not None:
        if options.dataset not in arrays:
            raise ChainFormatError(
                f"{path}: no array {options.dataset!r} in the archive; it has {', '.join(arrays)}"
            )
        arrays = {options.dataset: arrays[options.dataset]}
    tables = [k for k, v in arrays.items() if v.ndim == 2 or v.dtype.names is not None]
    if len(tables) == 1 and len(arrays) == 1:
        array = arrays[tables[0]]
        names = None if array.dtype.names is not None else _names(path, options, stored_names)
        return ArrayChain(_columns_of(array, names, f"{path}:{tables[0]}"), f"{path}:{tables[0]}")
    if tables:
        raise ChainFormatError(
            f"{path}: several arrays ({', '.join(arrays)}); choose the chain with dataset = "
            '"..." in the [chain] table or --dataset'
        )
    if not arrays:
        raise ChainFormatError(f"{path}: the archive holds no arrays")
    return ArrayChain(dict(arrays), str(path))
