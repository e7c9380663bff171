"""Read HDF5 chains: a 2-D dataset with a names attribute, or a group of 1-D datasets.

The dataset (or group) is named by the ``dataset`` option or found as the only candidate
in the file. Rows are read in slices, so a chain larger than memory streams. emcee's own
backend groups are handled by :mod:`agepost.chains.emcee_backend`.
"""

from __future__ import annotations

import contextlib
from collections.abc import Iterator
from pathlib import Path

import h5py
import numpy as np

from agepost.chains.blocks import RawBlock, read_names_file
from agepost.chains.options import ReadOptions
from agepost.errors import ChainFormatError

#: Attributes of a 2-D dataset (or of its parent group) that may hold the column names.
NAME_ATTRIBUTES: tuple[str, ...] = ("names", "columns", "parameter_names")


@contextlib.contextmanager
def open_hdf5(path: Path) -> Iterator[h5py.File]:
    """Open read-only, turning a truncated or corrupt file into a ChainFormatError."""
    try:
        handle = h5py.File(path, "r")
    except OSError as error:
        raise ChainFormatError(
            f"{path}: cannot be read as HDF5 ({str(error).split('(')[0].strip()}); the file is "
            "truncated or corrupt: copy it again from its source"
        ) from None
    with handle:
        yield handle


def is_emcee_group(node: h5py.Group | h5py.Dataset) -> bool:
    """True for a group laid out by emcee's HDF5 backend."""
    return (
        isinstance(node, h5py.Group)
        and "nwalkers" in node.attrs
        and "iteration" in node.attrs
        and isinstance(node.get("chain"), h5py.Dataset)
    )


def _is_column_group(node: h5py.Group) -> bool:
    members = list(node.values())
    return bool(members) and all(isinstance(m, h5py.Dataset) and m.ndim == 1 for m in members)


def candidates(handle: h5py.File) -> list[str]:
    """Paths that could hold a chain: emcee groups, 2-D datasets, groups of 1-D datasets."""
    found: list[str] = []

    def visit(name: str, node: h5py.Group | h5py.Dataset) -> None:
        if any(name.startswith(f + "/") for f in found if is_emcee_group(handle[f])):
            return
        if is_emcee_group(node) or (isinstance(node, h5py.Dataset) and node.ndim == 2):
            found.append(name)
        elif isinstance(node, h5py.Group) and _is_column_group(node):
            found.append(name)

    if _is_column_group(handle):
        found.append("/")
    handle.visititems(visit)
    return found


def choose_dataset(handle: h5py.File, path: Path, options: ReadOptions) -> str:
    """The HDF5 path to read: the ``dataset`` option, or the only candidate."""
    if options.dataset is not None:
        if options.dataset not in handle:
            raise ChainFormatError(
                f"{path}: no dataset or group {options.dataset!r}; the file has "
                f"{', '.join(candidates(handle)) or 'no usable dataset'}"
            )
        return options.dataset
    found = candidates(handle)
    if len(found) == 1:
        return found[0]
    if not found:
        raise ChainFormatError(
            f"{path}: no 2-D dataset, group of 1-D datasets or emcee group found; check the file"
        )
    raise ChainFormatError(
        f"{path}: several possible chains ({', '.join(found)}); choose one with dataset = "
        '"..." in the [chain] table or --dataset'
    )


def _decode(values: np.ndarray | list | str) -> tuple[str, ...]:
    items = [values] if isinstance(values, str | bytes) else list(np.asarray(values).ravel())
    return tuple(v.decode() if isinstance(v, bytes) else str(v) for v in items)


def stored_names(node: h5py.Dataset | h5py.Group) -> tuple[str, ...] | None:
    """Column names stored as an attribute of ``node`` (see :data:`NAME_ATTRIBUTES`)."""
    for attribute in NAME_ATTRIBUTES:
        if attribute in node.attrs:
            return _decode(node.attrs[attribute])
    return None


def column_names(
    node: h5py.Dataset | h5py.Group, path: Path, options: ReadOptions
) -> tuple[str, ...]:
    """Names from the options, the names file, or the stored attribute, in that order."""
    if options.names is not None:
        return options.names
    if options.names_file is not None:
        return read_names_file(options.names_file)
    names = stored_names(node)
    if names is None:
        raise ChainFormatError(
            f"{path}: {node.name} has no names attribute ({', '.join(NAME_ATTRIBUTES)}); give "
            "names = [...] or names_file in the [chain] table, or --names"
        )
    return names


class Hdf5Chain:
    """A 2-D dataset or a group of 1-D datasets in an HDF5 file (one chain id)."""

    n_walkers = 1
    last_of_each = False

    def __init__(self, path: Path, options: ReadOptions, dataset: str) -> None:
        self.path = path
        self.dataset = dataset
        self.source = f"{path}:{dataset}"
        with open_hdf5(path) as handle:
            node = handle[dataset]
            if isinstance(node, h5py.Group):
                lengths = {name: member.shape[0] for name, member in node.items()}
                if len(set(lengths.values())) > 1:
                    raise ChainFormatError(
                        f"{self.source}: the 1-D datasets have different lengths "
                        f"({', '.join(f'{k}: {v}' for k, v in lengths.items())}); every column "
                        "needs one value per sample"
                    )
                self.names = tuple(lengths)
                self.transposed = False
                self.rows = next(iter(lengths.values()))
                return
            if node.ndim != 2:
                raise ChainFormatError(
                    f"{self.source}: dataset has shape {node.shape}; a chain must be a 2-D "
                    "(samples, columns) dataset or a group of 1-D datasets"
                )
            self.names = column_names(node, path, options)
            # (columns, samples) storage: names match the first axis and it is the shorter
            self.transposed = len(self.names) == node.shape[0] < node.shape[1] and (
                len(self.names) != node.shape[1]
            )
            if len(self.names) not in (node.shape[1], node.shape[0]):
                raise ChainFormatError(
                    f"{self.source}: {len(self.names)} column names for a dataset of shape "
                    f"{node.shape}; give one name per column"
                )
            self.rows = node.shape[1] if self.transposed else node.shape[0]

    def n_steps(self) -> int:
        """Number of rows."""
        return self.rows

    def blocks(self, chunk_rows: int | None) -> Iterator[RawBlock]:
        """Rows in slices of at most ``chunk_rows``."""
        if self.rows == 0:
            raise ChainFormatError(f"{self.source}: the dataset has no rows")
        step = chunk_rows or self.rows
        with open_hdf5(self.path) as handle:
            node = handle[self.dataset]
            for start in range(0, self.rows, step):
                stop = min(start + step, self.rows)
                yield RawBlock(
                    columns=self._read(node, start, stop),
                    step=np.arange(start, stop),
                    walker=None,
                    row=np.arange(start, stop),
                    source=self.source,
                )

    def _read(
        self, node: h5py.Group | h5py.Dataset, start: int, stop: int
    ) -> dict[str, np.ndarray]:
        try:
            if isinstance(node, h5py.Group):
                return {n: np.asarray(node[n][start:stop], dtype=float) for n in self.names}
            values = node[:, start:stop].T if self.transposed else node[start:stop]
            values = np.asarray(values, dtype=float)
        except (OSError, ValueError, TypeError) as error:
            raise ChainFormatError(
                f"{self.source}: rows {start + 1}-{stop} cannot be read as numbers ({error}); "
                "the file may be truncated or hold non-numeric data"
            ) from None
        return {name: np.ascontiguousarray(values[:, j]) for j, name in enumerate(self.names)}
