"""``agepost run CONFIG...``: the job(s) described by TOML configurations.

One configuration runs as before. Several configurations, or a quoted glob, run in batch
mode: one output folder each under ``--out DIR`` and an index table of all results
(:mod:`agepost.engines.batch`).
"""

from __future__ import annotations

import argparse
import dataclasses
import functools
import glob
from pathlib import Path

from agepost.commands.common import add_engine_arguments, execute_batch, execute_run
from agepost.config import settings_from_config
from agepost.errors import ConfigError


def register(subparsers: argparse._SubParsersAction) -> None:
    parser = subparsers.add_parser(
        "run",
        help="run the job(s) described by TOML configurations",
        description="Read the chain named in CONFIG, derive ages and times, and write summaries, "
        "figures, derived samples and a provenance record. Several CONFIGs (or a quoted glob) "
        "run in batch mode: one folder each under --out DIR, plus index.csv and index.json.",
    )
    parser.add_argument(
        "configs", nargs="+", metavar="CONFIG", help="TOML configuration file(s) or a quoted glob"
    )
    parser.add_argument(
        "--out",
        metavar="DIR",
        help="output folder (overrides [output] folder); "
        "in batch mode the folder holding one sub-folder per configuration",
    )
    parser.add_argument("--force", action="store_true", help="replace existing output files")
    parser.add_argument(
        "--json", action="store_true", help="print the summary (or the batch index) as JSON"
    )
    add_engine_arguments(parser, batch=True)
    parser.set_defaults(handler=run)


def expand_configs(items: list[str]) -> tuple[list[Path], bool]:
    """Configuration paths, and whether this is a batch (several, or any glob)."""
    paths: list[Path] = []
    for item in items:
        if glob.has_magic(item):
            matches = sorted(Path(p) for p in glob.glob(item) if Path(p).is_file())
            if not matches:
                raise ConfigError(
                    f"the pattern {item!r} matches no configuration file; check the directory"
                )
            paths += matches
        else:
            paths.append(Path(item))
    return paths, len(items) > 1 or any(glob.has_magic(item) for item in items)


def _settings(path: Path, out: Path | None, force: bool):  # noqa: ANN202 - RunSettings
    settings = settings_from_config(path)
    changes: dict = {"force": force}
    if out is not None:
        changes["output"] = out
        changes["sources"] = settings.sources | {"output": "command line"}
    return dataclasses.replace(settings, **changes)


def run(args: argparse.Namespace) -> int:
    from agepost.engines.batch import BatchInput, folder_names

    paths, batch = expand_configs(args.configs)
    if not batch:
        return execute_run(
            _settings(paths[0], Path(args.out) if args.out else None, args.force), args
        )
    if not args.out:
        raise ConfigError(
            "agepost run with several configurations: give --out DIR, the folder for "
            "one sub-folder per configuration and the index table"
        )
    root = Path(args.out)
    inputs = [
        BatchInput(
            str(path),
            root / name,
            functools.partial(_settings, path, root / name, args.force),
        )
        for path, name in zip(paths, folder_names([str(p) for p in paths]), strict=True)
    ]
    return execute_batch(inputs, root, args)
