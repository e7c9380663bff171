"""Read emcee's own HDF5 backend files: each walker is a chain, log-probabilities kept.

The backend stores ``chain`` (steps, walkers, parameters) and ``log_prob`` (steps,
walkers) in a group (``mcmc`` unless the run chose another name) with the completed step
count in its ``iteration`` attribute. Parameter names are not stored by emcee, so they
come from the ``names`` option, a names file, or a names attribute on the group.

Burn-in and thinning follow the backend's own ``get_chain(discard=, thin=)``: the kept
steps are ``burn + thin - 1, burn + 2 thin - 1, ...``, so a read here matches what emcee
itself returns. Rows come step by step (all walkers of a step together), as emcee's
flattened chain does.
"""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path

import numpy as np

from agepost.chains.blocks import RawBlock, read_names_file
from agepost.chains.hdf5 import NAME_ATTRIBUTES, open_hdf5, stored_names
from agepost.chains.options import ReadOptions
from agepost.errors import ChainFormatError


class EmceeChain:
    """One emcee backend group; ``n_walkers`` chain ids."""

    #: Burn-in and thinning follow emcee's convention (see the module docstring).
    last_of_each = True

    def __init__(self, path: Path, options: ReadOptions, group: str) -> None:
        self.path = path
        self.group = group
        self.source = f"{path}:{group}"
        with open_hdf5(path) as handle:
            node = handle[group]
            self.n_walkers = int(node.attrs["nwalkers"])
            self.iteration = int(node.attrs["iteration"])
            shape = node["chain"].shape
            names = self._names(node, options)
        if len(shape) != 3 or shape[1] != self.n_walkers or shape[0] < self.iteration:
            raise ChainFormatError(
                f"{self.source}: chain dataset of shape {shape} does not match the backend's "
                f"{self.n_walkers} walkers and {self.iteration} steps; the file is damaged"
            )
        if len(names) != shape[2]:
            raise ChainFormatError(
                f"{self.source}: {len(names)} names for {shape[2]} parameters; give one name "
                "per parameter, in the order the sampler used"
            )
        self.names = names

    def _names(self, node, options: ReadOptions) -> tuple[str, ...]:  # noqa: ANN001 - h5py.Group
        if options.names is not None:
            return options.names
        if options.names_file is not None:
            return read_names_file(options.names_file)
        names = stored_names(node)
        if names is None:
            raise ChainFormatError(
                f"{self.source}: emcee backends store no parameter names; give names = [...] "
                f"or names_file in the [chain] table, or --names (or set a "
                f"{NAME_ATTRIBUTES[0]!r} attribute on the group)"
            )
        return names

    def n_steps(self) -> int:
        """Completed steps per walker."""
        return self.iteration

    def blocks(self, chunk_rows: int | None) -> Iterator[RawBlock]:
        """All walkers of consecutive steps, at most ``chunk_rows`` rows per block."""
        if self.iteration == 0:
            raise ChainFormatError(f"{self.source}: the backend holds no completed steps")
        steps_per_block = (
            self.iteration if chunk_rows is None else max(1, chunk_rows // self.n_walkers)
        )
        with open_hdf5(self.path) as handle:
            node = handle[self.group]
            for start in range(0, self.iteration, steps_per_block):
                stop = min(start + steps_per_block, self.iteration)
                yield self._block(node, start, stop)

    def _block(self, node, start: int, stop: int) -> RawBlock:  # noqa: ANN001 - h5py.Group
        try:
            chain = np.asarray(node["chain"][start:stop], dtype=float)
            log_prob = np.asarray(node["log_prob"][start:stop], dtype=float)
        except (OSError, KeyError) as error:
            raise ChainFormatError(
                f"{self.source}: steps {start + 1}-{stop} cannot be read ({error}); the file "
                "is truncated or corrupt"
            ) from None
        n_steps = stop - start
        flat = chain.reshape(n_steps * self.n_walkers, len(self.names))
        steps = np.repeat(np.arange(start, stop), self.n_walkers)
        walkers = np.tile(np.arange(self.n_walkers), n_steps)
        return RawBlock(
            columns={name: np.ascontiguousarray(flat[:, j]) for j, name in enumerate(self.names)},
            step=steps,
            walker=walkers,
            row=steps * self.n_walkers + walkers,
            source=self.source,
            log_posterior=log_prob.reshape(-1),
        )
