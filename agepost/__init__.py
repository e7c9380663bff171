"""agepost: posterior ages and lookback times of the universe from parameter samples.

The notebook API lives in :mod:`agepost.api` and is re-exported here.
"""

from importlib.metadata import PackageNotFoundError, version

try:
    __version__ = version("agepost")
except PackageNotFoundError:  # running from a source tree that is not installed
    __version__ = "0.0.0"

from agepost.api import (  # noqa: E402
    DerivedSamples,
    ExpansionHistory,
    ModelSettings,
    RunResult,
    SampleSet,
    age_gyr,
    derive,
    expansion_history,
    lookback_gyr,
    read_chains,
    summarise_chains,
    summary_table,
)

__all__ = [
    "DerivedSamples",
    "ExpansionHistory",
    "ModelSettings",
    "RunResult",
    "SampleSet",
    "__version__",
    "age_gyr",
    "derive",
    "expansion_history",
    "lookback_gyr",
    "read_chains",
    "summarise_chains",
    "summary_table",
]
