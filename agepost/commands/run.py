"""``agepost run CONFIG``: the whole job described by a TOML configuration."""

from __future__ import annotations

import argparse
import dataclasses
from pathlib import Path

from agepost.commands.common import execute_run
from agepost.config import settings_from_config


def register(subparsers: argparse._SubParsersAction) -> None:
    parser = subparsers.add_parser(
        "run",
        help="run the job described by a TOML configuration",
        description="Read the chain named in CONFIG, derive ages and times, and write summaries, "
        "figures, derived samples and a provenance record.",
    )
    parser.add_argument("config", metavar="CONFIG", help="TOML configuration file")
    parser.add_argument("--out", metavar="DIR", help="output folder (overrides [output] folder)")
    parser.add_argument("--force", action="store_true", help="replace existing output files")
    parser.add_argument("--json", action="store_true", help="print the summary as JSON")
    parser.set_defaults(handler=run)


def run(args: argparse.Namespace) -> int:
    settings = settings_from_config(args.config)
    changes: dict = {"force": args.force}
    if args.out:
        changes["output"] = Path(args.out)
        changes["sources"] = settings.sources | {"output": "command line"}
    return execute_run(dataclasses.replace(settings, **changes), args)
