"""Argument helpers shared by several subcommands (lists, model and engine options), and
running one job or a batch of them on the chosen engine."""

from __future__ import annotations

import argparse
import math

from agepost.errors import ConfigError
from agepost.physics.background import DEFAULT_RADIATION, DEFAULTS, RADIATION_MODELS


def finite_float(text: str) -> float:
    """argparse type: a finite number."""
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a number") from None
    if not math.isfinite(value):
        raise argparse.ArgumentTypeError(f"{text!r} is not a finite number")
    return value


def redshift_tokens(values: list[str] | None) -> list[str]:
    """Flatten repeated ``--z`` options and comma lists into redshift strings, as typed."""
    tokens: list[str] = []
    for value in values or []:
        tokens += [part.strip() for part in value.split(",") if part.strip()]
    for token in tokens:
        try:
            z = float(token)
        except ValueError:
            raise ConfigError(
                f"--z {token!r} is not a number; give redshifts like --z 0.5,1,2"
            ) from None
        if not math.isfinite(z) or z < 0:
            raise ConfigError(f"--z {token} is not allowed; redshifts must be finite and >= 0")
    return tokens


def add_model_arguments(parser: argparse.ArgumentParser, *, with_defaults: bool) -> None:
    """--radiation, --t-cmb and --n-massive (defaults shown; None when a config may set them)."""
    parser.add_argument(
        "--radiation",
        choices=RADIATION_MODELS,
        default=DEFAULT_RADIATION if with_defaults else None,
        help=f"radiation content: none, massless or full (default {DEFAULT_RADIATION})",
    )
    parser.add_argument(
        "--t-cmb",
        type=finite_float,
        default=DEFAULTS["t_cmb"] if with_defaults else None,
        metavar="K",
        help=f"CMB temperature today in K (default {DEFAULTS['t_cmb']})",
    )
    parser.add_argument(
        "--n-massive",
        type=int,
        choices=(0, 1, 2, 3),
        default=int(DEFAULTS["n_massive"]) if with_defaults else None,
        help="how many of the three neutrino species share m_nu (default 1)",
    )


def positive_int(text: str) -> int:
    """argparse type: a whole number >= 1."""
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a whole number") from None
    if value < 1:
        raise argparse.ArgumentTypeError(f"{text} must be at least 1")
    return value


def add_engine_arguments(parser: argparse.ArgumentParser, *, batch: bool = False) -> None:
    """--engine, --scheduler, --workers (and --jobs for commands with a batch mode)."""
    from agepost.engines import ENGINES

    group = parser.add_argument_group("engine")
    group.add_argument(
        "--engine",
        choices=ENGINES,
        default="local",
        help="where to derive and summarise: this process (local, default) or a "
        "Dask cluster (dask; needs pip install 'agepost[dask]')",
    )
    group.add_argument(
        "--scheduler",
        metavar="ADDRESS",
        help="address of a running Dask scheduler, e.g. tcp://host:8786 (with "
        "--engine dask; default: start a local cluster, one worker per core)",
    )
    group.add_argument(
        "--workers",
        type=positive_int,
        metavar="N",
        help="workers of the local Dask cluster (default: one per core)",
    )
    if batch:
        group.add_argument(
            "--jobs",
            type=positive_int,
            metavar="N",
            help="batch inputs run at once on the Dask engine (default: one per "
            "worker); the local engine runs them one after another",
        )


def open_engine_from(args: argparse.Namespace):  # noqa: ANN201 - agepost.engines.Engine
    """The engine the arguments ask for (see :func:`add_engine_arguments`)."""
    from agepost.engines import open_engine

    return open_engine(args.engine, scheduler=args.scheduler, workers=args.workers)


def execute_run(settings, args: argparse.Namespace) -> int:  # noqa: ANN001 - RunSettings
    """Run one job on the chosen engine, write its outputs, print a short summary (or JSON)."""
    import contextlib
    import logging
    import sys

    from agepost.chains import recognition_table
    from agepost.outputs import OutputFolder, dumps_json
    from agepost.pipeline import output_names, run_to_folder, summary_record

    logger = logging.getLogger("agepost")
    OutputFolder(settings.output, force=settings.force).check_free(*output_names(settings))
    for parameter, origin in recognition_table(list(settings.chain_files), settings.read):
        logger.info("%-14s <- %s", parameter, origin)
    with contextlib.closing(open_engine_from(args)) as engine:
        summary = run_to_folder(
            settings, engine, command=["agepost", *sys.argv[1:]], show_progress=not args.quiet
        )
    record = summary_record(summary, settings)
    if getattr(args, "json", False):
        print(dumps_json(record))
    else:
        _print_summary(record, settings.output)
    return 0


def execute_batch(inputs: list, root, args: argparse.Namespace) -> int:  # noqa: ANN001 - Path
    """Run many inputs (:class:`agepost.engines.batch.BatchInput`) and write the index table."""
    import contextlib
    import sys

    from agepost.engines.batch import INDEX_FILES, run_batch, write_index
    from agepost.outputs import OutputFolder, dumps_json
    from agepost.pipeline import run_to_folder, summary_record

    folder = OutputFolder(root, force=args.force)
    folder.check_free(*INDEX_FILES)
    command = ["agepost", *sys.argv[1:]]
    with contextlib.closing(open_engine_from(args)) as engine:
        jobs = (args.jobs or getattr(engine, "n_workers", 1)) if engine.name == "dask" else 1

        def run_one(settings) -> dict:  # noqa: ANN001 - RunSettings
            summary = run_to_folder(
                settings, engine, command=command, show_progress=not args.quiet and jobs == 1
            )
            return summary_record(summary, settings)

        entries = run_batch(inputs, run_one, jobs=jobs)
    write_index(folder, entries)
    failed = [entry for entry in entries if entry.status != "ok"]
    if getattr(args, "json", False):
        from agepost.engines.batch import index_record

        print(dumps_json(index_record(entries)))
    else:
        for entry in entries:
            detail = entry.message if entry.status != "ok" else str(entry.output)
            print(f"{entry.status:<6} {entry.label}: {detail}")
        print(
            f"{len(entries) - len(failed)} of {len(entries)} inputs done; index in "
            f"{folder.root / INDEX_FILES[0]} and {INDEX_FILES[1]}"
        )
    return 2 if failed else 0


def _print_summary(record: dict, folder) -> None:  # noqa: ANN001 - Path
    reasons = f": {record['excluded']}" if record["excluded"] else ""
    print(
        f"{record['n_kept']} of {record['n_samples']} samples kept "
        f"({record['n_excluded']} excluded{reasons})"
    )
    for name, quantity in record["quantities"].items():
        intervals = quantity["intervals"]
        key = next(iter(intervals))
        lo, hi = intervals[key]["equal_tail"]
        print(
            f"  {name:<22} median {quantity['median']:.6g} Gyr  "
            f"{key} interval [{lo:.6g}, {hi:.6g}]  ESS {quantity['ess']:.0f}"
        )
    for warning in record["warnings"]:
        print(f"  warning: {warning}")
    print(f"outputs in {folder}")
