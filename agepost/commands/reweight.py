"""``agepost reweight RUN --age GYR --out DIR``: update a run by an independent age constraint.

Writes ``reweight.json`` (constraint, Kish ESS before and after, every summary before and
after), the reweighted samples as a run folder (``samples.h5`` and ``summary.json``, so
``confront`` can read it) and a figure of the posteriors before and after.
"""

from __future__ import annotations

import argparse
import logging

import numpy as np
import pandas as pd

from agepost import __version__
from agepost.chains import CANONICAL_PARAMETERS
from agepost.commands.compare import (
    LABELS,
    add_common_arguments,
    load_inputs,
    output_folder,
    parse_levels,
    provenance,
)
from agepost.compare.config import pick, read_command_config
from agepost.compare.records import PARAMETER_UNITS, reweight_record
from agepost.compare.reweight import (
    CONSTRAINT_KINDS,
    DEFAULT_ESS_FLOOR,
    AgeConstraint,
    Reweighted,
    reweight_run,
)
from agepost.compare.runs import LoadedRun
from agepost.errors import ConfigError
from agepost.outputs import OutputFolder, dumps_json
from agepost.report.samples_file import SAMPLES_FILE, DerivedSamplesWriter
from agepost.report.tables import quantity_record

FIGURE_STEM = "reweight_marginals"
OUTPUT_NAMES = (
    "reweight.json",
    "summary.json",
    SAMPLES_FILE,
    f"{FIGURE_STEM}.png",
    f"{FIGURE_STEM}.pdf",
)


def register(subparsers: argparse._SubParsersAction) -> None:
    parser = subparsers.add_parser(
        "reweight",
        help="reweight a run by an independent constraint on the age today",
        description="Multiply each sample's weight by the likelihood of an independent age "
        "constraint (a lower limit, hard or soft, or a Gaussian) and report the updated "
        "posteriors with the Kish effective sample size that remains.",
    )
    parser.add_argument(
        "run", nargs="?", metavar="RUN", help="run folder, chain file or quoted glob"
    )
    parser.add_argument(
        "--kind", choices=CONSTRAINT_KINDS, help="lower_limit (default) or gaussian"
    )
    parser.add_argument(
        "--age", type=float, metavar="GYR", help="age today in Gyr: the limit or the mean"
    )
    parser.add_argument(
        "--age-err",
        type=float,
        metavar="GYR",
        help="one-sigma error in Gyr (required for gaussian; a soft edge for lower_limit)",
    )
    parser.add_argument(
        "--ess-floor",
        type=float,
        help="warn when the Kish ESS after reweighting is below this "
        f"(default {DEFAULT_ESS_FLOOR:g})",
    )
    add_common_arguments(parser, command="reweight")
    parser.set_defaults(handler=run)


def constraint_from(args: argparse.Namespace, config: dict) -> AgeConstraint:
    """The constraint from flags or the ``[reweight]`` table."""
    age = args.age if args.age is not None else config.get("age_gyr")
    if age is None:
        raise ConfigError(
            "agepost reweight: give the constraint's age with --age GYR (or age_gyr in the config)"
        )
    err = args.age_err if args.age_err is not None else config.get("age_err_gyr", 0.0)
    kind = args.kind or config.get("kind", "lower_limit")
    return AgeConstraint(kind=kind, age_gyr=float(age), age_err_gyr=float(err))


def run(args: argparse.Namespace) -> int:
    config = read_command_config(args.config, "reweight") if args.config else {}
    item = args.run or config.get("run")
    if not item:
        raise ConfigError("agepost reweight: give a RUN (folder or chain file)")
    constraint = constraint_from(args, config)
    levels = parse_levels(args.levels, config)
    ess_floor = float(pick(args, config, "ess_floor", DEFAULT_ESS_FLOOR))
    folder = output_folder(args, config, OUTPUT_NAMES)
    (loaded,) = load_inputs([item], args, config)
    result = reweight_run(loaded, constraint, levels=levels, ess_floor=ess_floor)
    record = {
        "agepost_version": __version__,
        "levels": list(levels),
        **reweight_record(result, loaded, ess_floor=ess_floor),
        "provenance": provenance([loaded]),
    }
    _figure(folder, loaded, result)
    _write_run_folder(folder, loaded, result, levels)
    folder.write_json("reweight.json", record)
    if args.json:
        print(dumps_json(record))
        for warning in result.warnings:  # also on stderr, where a JSON reader will not look
            logging.getLogger("agepost").warning("warning: %s", warning)
    else:
        _print(result, folder)
    return 0


def _write_run_folder(
    folder: OutputFolder, run: LoadedRun, result: Reweighted, levels: tuple[float, ...]
) -> None:
    """``samples.h5`` with the new weights and a ``summary.json`` of the same layout as a run's."""
    with folder.atomic_path(SAMPLES_FILE) as temporary, DerivedSamplesWriter(temporary) as writer:
        writer.append(
            run.parameters,
            run.quantities,
            weights=result.weights,
            chain_id=run.chain_id,
            exclusion=np.zeros(run.n_samples, np.int8),
        )
    absent = {
        name: (run.fixed[name] if name in run.fixed else run.model.defaults[keyword])
        for name, keyword in CANONICAL_PARAMETERS.items()
        if name not in run.parameters.columns
    }
    summary = {
        "agepost_version": __version__,
        "source": f"{run.source} reweighted by {result.constraint.describe()}",
        "n_samples": run.n_samples,
        "n_kept": run.n_samples,
        "n_excluded": 0,
        "excluded": {},
        "n_chains": int(np.unique(run.chain_id).size),
        "redshifts": list(run.redshifts),
        "levels": list(levels),
        "model": {
            "radiation": run.model.radiation,
            "t_cmb_k": run.model.t_cmb,
            "n_massive": run.model.n_massive,
            "assumed_for_missing_parameters": absent,
        },
        "quantities": {
            n: quantity_record(result.after[n], unit="Gyr") for n in run.quantities.columns
        },
        "parameters": {
            n: quantity_record(s, unit=PARAMETER_UNITS.get(n, ""))
            for n, s in result.after.items()
            if n in run.parameters.columns
        },
        "warnings": list(result.warnings),
    }
    folder.write_json("summary.json", summary)


def _figure(folder: OutputFolder, run: LoadedRun, result: Reweighted) -> None:
    from agepost.report.compare_figures import reweight_figure
    from agepost.report.figures import save_figure

    frame = pd.concat([run.quantities[["age"]], run.parameters], axis=1)
    shown = [name for name in frame.columns if name in result.before]
    panels = [
        (LABELS.get(name, name), frame[name].to_numpy(float), run.weights, result.weights)
        for name in shown
    ]
    save_figure(
        reweight_figure(panels, constraint_label=result.constraint.describe().replace("+-", "±")),
        folder,
        FIGURE_STEM,
    )


def _print(result: Reweighted, folder: OutputFolder) -> None:
    print(
        f"constraint {result.constraint.describe()}: Kish ESS {result.ess_kish_before:.1f} -> "
        f"{result.ess_kish_after:.1f}"
    )
    for name, before in result.before.items():
        after = result.after[name]
        key = next(iter(after.intervals))
        lo, hi = after.intervals[key].equal_tail
        print(
            f"  {name:<20} median {before.median:.6g} -> {after.median:.6g}  "
            f"{key} interval [{lo:.6g}, {hi:.6g}]"
        )
    for warning in result.warnings:
        print(f"  warning: {warning}")
    print(f"outputs in {folder.root}")
