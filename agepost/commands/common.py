"""Argument helpers shared by several subcommands (parsing of lists and model options)."""

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
            raise ConfigError(f"--z {token!r} is not a number; give redshifts like --z 0.5,1,2") from None
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
        "--t-cmb", type=finite_float, default=DEFAULTS["t_cmb"] if with_defaults else None, metavar="K",
        help=f"CMB temperature today in K (default {DEFAULTS['t_cmb']})",
    )
    parser.add_argument(
        "--n-massive", type=int, choices=(0, 1, 2, 3), default=int(DEFAULTS["n_massive"]) if with_defaults else None,
        help="how many of the three neutrino species share m_nu (default 1)",
    )


def execute_run(settings, args: argparse.Namespace) -> int:  # noqa: ANN001 - RunSettings
    """Compute a run, write its outputs, and print a short summary (or the JSON record)."""
    import logging
    import sys

    from agepost.chains import recognition_table
    from agepost.outputs import OutputFolder, dumps_json
    from agepost.pipeline import compute, output_names, summary_record, write_outputs

    logger = logging.getLogger("agepost")
    OutputFolder(settings.output, force=settings.force).check_free(*output_names(settings))
    for parameter, origin in recognition_table(list(settings.chain_files), settings.read):
        logger.info("%-14s <- %s", parameter, origin)
    result = compute(settings)
    for name, value in result.derived.filled.items():
        logger.info("%s is not in the chain: assumed %s for every sample", name, value)
    write_outputs(result, settings, command=["agepost", *sys.argv[1:]])
    record = summary_record(result, settings)
    if getattr(args, "json", False):
        print(dumps_json(record))
    else:
        _print_summary(record, settings.output)
    return 0


def _print_summary(record: dict, folder) -> None:  # noqa: ANN001 - Path
    print(f"{record['n_kept']} of {record['n_samples']} samples kept "
          f"({record['n_excluded']} excluded{': ' + str(record['excluded']) if record['excluded'] else ''})")
    for name, quantity in record["quantities"].items():
        intervals = quantity["intervals"]
        key = next(iter(intervals))
        lo, hi = intervals[key]["equal_tail"]
        print(f"  {name:<22} median {quantity['median']:.6g} Gyr  {key} interval [{lo:.6g}, {hi:.6g}]  "
              f"ESS {quantity['ess']:.0f}")
    for warning in record["warnings"]:
        print(f"  warning: {warning}")
    print(f"outputs in {folder}")
