"""Command line: parse arguments, wire the parts together, turn errors into one-line messages.

Each subcommand lives in ``agepost/commands/<name>.py`` with ``register(subparsers)``; the
function it sets as ``handler`` receives the parsed arguments and returns an exit code.
"""

from __future__ import annotations

import argparse
import importlib
import logging
import sys
import warnings
from collections.abc import Sequence

from agepost import __version__
from agepost.errors import AgepostError

#: Subcommand modules under ``agepost.commands``, in help order.
COMMANDS: tuple[str, ...] = ("point", "derive", "run", "fit", "compare", "confront", "reweight")

EXIT_USAGE = 2


def build_parser() -> argparse.ArgumentParser:
    """The full argument parser with every subcommand registered."""
    parser = argparse.ArgumentParser(
        prog="agepost",
        description="Posterior ages and lookback times of the universe from parameter samples.",
    )
    parser.add_argument("--version", action="version", version=f"agepost {__version__}")
    parser.add_argument("--debug", action="store_true", help="show full tracebacks on errors")
    parser.add_argument("--quiet", action="store_true", help="no progress bars or notes on stderr")
    subparsers = parser.add_subparsers(dest="command", metavar="COMMAND", required=True)
    for name in COMMANDS:
        importlib.import_module(f"agepost.commands.{name}").register(subparsers)
    for subparser in subparsers.choices.values():  # the same two flags after the command name
        subparser.add_argument(
            "--debug", action="store_true", default=argparse.SUPPRESS, help=argparse.SUPPRESS
        )
        subparser.add_argument(
            "--quiet",
            action="store_true",
            default=argparse.SUPPRESS,
            help="no progress bars or notes on stderr",
        )
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; returns the exit code (0 success, 2 bad input or usage)."""
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as stop:  # argparse already printed its one-line usage error
        return int(stop.code or 0)
    _configure_logging(quiet=args.quiet)
    try:
        with warnings.catch_warnings():
            warnings.showwarning = _show_warning
            return int(args.handler(args))
    except AgepostError as error:
        if args.debug:
            raise
        print(f"agepost: error: {error}", file=sys.stderr)
        return EXIT_USAGE
    except BrokenPipeError:  # output piped into a command that stopped reading (head, less)
        sys.stderr.close()
        return 1
    except KeyboardInterrupt:
        print("agepost: interrupted; no partial outputs were kept", file=sys.stderr)
        return 130


def _configure_logging(*, quiet: bool) -> None:
    """Notes from agepost's own loggers go to stderr as ``agepost: ...`` lines."""
    logger = logging.getLogger("agepost")
    for handler in list(logger.handlers):
        logger.removeHandler(handler)
    handler = logging.StreamHandler(sys.stderr)
    handler.setFormatter(logging.Formatter("agepost: %(message)s"))
    logger.addHandler(handler)
    logger.setLevel(logging.WARNING if quiet else logging.INFO)
    logger.propagate = False


def _show_warning(message, category, filename, lineno, file=None, line=None) -> None:  # noqa: ANN001
    """Render library warnings as one line on stderr, without the source location."""
    print(f"agepost: warning: {message}", file=sys.stderr)
