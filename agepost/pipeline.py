"""One run from start to end: read the chain, derive, summarise, write the outputs.

The library functions here return results and never print; ``write_outputs`` is the only
part that touches the disk, and it checks every output name before writing anything.
"""

from __future__ import annotations

import dataclasses
import datetime
import hashlib
import logging
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from agepost import __version__
from agepost.chains import SampleSet, read_chains
from agepost.chains.reader import expand_paths
from agepost.config import RunSettings
from agepost.derive import DerivedSamples, derive, redshift_label
from agepost.errors import ComputationError
from agepost.exclusions import Exclusion, count_reasons
from agepost.outputs import OutputFolder
from agepost.report.samples_file import SAMPLES_FILE, DerivedSamplesWriter
from agepost.report.tables import quantity_record, summary_csv, summary_latex
from agepost.stats.summary import QuantitySummary, summarise

logger = logging.getLogger(__name__)

PARAMETER_UNITS = {"H0": "km/s/Mpc", "m_nu": "eV"}
LATEX_LABELS = {
    "age": "$t_0$", "H0": "$H_0$", "Omega_m": r"$\Omega_\mathrm{m}$", "Omega_k": r"$\Omega_k$",
    "w0": "$w_0$", "wa": "$w_a$", "m_nu": r"$\sum m_\nu$", "N_eff": r"$N_\mathrm{eff}$",
}
#: Seed of the random subsample drawn for figures when ``plot_cap`` is set (recorded).
PLOT_SUBSAMPLE_SEED = 20261202


@dataclasses.dataclass(frozen=True)
class RunResult:
    """What a run computed: inputs, derived samples, summaries and warnings."""

    samples: SampleSet
    derived: DerivedSamples
    quantities: dict[str, QuantitySummary]
    parameters: dict[str, QuantitySummary]
    warnings: tuple[str, ...]


def compute(settings: RunSettings) -> RunResult:
    """Read, derive and summarise (no files written)."""
    samples = read_chains(list(settings.chain_files), settings.read)
    derived = derive(samples, settings.redshifts, model=settings.model)
    return summarise_run(samples, derived, levels=settings.levels)


def summarise_run(samples: SampleSet, derived: DerivedSamples, *, levels: tuple[float, ...]) -> RunResult:
    """Summaries of every derived quantity and varying input parameter over kept rows."""
    kept = derived.kept & (derived.weights > 0)
    if not np.any(kept):
        reasons = ", ".join(f"{k}: {v}" for k, v in count_reasons(derived.exclusion).items()) or "all weights zero"
        raise ComputationError(
            f"all {derived.exclusion.size} samples of {samples.source} were excluded ({reasons}); "
            "nothing to summarise: check the parameter columns and the model settings"
        )
    weights, chains = derived.weights[kept], derived.chain_id[kept]
    quantities = {
        name: summarise(derived.quantities[name].to_numpy()[kept], weights, chains, levels=levels)
        for name in derived.quantities.columns
    }
    parameters = {
        name: summarise(samples.parameters[name].to_numpy(float)[kept], weights, chains, levels=levels)
        for name in samples.parameters.columns
        if np.ptp(samples.parameters[name].to_numpy(float)[kept]) > 0
    }
    warnings = [f"{name}: {text}" for name, summary in quantities.items() for text in summary.warnings]
    n_excluded = int(np.count_nonzero(~derived.kept))
    if n_excluded:
        fraction = n_excluded / derived.exclusion.size
        warnings.append(
            f"{n_excluded} of {derived.exclusion.size} samples ({fraction:.2%}) have no derived value: "
            + ", ".join(f"{k} {v}" for k, v in count_reasons(derived.exclusion).items())
            + "; the summaries describe the rest, which conditions the posterior on those rows"
        )
    return RunResult(samples, derived, quantities, parameters, tuple(warnings))


def summary_record(result: RunResult, settings: RunSettings) -> dict[str, Any]:
    """The ``summary.json`` document."""
    derived = result.derived
    return {
        "agepost_version": __version__,
        "source": result.samples.source,
        "n_samples": int(derived.exclusion.size),
        "n_kept": int(np.count_nonzero(derived.kept)),
        "n_excluded": int(np.count_nonzero(~derived.kept)),
        "excluded": count_reasons(derived.exclusion),
        "n_chains": result.samples.n_chains,
        "redshifts": list(derived.redshifts),
        "levels": list(settings.levels),
        "model": model_record(settings, derived),
        "quantities": {name: quantity_record(s, unit="Gyr") for name, s in result.quantities.items()},
        "parameters": {
            name: quantity_record(s, unit=PARAMETER_UNITS.get(name, "")) for name, s in result.parameters.items()
        },
        "warnings": list(result.warnings),
    }


def model_record(settings: RunSettings, derived: DerivedSamples) -> dict[str, Any]:
    """Model choices and every default that was applied."""
    return {
        "radiation": settings.model.radiation,
        "t_cmb_k": settings.model.t_cmb,
        "n_massive": settings.model.n_massive,
        "assumed_for_missing_parameters": dict(derived.filled),
    }


def latex_labels(redshifts: tuple[float, ...]) -> dict[str, str]:
    """LaTeX labels of the lookback and cosmic times at each redshift."""
    labels = {}
    for z in redshifts:
        text = redshift_label(z)
        labels[f"lookback_z{text}"] = rf"$t_\mathrm{{lb}}(z={text})$"
        labels[f"cosmic_time_z{text}"] = rf"$t(z={text})$"
    return labels


def output_names(settings: RunSettings) -> list[str]:
    """Every file a run writes, checked for clashes before anything is written."""
    names = ["summary.json", "summary.csv", "summary.tex", "provenance.json", SAMPLES_FILE]
    if "corner" in settings.figures:
        names += ["corner.png", "corner.pdf"]
    return names


def write_outputs(result: RunResult, settings: RunSettings, *, command: list[str] | None = None) -> list[Path]:
    """Write summaries, figures, derived samples and provenance into ``settings.output``."""
    folder = OutputFolder(settings.output, force=settings.force)
    folder.check_free(*output_names(settings))
    units = {name: "Gyr" for name in result.quantities} | {
        name: PARAMETER_UNITS.get(name, "") for name in result.parameters
    }
    everything = result.quantities | result.parameters
    labels = LATEX_LABELS | latex_labels(result.derived.redshifts)
    written = [
        folder.write_json("summary.json", summary_record(result, settings)),
        folder.write_text("summary.csv", summary_csv(everything, units)),
        folder.write_text("summary.tex", summary_latex(everything, units, labels)),
    ]
    with folder.atomic_path(SAMPLES_FILE) as temporary, DerivedSamplesWriter(temporary) as writer:
        d = result.derived
        writer.append(result.samples.parameters, d.quantities, weights=d.weights, chain_id=d.chain_id,
                      exclusion=d.exclusion)
    written.append(folder.root / SAMPLES_FILE)
    if "corner" in settings.figures:
        written += _corner(result, settings, folder)
    written.append(folder.write_json("provenance.json", provenance_record(result, settings, command)))
    return written


def _corner(result: RunResult, settings: RunSettings, folder: OutputFolder) -> list[Path]:
    from agepost.report.figures import corner_figure, save_figure  # matplotlib only when drawing

    derived = result.derived
    kept = np.flatnonzero(derived.kept & (derived.weights > 0))
    cap = settings.read.plot_cap
    if cap is not None and kept.size > cap:
        kept = np.sort(np.random.default_rng(PLOT_SUBSAMPLE_SEED).choice(kept, size=cap, replace=False))
        logger.info("corner plot drawn from %d of the kept samples (plot_cap)", cap)
    columns = [c for c in result.samples.parameters.columns if c in result.parameters]
    frame = pd.concat([result.samples.parameters.loc[kept, columns].reset_index(drop=True),
                       derived.quantities.loc[kept, ["age"]].reset_index(drop=True)], axis=1)
    labels = {"age": r"$t_0$ [Gyr]", "H0": r"$H_0$ [km/s/Mpc]", "m_nu": r"$\sum m_\nu$ [eV]"}
    labels = {k: v for k, v in (LATEX_LABELS | labels).items() if k in frame.columns}
    figure = corner_figure(frame, derived.weights[kept], levels=settings.levels, labels=labels)
    return save_figure(figure, folder, "corner")


def provenance_record(result: RunResult, settings: RunSettings, command: list[str] | None) -> dict[str, Any]:
    """Tool version, input checksums, resolved settings, defaults, seeds, exclusions."""
    read = dataclasses.asdict(settings.read)
    read.pop("from_config", None)
    return {
        "agepost_version": __version__,
        "created_utc": datetime.datetime.now(datetime.UTC).isoformat(timespec="seconds"),
        "command": command,
        "config_file": str(settings.config_file) if settings.config_file else None,
        "inputs": [file_fingerprint(path) for path in expand_paths(list(settings.chain_files))],
        "settings": {
            "read": {k: (str(v) if isinstance(v, Path) else v) for k, v in read.items()},
            "model": model_record(settings, result.derived),
            "redshifts": list(settings.redshifts),
            "levels": list(settings.levels),
            "output": str(settings.output),
            "figures": list(settings.figures),
        },
        "setting_sources": dict(settings.sources),
        "reader_notes": list(result.samples.notes),
        "excluded": count_reasons(result.derived.exclusion),
        "random_seeds": {"plot_subsample": PLOT_SUBSAMPLE_SEED},
    }


def file_fingerprint(path: Path) -> dict[str, Any]:
    """Path, size and SHA-256 of an input file (read in 1 MiB blocks)."""
    digest = hashlib.sha256()
    with open(path, "rb") as handle:
        for block in iter(lambda: handle.read(1 << 20), b""):
            digest.update(block)
    return {"path": str(path), "bytes": path.stat().st_size, "sha256": digest.hexdigest()}
