"""Read chain files of many layouts into one :class:`SampleSet`."""

from agepost.chains.options import ReadOptions
from agepost.chains.reader import iter_chain_chunks, read_chains, recognition_table
from agepost.chains.sampleset import CANONICAL_PARAMETERS, SampleSet

__all__ = [
    "CANONICAL_PARAMETERS",
    "ReadOptions",
    "SampleSet",
    "iter_chain_chunks",
    "read_chains",
    "recognition_table",
]
