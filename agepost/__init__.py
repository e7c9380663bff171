"""agepost: posterior ages and lookback times of the universe from parameter samples."""

from importlib.metadata import PackageNotFoundError, version

try:
    __version__ = version("agepost")
except PackageNotFoundError:  # running from a source tree that is not installed
    __version__ = "0.0.0"

__all__ = ["__version__"]
