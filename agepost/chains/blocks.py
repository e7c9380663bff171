"""Blocks of raw chain rows as the layout readers hand them over, and burn-in/thinning."""

from __future__ import annotations

import dataclasses
from pathlib import Path

import numpy as np
from numpy.typing import NDArray

from agepost.errors import ChainFormatError


@dataclasses.dataclass(frozen=True)
class RawBlock:
    """Consecutive rows of one chain file, columns under the file's own names.

    Attributes
    ----------
    columns : dict of column name -> (n_rows,) float array
    step : (n_rows,) int
        Position of each row in its chain (the step, for walker layouts), from 0.
    walker : (n_rows,) int or None
        Chain within the file (walker number) for layouts with several; None for one.
    row : (n_rows,) int
        Row number in the file's data, from 0 (for messages).
    source : str
        File name (and dataset) for messages.
    log_posterior : (n_rows,) float or None
        Log-probabilities the layout itself stores (emcee backends), if any.
    """

    columns: dict[str, NDArray[np.float64]]
    step: NDArray[np.int64]
    walker: NDArray[np.int64] | None
    row: NDArray[np.int64]
    source: str
    log_posterior: NDArray[np.float64] | None = None

    @property
    def n_rows(self) -> int:
        """Number of rows in the block."""
        return len(self.step)

    def subset(self, keep: NDArray[np.bool_]) -> RawBlock:
        """The rows where ``keep`` is true."""
        return RawBlock(
            columns={k: v[keep] for k, v in self.columns.items()},
            step=self.step[keep],
            walker=None if self.walker is None else self.walker[keep],
            row=self.row[keep],
            source=self.source,
            log_posterior=None if self.log_posterior is None else self.log_posterior[keep],
        )


def burn_and_thin(block: RawBlock, *, burn: int, thin: int, last_of_each: bool = False) -> RawBlock:
    """Drop steps before ``burn`` and keep every ``thin``-th step after it.

    By default the kept steps are ``burn, burn + thin, ...``. With ``last_of_each`` they
    are ``burn + thin - 1, burn + 2 thin - 1, ...`` (the last step of each group of
    ``thin``), the convention of emcee's own ``get_chain(discard=, thin=)``. Works on any
    block of a chain because it looks only at each row's step number, so chunk
    boundaries do not matter.
    """
    first = burn + (thin - 1 if last_of_each else 0)
    if first == 0 and thin == 1:
        return block
    after = block.step - first
    return block.subset((after >= 0) & (after % thin == 0))


def read_names_file(path: Path) -> tuple[str, ...]:
    """Column names from a sidecar file: one per line, the first token is the name.

    Blank lines and lines starting with ``#`` are skipped.
    """
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8", errors="replace")
    except OSError as error:
        raise ChainFormatError(
            f"names file {path} cannot be read ({error.strerror}); check the path"
        ) from None
    names = tuple(
        line.split()[0]
        for line in text.splitlines()
        if line.strip() and not line.lstrip().startswith("#")
    )
    if not names:
        raise ChainFormatError(f"names file {path} holds no names; write one column name per line")
    return names
