"""The Dask engine: chunks derived and passes computed on a ``dask.distributed`` cluster.

Reading
    An HDF5 chain (a 2-D dataset or a group of 1-D datasets) becomes a chunked
    ``dask.array`` read by the workers themselves through h5py; each block is derived by
    :func:`agepost.engines.chunk_tasks.derive_array_block` (``to_delayed`` blocks, one task
    each). Other layouts (text through pandas chunks, gzip, npy/npz, emcee backends) are
    read by this process in blocks, each block sent to a worker inside its task.
Order and memory
    At most ``2 x workers`` tasks are in flight; results come back in chain order and are
    written by this process, so the samples file is the same as with the local engine.
Faults
    A worker that dies has its tasks rerun elsewhere by the scheduler; if the scheduler
    gives up (``distributed.scheduler.allowed-failures``), the run stops with a
    ComputationError and, as every output is staged, nothing is written. No summary is
    ever made from part of the chain.
Clusters
    ``scheduler=None`` starts a local cluster (one single-threaded worker process per core,
    without Dask's default ``MALLOC_TRIM_THRESHOLD_``, see :data:`TRIM_SETTING`) and closes
    it at the end. With a scheduler address, the workers must see the chain files and the
    output folder at the same paths and have agepost installed.
"""

from __future__ import annotations

import logging
import os
from collections import deque
from collections.abc import Callable, Iterable, Iterator
from pathlib import Path
from typing import Any

from agepost.chains import layouts
from agepost.chains.hdf5 import Hdf5Chain
from agepost.chains.reader import block_to_samples, expand_paths
from agepost.engines.chunk_tasks import (
    DeriveContext,
    FileContext,
    derive_array_block,
    derive_raw_block,
    file_context,
)
from agepost.engines.derive_pass import ChunkResult
from agepost.errors import ChainFormatError, ComputationError, ConfigError

logger = logging.getLogger(__name__)

#: Seconds allowed to reach a scheduler given with ``--scheduler``.
CONNECT_TIMEOUT_S = 10
#: Dask's default sets this allocator variable in every worker, which turns each large
#: temporary array into fresh pages from the system: the derivation ran 2 to 2.5 times
#: slower per core. Local clusters started here leave it unset.
TRIM_SETTING = "distributed.nanny.pre-spawn-environ.MALLOC_TRIM_THRESHOLD_"
#: Rows of each file read by this process first, so reader warnings show here.
PREFLIGHT_ROWS = 1000
MISSING_DASK = (
    "--engine dask needs the optional Dask packages; install them with: pip install 'agepost[dask]'"
)


class DaskEngine:
    """Runs chunks and passes on a Dask cluster (see the module docstring)."""

    name = "dask"

    def __init__(self, *, scheduler: str | None = None, workers: int | None = None) -> None:
        try:
            import dask
            import dask.array  # noqa: F401 - checked here, used when reading HDF5
            import distributed
        except ImportError:
            raise ConfigError(MISSING_DASK) from None
        self._cluster = None
        if scheduler is None:
            with dask.config.set({TRIM_SETTING: None}):
                self._cluster = distributed.LocalCluster(
                    n_workers=workers or os.cpu_count() or 1,
                    threads_per_worker=1,
                    processes=True,
                    dashboard_address=":0",
                    silence_logs=logging.ERROR,
                )
            self.client = distributed.Client(self._cluster, set_as_default=False)
        else:
            self.client = _connect(distributed, scheduler)
        self.n_workers = len(self.client.scheduler_info().get("workers", {})) or 1
        self.window = 2 * self.n_workers

    def __enter__(self) -> DaskEngine:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def map_ordered(
        self, function: Callable[[Any, Any], Any], items: Iterable[Any], *, shared: Any = None
    ) -> Iterator[Any]:
        """``function(item, shared)`` on the workers, results in item order."""
        handle = None if shared is None else self.client.scatter([shared], broadcast=True)[0]
        futures = (self.client.submit(function, item, handle, pure=False) for item in items)
        yield from self._ordered(futures)

    def derived_chunks(self, settings: Any, *, chunk_rows: int) -> Iterator[ChunkResult]:
        """Derive every block of every chain file on the workers; results in chain order."""
        context = DeriveContext(settings.read, tuple(settings.redshifts), settings.model)
        handle = self.client.scatter([context], broadcast=True)[0]
        files: list[FileContext] = []
        totals: dict[int, list[float]] = {}
        for index, result in self._ordered(
            self._derive_futures(settings, handle, files, chunk_rows)
        ):
            if result is None:
                continue
            kept = totals.setdefault(index, [0, 0.0])
            kept[0] += result.samples.n_samples
            kept[1] += float(result.samples.weights.sum())
            yield result
        for file in files:
            rows, weight = totals.get(file.index, [0, 0.0])
            if rows == 0:
                raise ChainFormatError(
                    f"{file.path}: burn-in of {file.burn} rows per chain and thinning by "
                    f"{settings.read.thin} leave no rows; lower burn_in or thin"
                )
            if weight == 0.0:
                raise ChainFormatError(
                    f"{file.path}: every kept weight is zero, so no sample would count; check "
                    "that the weight column is the multiplicity column"
                )

    def _derive_futures(
        self, settings: Any, handle: Any, files: list[FileContext], chunk_rows: int
    ) -> Iterator[Any]:
        offset = 0
        for index, path in enumerate(expand_paths(list(settings.chain_files))):
            chain = layouts.open_chain_file(path, settings.read)
            file = file_context(chain, path, settings.read, index=index, chain_offset=offset)
            files.append(file)
            logger.info(
                "%s: %s, %d chain(s), burn-in %d rows per chain, thin %d (Dask)",
                path,
                type(chain).__name__,
                chain.n_walkers,
                file.burn,
                settings.read.thin,
            )
            first = next(iter(chain.blocks(PREFLIGHT_ROWS)), None)
            if first is not None:  # reader warnings and column errors shown here, early
                block_to_samples(first, settings.read, chain_offset=offset)
            offset += chain.n_walkers
            if isinstance(chain, Hdf5Chain):
                yield from self._array_futures(chain, file, handle, chunk_rows)
            else:
                yield from self._block_futures(chain, file, handle, chunk_rows)

    def _block_futures(
        self, chain: layouts.ChainFile, file: FileContext, handle: Any, chunk_rows: int
    ) -> Iterator[Any]:
        """Futures deriving blocks read here.

        Each block travels inside its task (not scattered), so the scheduler can rerun the
        task elsewhere if its worker dies.
        """
        import dask

        for block in chain.blocks(chunk_rows):
            with dask.config.set({"distributed.admin.large-graph-warning-threshold": "4GiB"}):
                future = self.client.submit(derive_raw_block, block, file, handle, pure=False)
            yield future

    def _array_futures(
        self, chain: Hdf5Chain, file: FileContext, handle: Any, chunk_rows: int
    ) -> Iterator[Any]:
        """Futures deriving the blocks of a chunked dask array over the HDF5 dataset."""
        import dask
        import dask.array as da
        import h5py

        with h5py.File(Path(chain.path), "r") as source:
            node = source[chain.dataset]
            if isinstance(node, h5py.Group):
                array = da.stack(
                    [da.from_array(node[n], chunks=chunk_rows) for n in chain.names], axis=1
                )
            elif chain.transposed:
                array = da.from_array(node, chunks=(node.shape[0], chunk_rows)).T
            else:
                array = da.from_array(node, chunks=(chunk_rows, node.shape[1]))
            array = array.rechunk({0: chunk_rows, 1: -1})
            for k, block in enumerate(array.to_delayed().ravel()):
                task = dask.delayed(derive_array_block)(block, k * chunk_rows, file, handle)
                yield self.client.compute(task)

    def _ordered(self, futures: Iterator[Any]) -> Iterator[Any]:
        """Results of futures in submission order, with at most ``window`` pending."""
        pending: deque = deque()
        try:
            for future in futures:
                pending.append(future)
                if len(pending) >= self.window:
                    yield _result(pending.popleft())
            while pending:
                yield _result(pending.popleft())
        finally:
            for future in pending:
                future.cancel()

    def describe(self) -> dict[str, Any]:
        """Provenance record."""
        return {
            "engine": "dask",
            "scheduler": self.client.scheduler.address,
            "workers": self.n_workers,
            "local_cluster": self._cluster is not None,
        }

    def close(self) -> None:
        """Close the client, and the local cluster if this engine started it."""
        self.client.close()
        if self._cluster is not None:
            self._cluster.close()


def _connect(distributed: Any, address: str) -> Any:
    try:
        return distributed.Client(address, timeout=CONNECT_TIMEOUT_S, set_as_default=False)
    except (OSError, TimeoutError) as error:
        raise ConfigError(
            f"cannot reach the Dask scheduler at {address} within {CONNECT_TIMEOUT_S} s "
            f"({str(error).splitlines()[0]}); check the address and that the scheduler is running"
        ) from None
    except (ValueError, TypeError) as error:
        raise ConfigError(
            f"--scheduler {address!r} is not a scheduler address ({error}); give one like "
            "tcp://host:8786"
        ) from None


def _result(future: Any) -> Any:
    """The result of one task, with cluster failures turned into one clear error."""
    from distributed import KilledWorker
    from distributed.client import FutureCancelledError
    from distributed.comm.core import CommClosedError

    try:
        return future.result()
    except KilledWorker as error:
        raise ComputationError(
            f"Dask workers died while running a task ({error}); the scheduler stopped retrying "
            "it, so the run was abandoned and nothing was written: check the workers' memory "
            "limits and logs, then run again"
        ) from None
    except (CommClosedError, FutureCancelledError) as error:
        raise ComputationError(
            f"the Dask cluster was lost during the run ({type(error).__name__}); nothing was "
            "written: check the scheduler, then run again"
        ) from None
