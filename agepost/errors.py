"""Exception hierarchy: one root, specific children, every message kept."""

from __future__ import annotations


class AgepostError(Exception):
    """Root of every error agepost raises on purpose.

    The command line catches it, prints its message on one line and exits with code 2.
    """

    def __init__(self, message: str) -> None:
        super().__init__(message)
        self.message = message

    def __str__(self) -> str:
        return self.message


class InputError(AgepostError, ValueError):
    """User input (a file, a column, a value, an option) is unusable as given."""


class ChainFormatError(InputError):
    """A chain file cannot be read or its columns cannot be mapped to parameters."""


class ConfigError(InputError):
    """A TOML configuration or a command-line option is invalid."""


class ParameterError(InputError):
    """A cosmological parameter value is outside what the model accepts."""


class NoBigBangError(ParameterError):
    """A single parameter point whose expansion history has no big bang."""


class OutputExistsError(AgepostError):
    """An output file already exists and overwriting was not requested."""


class ComputationError(AgepostError):
    """A computation could not reach its stated accuracy or has nothing to work on."""
