"""Decide a chain file's layout from its content and open it with the matching reader."""

from __future__ import annotations

from pathlib import Path

from agepost.chains.options import ReadOptions
from agepost.chains.text import GZIP_MAGIC, TextChain
from agepost.errors import ChainFormatError

HDF5_MAGIC = b"\x89HDF\r\n\x1a\n"
NPY_MAGIC = b"\x93NUMPY"
ZIP_MAGIC = b"PK\x03\x04"


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


def open_chain_file(path: Path, options: ReadOptions):  # noqa: ANN201 - a reader.ChainFile
    """Open ``path`` with the reader of its layout."""
    layout = detect_layout(path, options)
    if layout == "text":
        return TextChain(path, options)
    raise ChainFormatError(f"{path}: the {layout} layout is not supported yet; convert it to text")
