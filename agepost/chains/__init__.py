"""Read chain files of many layouts into one :class:`SampleSet`."""

from agepost.chains.sampleset import CANONICAL_PARAMETERS, SampleSet

__all__ = ["CANONICAL_PARAMETERS", "SampleSet"]
