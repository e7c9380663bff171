"""``agepost compare A B [C ...] --out DIR``: shifts and tensions between runs, with figures.

Also holds the input options shared by ``compare``, ``confront`` and ``reweight``: each
input is a run folder of ``agepost run``/``derive`` or chain file(s), and chain inputs are
derived here with ``--z``, the model flags and ``--burn-in``.
"""

from __future__ import annotations

import argparse
import contextlib
import logging
import sys
from pathlib import Path
from typing import Any

import numpy as np

from agepost import __version__
from agepost.chains import ReadOptions
from agepost.commands.common import (
    add_engine_arguments,
    add_model_arguments,
    open_engine_from,
    redshift_tokens,
)
from agepost.compare.config import pick, read_command_config
from agepost.compare.records import comparison_csv, comparison_record
from agepost.compare.runs import LoadedRun, load_runs
from agepost.compare.shifts import DEFAULT_SEED, RunComparison, compare_runs
from agepost.compare.timegrid import DEFAULT_BAND_SAMPLES, redshift_grid, time_bands
from agepost.derive import ModelSettings
from agepost.errors import ConfigError
from agepost.outputs import OutputFolder, dumps_json
from agepost.pipeline import file_fingerprint
from agepost.stats.difference import DEFAULT_DRAWS
from agepost.stats.intervals import check_level

#: Files ``compare`` writes (figures in PNG and PDF).
FIGURE_STEMS = ("comparison_marginals", "comparison_times", "comparison_corner")
OUTPUT_NAMES = (
    "comparison.json",
    "comparison.csv",
    *(f"{s}.{e}" for s in FIGURE_STEMS for e in ("png", "pdf")),
)
#: Top of the redshift grid of the t(z) bands unless asked otherwise.
DEFAULT_BAND_Z_MAX = 20.0
LABELS = {
    "age": r"$t_0$ [Gyr]",
    "H0": r"$H_0$ [km/s/Mpc]",
    "Omega_m": r"$\Omega_\mathrm{m}$",
    "Omega_k": r"$\Omega_k$",
    "w0": "$w_0$",
    "wa": "$w_a$",
    "m_nu": r"$\sum m_\nu$ [eV]",
    "N_eff": r"$N_\mathrm{eff}$",
}


def register(subparsers: argparse._SubParsersAction) -> None:
    parser = subparsers.add_parser(
        "compare",
        help="shift and tension between two or more runs",
        description="Compare the derived ages and times (and shared parameters) of two or more "
        "independent runs: per-run summaries, the posterior of each pairwise difference, the "
        "probability that it has its observed sign and the equivalent Gaussian tension; "
        "overlaid figures.",
    )
    parser.add_argument(
        "runs", nargs="*", metavar="RUN", help="run folders, chain files or quoted globs"
    )
    parser.add_argument(
        "--labels", help="comma list of names for the runs (default: folder or file names)"
    )
    parser.add_argument(
        "--draws", type=int, help=f"resampled pairs per difference (default {DEFAULT_DRAWS})"
    )
    parser.add_argument("--seed", type=int, help=f"seed of the resampling (default {DEFAULT_SEED})")
    parser.add_argument(
        "--band-samples",
        type=int,
        help=f"rows drawn by weight for the t(z) bands (default {DEFAULT_BAND_SAMPLES})",
    )
    parser.add_argument(
        "--z-max", type=float, help=f"top of the t(z) band grid (default {DEFAULT_BAND_Z_MAX:g})"
    )
    add_common_arguments(parser, command="compare")
    add_engine_arguments(parser)
    parser.set_defaults(handler=run)


def add_common_arguments(parser: argparse.ArgumentParser, *, command: str) -> None:
    """--out, --config, --levels, --force, --json and the options for chain inputs."""
    parser.add_argument(
        "--out", metavar="DIR", help="output folder (or [output] folder in --config)"
    )
    parser.add_argument("--config", metavar="TOML", help=f"configuration with a [{command}] table")
    parser.add_argument("--levels", help="credible levels, comma list (default 0.68,0.95)")
    parser.add_argument("--force", action="store_true", help="replace existing output files")
    parser.add_argument("--json", action="store_true", help="print the result as JSON")
    chains = parser.add_argument_group("chain inputs (run folders carry their own settings)")
    chains.add_argument(
        "--z", action="append", metavar="Z", help="redshift(s) to derive chain inputs at"
    )
    chains.add_argument(
        "--burn-in", help="rows dropped from each chain's start: a fraction < 1 or a count"
    )
    add_model_arguments(parser, with_defaults=True)  # used for chain inputs only


def parse_levels(text: str | None, config: dict[str, Any]) -> tuple[float, ...]:
    """Levels from ``--levels`` (comma list), else the configuration, else (0.68, 0.95)."""
    if text is not None:
        try:
            values = [float(part) for part in text.split(",") if part.strip()]
        except ValueError:
            raise ConfigError(
                f"--levels {text!r} must be a comma list of numbers like 0.68,0.95"
            ) from None
    else:
        values = list(config.get("levels", (0.68, 0.95)))
    if not values:
        raise ConfigError("give at least one credible level, e.g. --levels 0.68,0.95")
    return tuple(check_level(v) for v in values)


def load_inputs(
    items: list[str],
    args: argparse.Namespace,
    config: dict[str, Any],
    *,
    labels: list[str] | None = None,
) -> list[LoadedRun]:
    """Load run folders or chains with the chain options of the command line or config."""
    tokens = redshift_tokens(args.z) if args.z else [str(z) for z in config.get("z", [])]
    burn_in: Any = pick(args, config, "burn_in", 0)
    read = (
        ReadOptions(burn_in=burn_in)
        if not isinstance(burn_in, str)
        else ReadOptions().overlay({"burn_in": burn_in})[0]
    )
    model = ModelSettings(radiation=args.radiation, t_cmb=args.t_cmb, n_massive=args.n_massive)
    for item in items:
        if tokens and Path(item).is_dir():
            logging.getLogger("agepost").info(
                "--z applies to chain inputs; %s keeps the redshifts it was derived at", item
            )
    engine = getattr(args, "opened_engine", None)
    return load_runs(
        items,
        labels=labels,
        redshifts=[float(t) for t in tokens],
        model=model,
        read=read,
        engine=engine,
    )


def output_folder(
    args: argparse.Namespace, config: dict[str, Any], names: tuple[str, ...]
) -> OutputFolder:
    """The output folder from --out or [output] folder, checked free before any work."""
    out = args.out or config.get("out")
    if not out:
        raise ConfigError(
            "give --out DIR (or [output] folder in --config), the folder for the outputs"
        )
    folder = OutputFolder(out, force=args.force)
    folder.check_free(*names)
    return folder


def positive_count(value: int, flag: str) -> int:
    """A whole number >= 1, or ConfigError naming the flag."""
    if int(value) != value or value < 1:
        raise ConfigError(f"{flag} {value} must be a whole number >= 1")
    return int(value)


def provenance(runs: list[LoadedRun]) -> dict[str, Any]:
    """Tool version, command and input checksums."""
    return {
        "agepost_version": __version__,
        "command": ["agepost", *sys.argv[1:]],
        "inputs": {run.label: [file_fingerprint(Path(p)) for p in run.input_files] for run in runs},
    }


def run(args: argparse.Namespace) -> int:
    config = read_command_config(args.config, "compare") if args.config else {}
    items = list(args.runs) or list(config.get("runs", []))
    if len(items) < 2:
        raise ConfigError("agepost compare: give at least two runs (folders or chain files)")
    labels = [s.strip() for s in args.labels.split(",")] if args.labels else config.get("labels")
    levels = parse_levels(args.levels, config)
    draws = positive_count(pick(args, config, "draws", DEFAULT_DRAWS), "--draws")
    seed = int(pick(args, config, "seed", DEFAULT_SEED))
    band_samples = positive_count(
        pick(args, config, "band_samples", DEFAULT_BAND_SAMPLES), "--band-samples"
    )
    grid = redshift_grid(float(pick(args, config, "z_max", DEFAULT_BAND_Z_MAX)))
    folder = output_folder(args, config, OUTPUT_NAMES)
    with contextlib.closing(open_engine_from(args)) as engine:
        args.opened_engine = engine
        runs = load_inputs(items, args, config, labels=labels)
    comparison = compare_runs(runs, levels=levels, n_draws=draws, seed=seed)
    bands = {
        r.label: time_bands(r, grid, size=band_samples, rng=np.random.default_rng([seed, 1, i]))
        for i, r in enumerate(runs)
    }
    record = {"agepost_version": __version__, **comparison_record(comparison, runs)}
    record["levels"] = list(levels)
    record["time_bands"] = {
        "z_grid": grid.tolist(),
        "subsample": {label: {"size": b.size, "of": b.of} for label, b in bands.items()},
        "method": "systematic resampling by weight; seed [seed, 1, run index]",
    }
    record["provenance"] = provenance(runs)
    write_figures(folder, comparison, runs, bands, levels)
    folder.write_json("comparison.json", record)
    folder.write_text("comparison.csv", comparison_csv(comparison))
    if args.json:
        print(dumps_json(record))
    else:
        print_comparison(comparison, folder.root)
    return 0


def write_figures(
    folder: OutputFolder,
    comparison: RunComparison,
    runs: list[LoadedRun],
    bands: dict,
    levels: tuple[float, ...],
) -> None:
    """Overlaid marginals of age and lookback times, t(z) bands and the corner plot."""
    import pandas as pd

    from agepost.pipeline import latex_labels
    from agepost.report.compare_figures import (
        overlaid_bands_figure,
        overlaid_corner_figure,
        overlaid_marginals_figure,
    )
    from agepost.report.figures import save_figure

    labels = LABELS | {
        k: v.rstrip("$") + r"$ [Gyr]" for k, v in latex_labels(_redshifts(comparison)).items()
    }
    shown = [q for q in comparison.quantities if q == "age" or q.startswith("lookback_")]
    panels = [
        (labels.get(q, q), {r.label: (r.quantities[q].to_numpy(), r.weights) for r in runs})
        for q in shown
    ]
    save_figure(overlaid_marginals_figure(panels), folder, FIGURE_STEMS[0])
    figure = overlaid_bands_figure(
        next(iter(bands.values())).z_grid,
        {k: b.cosmic_time_gyr for k, b in bands.items()},
        levels=levels,
        subsample_sizes={k: (b.size, b.of) for k, b in bands.items()},
    )
    save_figure(figure, folder, FIGURE_STEMS[1])
    columns = list(comparison.parameters)
    extra = ["age"] if "age" in comparison.quantities else []
    frames = {
        r.label: (pd.concat([r.parameters[columns], r.quantities[extra]], axis=1), r.weights)
        for r in runs
    }
    save_figure(
        overlaid_corner_figure(frames, levels=levels, labels=labels), folder, FIGURE_STEMS[2]
    )


def _redshifts(comparison: RunComparison) -> tuple[float, ...]:
    return tuple(
        float(q.split("_z", 1)[1]) for q in comparison.quantities if q.startswith("lookback_z")
    )


def print_comparison(comparison: RunComparison, root: Path) -> None:
    """Short text table: medians per run, then shifts with sign probability and tension."""
    key = next(iter(comparison.summaries[comparison.labels[0]][comparison.quantities[0]].intervals))
    width = max(len(text) for text in (*comparison.labels, *comparison.pairs))
    for name in (*comparison.quantities, *comparison.parameters):
        print(name)
        for label in comparison.labels:
            s = comparison.summaries[label][name]
            lo, hi = s.intervals[key].equal_tail
            print(f"  {label:<{width}} median {s.median:.6g}  {key} interval [{lo:.6g}, {hi:.6g}]")
        for pair, d in comparison.differences[name].items():
            bound = ">= " if d.tension_is_lower_bound else ""
            print(
                f"  {pair:<{width}} shift  {d.median:+.4g}  P(same sign) {d.prob_same_sign:.4f}  "
                f"tension {bound}{d.tension_sigma:.2f} sigma"
            )
    print(f"outputs in {root}")
