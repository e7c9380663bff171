"""Derive one block of raw chain rows where it lands (a Dask worker), as the local reader would.

A block is turned into canonical samples exactly as :func:`agepost.chains.iter_chain_chunks`
turns it (burn-in and thinning by step number, :func:`agepost.chains.reader.block_to_samples`
for columns, weights and NaN counts), then derived with :func:`agepost.derive.derive` (in
slices of ``DERIVE_CHUNK_ROWS``, as the local engine does).
These functions import nothing from Dask, so workers need only agepost itself.
"""

from __future__ import annotations

import dataclasses
import warnings
from pathlib import Path

import numpy as np
from numpy.typing import NDArray

from agepost.chains import ReadOptions
from agepost.chains.blocks import RawBlock, burn_and_thin
from agepost.chains.checks import ChainWarning
from agepost.chains.layouts import ChainFile
from agepost.chains.reader import block_to_samples
from agepost.derive import ModelSettings, derive
from agepost.engines.derive_pass import ChunkResult, chunk_result


@dataclasses.dataclass(frozen=True)
class DeriveContext:
    """What every block of a run needs: reading options and the physics."""

    options: ReadOptions
    redshifts: tuple[float, ...]
    model: ModelSettings


@dataclasses.dataclass(frozen=True)
class FileContext:
    """One chain file of the run: its place, its column names, burn-in and first chain id."""

    index: int
    path: str
    source: str
    names: tuple[str, ...]
    burn: int
    last_of_each: bool
    chain_offset: int


def burn_rows(chain: ChainFile, options: ReadOptions) -> int:
    """Rows dropped from the start of each chain of a file (as the reader counts them)."""
    if not isinstance(options.burn_in, float):
        return int(options.burn_in)
    if options.burn_in == 0.0:
        return 0
    return options.burn_in_rows(chain.n_steps())


def derive_raw_block(
    block: RawBlock, file: FileContext, context: DeriveContext
) -> tuple[int, ChunkResult | None]:
    """``(file index, derived chunk)``; the chunk is None when burn-in or thinning left no row."""
    kept = burn_and_thin(
        block, burn=file.burn, thin=context.options.thin, last_of_each=file.last_of_each
    )
    if kept.n_rows == 0:
        return file.index, None
    with warnings.catch_warnings():  # shown once per file by the driver, from its first rows
        warnings.simplefilter("ignore", ChainWarning)
        samples = block_to_samples(kept, context.options, chain_offset=file.chain_offset)
    return file.index, chunk_result(
        samples, derive(samples, context.redshifts, model=context.model)
    )


def derive_array_block(
    values: NDArray, start: int, file: FileContext, context: DeriveContext
) -> tuple[int, ChunkResult | None]:
    """Derive rows ``start:start + len(values)`` of a (rows, columns) array read from HDF5."""
    values = np.asarray(values, dtype=float)
    rows = np.arange(start, start + values.shape[0])
    block = RawBlock(
        columns={name: np.ascontiguousarray(values[:, j]) for j, name in enumerate(file.names)},
        step=rows,
        walker=None,
        row=rows,
        source=file.source,
    )
    return derive_raw_block(block, file, context)


def file_context(
    chain: ChainFile, path: Path, options: ReadOptions, *, index: int, chain_offset: int
) -> FileContext:
    """The context of one opened chain file."""
    return FileContext(
        index=index,
        path=str(path),
        source=str(getattr(chain, "source", path)),
        names=tuple(getattr(chain, "names", ())),
        burn=burn_rows(chain, options),
        last_of_each=chain.last_of_each,
        chain_offset=chain_offset,
    )
