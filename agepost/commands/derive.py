"""``agepost derive CHAIN... --out DIR``: the run without writing a configuration first."""

from __future__ import annotations

import argparse
import dataclasses
import functools
from pathlib import Path

from agepost.chains import ReadOptions
from agepost.commands.common import (
    add_engine_arguments,
    add_model_arguments,
    execute_batch,
    execute_run,
    redshift_tokens,
)
from agepost.config import FIGURES, RunSettings, settings_from_config
from agepost.derive import ModelSettings


def register(subparsers: argparse._SubParsersAction) -> None:
    parser = subparsers.add_parser(
        "derive",
        help="derive ages and times from chain files given on the command line",
        description="Read one or more chain files (or a quoted glob), derive the age and the "
        "lookback and cosmic times at --z, and write the same outputs as 'agepost run'. "
        "Flags override the values of --config.",
    )
    parser.add_argument("chains", nargs="*", metavar="CHAIN", help="chain files or a quoted glob")
    parser.add_argument("--out", metavar="DIR", help="output folder (required without --config)")
    parser.add_argument(
        "--config", metavar="TOML", help="configuration giving defaults for every option"
    )
    parser.add_argument(
        "--z", action="append", metavar="Z", help="redshift(s); repeat or give a comma list"
    )
    add_model_arguments(parser, with_defaults=False)
    reading = parser.add_argument_group("chain reading")
    reading.add_argument(
        "--names", help="column names: a comma list, or a file with one name per line"
    )
    reading.add_argument("--weight-column", help="column holding weights or multiplicities")
    reading.add_argument("--dataset", help="path of the samples inside an HDF5 file")
    reading.add_argument(
        "--burn-in", help="rows dropped from each chain's start: a fraction < 1 or a count"
    )
    reading.add_argument("--thin", help="keep every N-th row of each chain")
    parser.add_argument("--force", action="store_true", help="replace existing output files")
    parser.add_argument("--json", action="store_true", help="print the summary as JSON")
    parser.add_argument(
        "--batch",
        action="store_true",
        help="treat every chain file as a separate run: one folder each under "
        "--out DIR, plus index.csv and index.json (default: the files are chains "
        "of one run)",
    )
    add_engine_arguments(parser, batch=True)
    parser.set_defaults(handler=run)


def settings_from_arguments(args: argparse.Namespace) -> RunSettings:
    """Config values (if any) overlaid with the command-line flags; sources recorded."""
    if args.config:
        base = settings_from_config(args.config)
    else:
        if not args.chains:
            raise_usage("give at least one CHAIN file (or --config)")
        if not args.out:
            raise_usage("give --out DIR, the folder for the outputs")
        base = RunSettings(
            chain_files=(),
            read=ReadOptions(),
            model=ModelSettings(),
            redshifts=(),
            output=Path(args.out),
            figures=FIGURES,
        )
    read, read_sources = base.read.overlay(
        {
            "names": args.names,
            "weight_column": args.weight_column,
            "dataset": args.dataset,
            "burn_in": args.burn_in,
            "thin": args.thin,
        }
    )
    model_changes = {
        k: v
        for k, v in (
            ("radiation", args.radiation),
            ("t_cmb", args.t_cmb),
            ("n_massive", args.n_massive),
        )
        if v is not None
    }
    sources = dict(base.sources) | {f"chain.{k}": v for k, v in read_sources.items()}
    sources |= {f"model.{k}": "command line" for k in model_changes}
    changes: dict = {
        "read": read,
        "model": dataclasses.replace(base.model, **model_changes),
        "force": args.force,
    }
    if args.chains:
        changes["chain_files"], sources["chain_files"] = tuple(args.chains), "command line"
    if args.z:
        changes["redshifts"] = tuple(float(t) for t in redshift_tokens(args.z))
        sources["redshifts"] = "command line"
    if args.out:
        changes["output"], sources["output"] = Path(args.out), "command line"
    return dataclasses.replace(base, **changes, sources=sources)


def raise_usage(message: str) -> None:
    from agepost.errors import ConfigError

    raise ConfigError(f"agepost derive: {message}")


def run(args: argparse.Namespace) -> int:
    settings = settings_from_arguments(args)
    if not args.batch:
        return execute_run(settings, args)
    from agepost.chains.reader import expand_paths
    from agepost.engines.batch import BatchInput, folder_names

    files = [str(p) for p in expand_paths(list(settings.chain_files))]
    root = settings.output
    inputs = [
        BatchInput(
            path,
            root / name,
            functools.partial(
                dataclasses.replace, settings, chain_files=(path,), output=root / name
            ),
        )
        for path, name in zip(files, folder_names(files), strict=True)
    ]
    return execute_batch(inputs, root, args)
