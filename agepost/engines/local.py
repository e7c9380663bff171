"""The local engine: one process, chunks streamed one after the other in bounded memory."""

from __future__ import annotations

from collections.abc import Callable, Iterable, Iterator
from typing import Any

from agepost.chains import iter_chain_chunks
from agepost.derive import derive
from agepost.engines.derive_pass import ChunkResult, chunk_result


class LocalEngine:
    """Runs everything in this process; memory is bounded by one chunk and the pass pieces."""

    name = "local"

    def __enter__(self) -> LocalEngine:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def derived_chunks(self, settings: Any, *, chunk_rows: int) -> Iterator[ChunkResult]:
        """Read with :func:`agepost.chains.iter_chain_chunks`, derive each chunk as it comes.

        :func:`agepost.derive.derive` works through a chunk in slices of
        ``DERIVE_CHUNK_ROWS``, which bounds the physics' working memory.
        """
        chunks = iter_chain_chunks(list(settings.chain_files), settings.read, chunk_rows=chunk_rows)
        for samples in chunks:
            yield chunk_result(samples, derive(samples, settings.redshifts, model=settings.model))

    def map_ordered(
        self, function: Callable[[Any, Any], Any], items: Iterable[Any], *, shared: Any = None
    ) -> Iterator[Any]:
        """``function(item, shared)`` for each item, lazily, in order."""
        for item in items:
            yield function(item, shared)

    def describe(self) -> dict[str, Any]:
        """Provenance record."""
        return {"engine": "local", "processes": 1}

    def close(self) -> None:
        """Nothing to release."""
