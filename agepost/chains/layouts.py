"""Decide a chain file's layout from its content and open it with the matching reader."""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path
from typing import Protocol

from agepost.chains.blocks import RawBlock
from agepost.chains.emcee_backend import EmceeChain
from agepost.chains.hdf5 import Hdf5Chain, choose_dataset, is_emcee_group, open_hdf5
from agepost.chains.numpy_files import open_npy, open_npz
from agepost.chains.options import ReadOptions
from agepost.chains.text import GZIP_MAGIC, TextChain
from agepost.errors import ChainFormatError

HDF5_MAGIC = b"\x89HDF\r\n\x1a\n"
NPY_MAGIC = b"\x93NUMPY"
ZIP_MAGIC = b"PK\x03\x04"


class ChainFile(Protocol):
    """What a layout reader offers for one opened file."""

    #: Chains (walkers) in the file; each becomes a chain id.
    n_walkers: int
    #: Thin from the last step of each group (emcee's convention) instead of the first.
    last_of_each: bool

    def n_steps(self) -> int:
        """Rows per chain (steps per walker) before burn-in."""
        ...

    def blocks(self, chunk_rows: int | None) -> Iterator[RawBlock]:
        """Rows in file order, in blocks of at most ``chunk_rows`` (None: one block)."""
        ...


def detect_layout(path: Path, options: ReadOptions) -> str:
    """``"text"``, ``"hdf5"``, ``"npy"`` or ``"npz"`` from the file's first bytes.

    The ``layout`` option wins when set. emcee backends are HDF5 files; the HDF5 reader
    recognises them.
    """
    if options.layout is not None:
        return "hdf5" if options.layout == "emcee" else options.layout
    try:
        with open(path, "rb") as handle:
            start = handle.read(8)
    except OSError as error:
        raise ChainFormatError(f"{path}: cannot be opened ({error.strerror})") from None
    if start.startswith(HDF5_MAGIC):
        return "hdf5"
    if start.startswith(NPY_MAGIC):
        return "npy"
    if start.startswith(ZIP_MAGIC):
        return "npz"
    if start.startswith(GZIP_MAGIC):
        return "text"
    if b"\x00" in start:
        raise ChainFormatError(
            f"{path}: binary content that is not HDF5, .npy or .npz; convert the chain to one "
            "of those or to text"
        )
    return "text"


def open_chain_file(path: Path, options: ReadOptions) -> ChainFile:
    """Open ``path`` with the reader of its layout."""
    layout = detect_layout(path, options)
    if layout == "npy":
        return open_npy(path, options)
    if layout == "npz":
        return open_npz(path, options)
    if layout == "hdf5":
        with open_hdf5(path) as handle:
            dataset = choose_dataset(handle, path, options)
            emcee = is_emcee_group(handle[dataset])
        if options.layout == "emcee" and not emcee:
            raise ChainFormatError(
                f"{path}: {dataset} is not an emcee backend group (no nwalkers/iteration "
                'attributes and chain dataset); drop layout = "emcee" or name the group'
            )
        if emcee:
            return EmceeChain(path, options, dataset)
        return Hdf5Chain(path, options, dataset)
    return TextChain(path, options)
