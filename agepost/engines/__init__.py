"""Where a run's chunks are derived and its passes computed: this process, or a Dask cluster.

An engine offers three things to :mod:`agepost.pipeline`:

- ``derived_chunks(settings, chunk_rows=)``: the chain read and derived chunk by chunk, as
  :class:`~agepost.engines.derive_pass.ChunkResult` objects in chain order;
- ``map_ordered(function, items, shared=)``: ``function(item, shared)`` for every item,
  results in item order (the passes over the derived-samples file);
- ``describe()``: a record for the provenance file; and ``close()``.

:func:`open_engine` picks one by name. The Dask engine is optional
(``pip install 'agepost[dask]'``) and imported only when asked for.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Iterator
from typing import Any, Protocol

from agepost.errors import ConfigError

#: Engine names accepted by ``--engine``.
ENGINES: tuple[str, ...] = ("local", "dask")


class Engine(Protocol):
    """What the pipeline needs from an engine (see the module docstring)."""

    name: str

    def derived_chunks(self, settings: Any, *, chunk_rows: int) -> Iterator[Any]: ...

    def map_ordered(
        self, function: Callable[[Any, Any], Any], items: Iterable[Any], *, shared: Any = None
    ) -> Iterator[Any]: ...

    def describe(self) -> dict[str, Any]: ...

    def close(self) -> None: ...


def open_engine(
    name: str = "local", *, scheduler: str | None = None, workers: int | None = None
) -> Engine:
    """Start the engine ``name``; close it with ``close()`` (or use it in a ``with`` block).

    Parameters
    ----------
    name : ``"local"`` or ``"dask"``
    scheduler : str or None
        Address of a running Dask scheduler (``tcp://host:8786``); None starts a local
        cluster with one single-threaded worker per core.
    workers : int or None
        Workers of that local cluster (default: the machine's cores).

    Raises
    ------
    ConfigError
        Unknown engine, ``scheduler`` without Dask, Dask not installed, scheduler not reachable.
    """
    if name not in ENGINES:
        raise ConfigError(f"unknown engine {name!r}; use one of {', '.join(ENGINES)}")
    if name == "local":
        if scheduler is not None:
            raise ConfigError(
                "--scheduler needs --engine dask; add --engine dask or drop --scheduler"
            )
        from agepost.engines.local import LocalEngine

        return LocalEngine()
    from agepost.engines.dask_engine import DaskEngine

    return DaskEngine(scheduler=scheduler, workers=workers)
