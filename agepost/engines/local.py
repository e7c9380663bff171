"""The local engine: one process, chunks streamed one after the other in bounded memory."""

from __future__ import annotations

from collections.abc import Callable, Iterable, Iterator
from typing import Any

from agepost.chains import iter_chain_chunks
from agepost.derive import derive_chunks
from agepost.engines.derive_pass import ChunkResult, chunk_result


class LocalEngine:
    """Runs everything in this process; memory is bounded by one chunk and the pass pieces."""

    name = "local"

    def __enter__(self) -> LocalEngine:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def derived_chunks(self, settings: Any, *, chunk_rows: int) -> Iterator[ChunkResult]:
        """Read with :func:`agepost.chains.iter_chain_chunks`, derive each chunk as it comes."""
        chunks = iter_chain_chunks(list(settings.chain_files), settings.read, chunk_rows=chunk_rows)
        for samples in chunks:
            derived = next(derive_chunks([samples], settings.redshifts, model=settings.model))
            yield chunk_result(samples, derived)

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
