"""Read chain files of any supported layout into :class:`SampleSet` objects.

:func:`read_chains` reads everything at once; :func:`iter_chain_chunks` streams blocks of
bounded size for chains larger than memory. Each file is one chain id; layouts with
several walkers (emcee backends) give one chain id per walker.
"""

from __future__ import annotations

import glob
import logging
import warnings
from collections.abc import Iterator, Sequence
from pathlib import Path

import numpy as np
import pandas as pd

from agepost.chains import layouts
from agepost.chains.blocks import RawBlock, burn_and_thin
from agepost.chains.checks import ChainWarning
from agepost.chains.conventions import resolve
from agepost.chains.layouts import ChainFile
from agepost.chains.options import ReadOptions
from agepost.chains.sampleset import SampleSet
from agepost.chains.weights import pick_bookkeeping
from agepost.errors import ChainFormatError

logger = logging.getLogger(__name__)

#: Rows per block for :func:`iter_chain_chunks` (about 60 MB of float64 at 8 columns).
DEFAULT_CHUNK_ROWS = 1_000_000

PathArgument = str | Path | Sequence[str | Path]


def expand_paths(paths: PathArgument) -> list[Path]:
    """One path, a list of paths, or a quoted glob pattern, as existing file paths.

    Raises
    ------
    ChainFormatError
        A path that does not exist, or a pattern that matches nothing.
    """
    items = [paths] if isinstance(paths, str | Path) else list(paths)
    if not items:
        raise ChainFormatError("no chain file given; name one or more files or a quoted glob")
    out: list[Path] = []
    for item in items:
        path = Path(item)
        if path.is_file():
            out.append(path)
        elif glob.has_magic(str(item)):
            matches = sorted(Path(p) for p in glob.glob(str(item)) if Path(p).is_file())
            if not matches:
                raise ChainFormatError(
                    f"the pattern {str(item)!r} matches no file; check the directory"
                )
            out.extend(matches)
        elif path.exists():
            raise ChainFormatError(f"{path} is a directory, not a chain file; name the files in it")
        else:
            raise ChainFormatError(f"{path}: no such chain file; check the path")
    return out


def _burn_rows(chain: ChainFile, blocks: list[RawBlock] | None, options: ReadOptions) -> int:
    """Rows (steps) to drop from the start of each chain of this file."""
    if not isinstance(options.burn_in, float):
        return int(options.burn_in)
    if options.burn_in == 0.0:
        return 0
    if blocks is None:
        return options.burn_in_rows(chain.n_steps())
    n_steps = max((int(b.step.max()) + 1 for b in blocks if b.n_rows), default=0)
    return options.burn_in_rows(n_steps)


def _file_chunks(
    path: Path, options: ReadOptions, *, chunk_rows: int | None, chain_offset: int
) -> Iterator[SampleSet]:
    """SampleSets from one file, burn-in and thinning applied per chain."""
    chain = layouts.open_chain_file(path, options)
    whole = list(chain.blocks(None)) if chunk_rows is None else None
    burn = _burn_rows(chain, whole, options)
    logger.info(
        "%s: %s, %d chain(s), burn-in %d rows per chain, thin %d",
        path,
        type(chain).__name__,
        chain.n_walkers,
        burn,
        options.thin,
    )
    n_kept = 0
    weight_total = 0.0
    for block in whole if whole is not None else chain.blocks(chunk_rows):
        kept = burn_and_thin(block, burn=burn, thin=options.thin, last_of_each=chain.last_of_each)
        if kept.n_rows == 0:
            continue
        if n_kept == 0:
            samples = block_to_samples(kept, options, chain_offset=chain_offset)
        else:  # convention warnings once per file, from its first block
            with warnings.catch_warnings():
                warnings.simplefilter("ignore", ChainWarning)
                samples = block_to_samples(kept, options, chain_offset=chain_offset)
        n_kept += samples.n_samples
        weight_total += float(samples.weights.sum())
        yield samples
    if n_kept == 0:
        raise ChainFormatError(
            f"{path}: burn-in of {burn} rows per chain and thinning by {options.thin} leave no "
            "rows; lower burn_in or thin"
        )
    if weight_total == 0.0:
        raise ChainFormatError(
            f"{path}: every kept weight is zero, so no sample would count; check that the "
            "weight column is the multiplicity column"
        )


def block_to_samples(block: RawBlock, options: ReadOptions, *, chain_offset: int = 0) -> SampleSet:
    """Canonical SampleSet of one block (columns resolved, weights checked, NaN counted)."""
    resolved = resolve(block.columns, options, source=block.source, rows=block.row)
    book = pick_bookkeeping(
        block.columns, options, n_rows=block.n_rows, source=block.source, rows=block.row
    )
    recognition = (*resolved.recognition, *book.recognition)
    notes = [f"{name}: {origin}" for name, origin in recognition if not origin.startswith("absent")]
    notes += resolved.notes
    notes += _nan_notes(resolved.parameters, options, block)
    unused = [c for c in block.columns if c not in resolved.used_columns | book.used_columns]
    if unused:
        notes.append(f"columns not used: {', '.join(unused)}")
    walker = np.zeros(block.n_rows, dtype=np.int64) if block.walker is None else block.walker
    log_posterior = book.log_posterior if book.log_posterior is not None else block.log_posterior
    return SampleSet(
        parameters=resolved.parameters,
        weights=book.weights,
        chain_id=(chain_offset + walker).astype(np.int64),
        fixed=resolved.fixed,
        source=block.source,
        notes=tuple(notes),
        log_posterior=log_posterior,
    )


def _nan_notes(parameters: pd.DataFrame, options: ReadOptions, block: RawBlock) -> list[str]:
    """Count NaN/inf per parameter; refuse them under ``nan_policy = "raise"``."""
    notes = []
    for name in parameters.columns:
        bad = ~np.isfinite(parameters[name].to_numpy(dtype=float))
        if not bad.any():
            continue
        first = int(block.row[int(np.argmax(bad))]) + 1
        if options.nan_policy == "raise":
            raise ChainFormatError(
                f"{block.source}: {name} has {int(bad.sum())} NaN or infinite value(s), first at "
                f'data row {first}; remove those rows or set nan_policy = "exclude"'
            )
        notes.append(
            f"{name}: {int(bad.sum())} NaN or infinite value(s), first at data row {first}; "
            "kept and flagged as non-finite input"
        )
    return notes


def iter_chain_chunks(
    paths: PathArgument, options: ReadOptions | None = None, *, chunk_rows: int = DEFAULT_CHUNK_ROWS
) -> Iterator[SampleSet]:
    """Stream chain files as SampleSets of at most ``chunk_rows`` rows each.

    Memory is bounded by ``chunk_rows`` times the number of columns. Burn-in and thinning
    are applied per chain by step number, so chunk boundaries do not change the result:
    concatenating the chunks gives what :func:`read_chains` gives.

    Parameters
    ----------
    paths : path, list of paths, or a quoted glob pattern
        Each file is one chain id (one per walker for emcee backend files).
    options : ReadOptions, optional
    chunk_rows : int
        Largest number of file rows read at once (>= 1).
    """
    if isinstance(chunk_rows, bool) or not isinstance(chunk_rows, int) or chunk_rows < 1:
        raise ChainFormatError(f"chunk_rows = {chunk_rows!r} must be a whole number >= 1")
    yield from _iter(paths, options or ReadOptions(), chunk_rows)


def _iter(paths: PathArgument, options: ReadOptions, chunk_rows: int | None) -> Iterator[SampleSet]:
    offset = 0
    for path in expand_paths(paths):
        n_walkers = 0
        for samples in _file_chunks(path, options, chunk_rows=chunk_rows, chain_offset=offset):
            n_walkers = max(n_walkers, int(samples.chain_id.max()) - offset + 1)
            yield samples
        offset += n_walkers


def read_chains(paths: PathArgument, options: ReadOptions | None = None) -> SampleSet:
    """Read one or more chain files into one SampleSet.

    Parameters
    ----------
    paths : path, list of paths, or a quoted glob pattern
        Each file is one chain id (emcee backend files: one chain id per walker).
    options : ReadOptions, optional
        Column names, weights, burn-in, thinning, mapping, fixed values, NaN policy.

    Returns
    -------
    SampleSet
        Canonical parameters of every kept row, weights, chain ids; ``notes`` say where
        each parameter came from and what was assumed.
    """
    parts = list(_iter(paths, options or ReadOptions(), None))
    return concatenate(parts)


def concatenate(parts: Sequence[SampleSet]) -> SampleSet:
    """Join SampleSets of the same parameters (files of one run) in order."""
    first = parts[0]
    for part in parts[1:]:
        if (
            list(part.parameters.columns) != list(first.parameters.columns)
            or part.fixed != first.fixed
        ):
            raise ChainFormatError(
                f"{part.source} gives parameters {list(part.parameters.columns)} (fixed "
                f"{part.fixed}) but {first.source} gives {list(first.parameters.columns)} (fixed "
                f"{first.fixed}); chains of one run must carry the same parameters"
            )
    if len(parts) == 1:
        return first
    has_log = all(p.log_posterior is not None for p in parts)
    sources = list(dict.fromkeys(p.source for p in parts))
    return SampleSet(
        parameters=pd.concat([p.parameters for p in parts], ignore_index=True),
        weights=np.concatenate([p.weights for p in parts]),
        chain_id=np.concatenate([p.chain_id for p in parts]),
        fixed=first.fixed,
        source=", ".join(sources),
        notes=tuple(dict.fromkeys(n for p in parts for n in p.notes)),
        log_posterior=np.concatenate([p.log_posterior for p in parts]) if has_log else None,
    )


def recognition_table(
    paths: PathArgument, options: ReadOptions | None = None
) -> list[tuple[str, str]]:
    """Where each parameter comes from, for the first chain file: ``(parameter, origin)``.

    Reads only the first rows of the first file. Parameters the chain lacks appear as
    ``"absent: model default"``; ``weight`` and ``log_posterior`` rows come last.
    """
    options = options or ReadOptions()
    path = expand_paths(paths)[0]
    block = next(iter(layouts.open_chain_file(path, options).blocks(1000)))
    resolved = resolve(block.columns, options, source=block.source, rows=block.row)
    book = pick_bookkeeping(block.columns, options, n_rows=block.n_rows, source=block.source)
    return [*resolved.recognition, *book.recognition]
