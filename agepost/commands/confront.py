"""``agepost confront RUN --objects FILE --out DIR``: the universe's age against old objects."""

from __future__ import annotations

import argparse

import numpy as np

from agepost import __version__
from agepost.commands.compare import (
    add_common_arguments,
    load_inputs,
    output_folder,
    parse_levels,
    positive_count,
    provenance,
)
from agepost.compare.config import pick, read_command_config
from agepost.compare.confront import ObjectVerdict, check_range, confront_objects
from agepost.compare.formation import GAUSS_NODES, NODES_PER_DECADE, TOP_ONE_PLUS_Z
from agepost.compare.objects import read_objects
from agepost.compare.records import run_record, verdict_record
from agepost.compare.shifts import DEFAULT_SEED
from agepost.compare.timegrid import DEFAULT_BAND_SAMPLES, redshift_grid, time_bands
from agepost.errors import ConfigError
from agepost.outputs import dumps_json

FIGURE_STEM = "confront_objects"
OUTPUT_NAMES = ("confront.json", f"{FIGURE_STEM}.png", f"{FIGURE_STEM}.pdf")
#: Largest object redshift accepted unless asked otherwise (the computed range).
DEFAULT_Z_MAX = 20.0


def register(subparsers: argparse._SubParsersAction) -> None:
    parser = subparsers.add_parser(
        "confront",
        help="confront the age of the universe with old objects",
        description="For each object of --objects (CSV: name, z, age_gyr, age_err_gyr, kind), "
        "the posterior probability that the universe at its redshift is younger than it, the "
        "posterior of its formation redshift, and the fraction of samples where it could not "
        "have formed.",
    )
    parser.add_argument(
        "run", nargs="?", metavar="RUN", help="run folder, chain file or quoted glob"
    )
    parser.add_argument("--objects", metavar="CSV", help="objects file (see docs/compare.md)")
    parser.add_argument(
        "--z-max",
        type=float,
        help=f"largest object redshift, top of the t(z) grid (default {DEFAULT_Z_MAX:g})",
    )
    parser.add_argument(
        "--seed",
        type=int,
        help=f"seed of the age draws and band subsample (default {DEFAULT_SEED})",
    )
    parser.add_argument(
        "--band-samples",
        type=int,
        help=f"rows drawn by weight for the t(z) band (default {DEFAULT_BAND_SAMPLES})",
    )
    add_common_arguments(parser, command="confront")
    parser.set_defaults(handler=run)


def run(args: argparse.Namespace) -> int:
    config = read_command_config(args.config, "confront") if args.config else {}
    item = args.run or config.get("run")
    objects_file = args.objects or config.get("objects")
    if not item or not objects_file:
        raise ConfigError("agepost confront: give a RUN (folder or chain file) and --objects FILE")
    levels = parse_levels(args.levels, config)
    z_max = float(pick(args, config, "z_max", DEFAULT_Z_MAX))
    seed = int(pick(args, config, "seed", DEFAULT_SEED))
    band_samples = positive_count(
        pick(args, config, "band_samples", DEFAULT_BAND_SAMPLES), "--band-samples"
    )
    grid = redshift_grid(z_max)
    objects = read_objects(objects_file)
    check_range(objects, z_max)
    folder = output_folder(args, config, OUTPUT_NAMES)
    (loaded,) = load_inputs([item], args, config)
    verdicts = confront_objects(
        loaded, objects, levels=levels, z_max=z_max, rng=np.random.default_rng([seed, 0])
    )
    band = time_bands(loaded, grid, size=band_samples, rng=np.random.default_rng([seed, 1]))
    record = {
        "agepost_version": __version__,
        "run": run_record(loaded),
        "levels": list(levels),
        "objects_file": str(objects_file),
        "objects": {v.obj.name: verdict_record(v) for v in verdicts},
        "z_max": z_max,
        "formation_solver": {
            "method": "cosmic-time table, then safeguarded Newton in sqrt(a) with "
            "Gauss-Legendre panels",
            "nodes_per_decade_of_1_plus_z": NODES_PER_DECADE,
            "table_top_1_plus_z": TOP_ONE_PLUS_Z,
            "gauss_nodes": GAUSS_NODES,
            "relative_accuracy_of_1_plus_z": 1e-9,
        },
        "random": {
            "seed": seed,
            "age_draws": "numpy default_rng([seed, 0])",
            "band_subsample": "numpy default_rng([seed, 1])",
        },
        "time_band": {"z_grid": grid.tolist(), "subsample": {"size": band.size, "of": band.of}},
        "warnings": [f"{v.obj.name}: {text}" for v in verdicts for text in v.warnings],
        "provenance": provenance([loaded]),
    }
    _figure(folder, band, verdicts, levels)
    folder.write_json("confront.json", record)
    if args.json:
        print(dumps_json(record))
    else:
        _print(verdicts, folder.root)
    return 0


def _figure(folder, band, verdicts: list[ObjectVerdict], levels) -> None:  # noqa: ANN001
    from agepost.report.compare_figures import objects_figure
    from agepost.report.figures import save_figure

    objects = [
        (v.obj.name, v.obj.z, v.obj.age_gyr, v.obj.age_err_gyr, v.obj.kind) for v in verdicts
    ]
    figure = objects_figure(
        band.z_grid, band.cosmic_time_gyr, objects, levels=levels, subsample_of=band.of
    )
    save_figure(figure, folder, FIGURE_STEM)


def _print(verdicts: list[ObjectVerdict], root) -> None:  # noqa: ANN001
    for v in verdicts:
        obj = v.obj
        age = (
            f"> {obj.age_gyr:g}"
            if obj.kind == "lower_limit"
            else f"{obj.age_gyr:g} +- {obj.age_err_gyr:g}"
        )
        line = (
            f"{obj.name:<26} z {obj.z:<6g} age {age} Gyr; "
            f"universe then {v.universe_time.median:.4g} Gyr; "
            f"P(universe younger) {v.p_universe_younger:.3g}"
        )
        if v.formation_z is not None:
            key = next(iter(v.formation_z.intervals))
            lo, hi = v.formation_z.intervals[key].equal_tail
            line += f"; formed at z {v.formation_z.median:.4g} [{lo:.4g}, {hi:.4g}]"
        line += f"; no formation in {100 * v.frac_no_formation:.2g}% of samples"
        print(line)
    print(f"outputs in {root}")
