"""``agepost fit CONFIG``: fit distance data with emcee and write a chain the age run can read."""

from __future__ import annotations

import argparse
import logging
import shutil
import warnings
from pathlib import Path

from agepost.errors import ConfigError
from agepost.fit.data import load_distance_data
from agepost.fit.likelihood import Posterior
from agepost.fit.products import FitWarning, fit_warnings, run_config_text, summary_record
from agepost.fit.sampler import ChainResult, run_chain
from agepost.fit.settings import load_fit_config
from agepost.outputs import OutputFolder

logger = logging.getLogger(__name__)

CHAIN_FILE = "chain.h5"
RUN_CONFIG_FILE = "age_run.toml"
SUMMARY_FILE = "fit_summary.json"


def register(subparsers: argparse._SubParsersAction) -> None:
    parser = subparsers.add_parser(
        "fit",
        help="fit distance data with emcee and write a chain for the age run",
        description="Fit the distance data named in CONFIG (distance moduli, expansion rates, "
        "sound-horizon ratios) with emcee; write the chain (emcee's HDF5 layout), a fit summary "
        "and a ready-to-run config for 'agepost run'.",
    )
    parser.add_argument(
        "config", metavar="CONFIG", help="fit configuration (TOML), see docs/fitting.md"
    )
    parser.add_argument("--out", metavar="DIR", help="output folder (overrides [output] folder)")
    parser.add_argument("--force", action="store_true", help="replace existing output files")
    parser.add_argument(
        "--resume",
        action="store_true",
        help=f"continue the chain already in the output folder ({CHAIN_FILE}) up to max_steps",
    )
    parser.set_defaults(handler=fit)


def fit(args: argparse.Namespace) -> int:
    config = load_fit_config(args.config)
    datasets = [
        load_distance_data(
            spec.file,
            kind=spec.kind,
            columns=spec.columns,
            covariance_path=spec.covariance,
            covariance_includes_errors=spec.covariance_includes_errors,
        )
        for spec in config.data
    ]
    posterior = Posterior(datasets, config.model)
    folder = OutputFolder(
        Path(args.out) if args.out else config.output_folder, force=args.force or args.resume
    )
    previous = folder.root / CHAIN_FILE
    if args.resume and not previous.is_file():
        raise ConfigError(f"--resume: {previous} does not exist; run without --resume first")
    folder.check_free(CHAIN_FILE, RUN_CONFIG_FILE, SUMMARY_FILE)
    logger.info(
        "fitting %d data points (%s) for %s",
        posterior.n_data,
        ", ".join(d.kind for d in datasets),
        ", ".join(config.model.names),
    )
    with folder.atomic_path(CHAIN_FILE) as temporary:
        temporary.unlink()  # emcee's backend creates the file itself
        if args.resume:
            shutil.copyfile(previous, temporary)
        result = run_chain(
            posterior,
            temporary,
            settings=config.sampler,
            resume=args.resume,
            show_progress=not args.quiet,
        )
        messages = fit_warnings(result, config.sampler)
        record = summary_record(
            temporary,
            result,
            model=config.model,
            settings=config.sampler,
            datasets=datasets,
            config_file=config.source,
            warnings_list=messages,
        )
    folder.write_json(SUMMARY_FILE, record)
    folder.write_text(
        RUN_CONFIG_FILE,
        run_config_text(
            CHAIN_FILE,
            result,
            model=config.model,
            redshifts=config.redshifts,
            config_file=config.source,
            warnings_list=messages,
        ),
    )
    for message in messages:
        warnings.warn(message, FitWarning, stacklevel=2)
    _log_outcome(result, folder.root)
    return 0


def _log_outcome(result: ChainResult, root: Path) -> None:
    logger.info(
        "%d steps x %d walkers, tau %s, acceptance %.2f, %s; wrote %s, %s and %s in %s",
        result.iterations,
        result.acceptance.size,
        ", ".join(f"{t:.1f}" for t in result.tau),
        float(result.acceptance.mean()),
        "converged" if result.converged else "NOT converged",
        CHAIN_FILE,
        SUMMARY_FILE,
        RUN_CONFIG_FILE,
        root,
    )
    logger.info("next: agepost run %s", root / RUN_CONFIG_FILE)
