"""One run from start to end: read the chain, derive, summarise, write the outputs.

:func:`run_to_folder` is what ``agepost run`` and ``agepost derive`` call. It streams the
chain through an engine (:mod:`agepost.engines`) chunk by chunk, appending every derived
chunk to ``samples.h5``, so memory stays bounded whatever the chain's length. A run of at
most ``StreamSettings.in_memory_values`` values is then summarised in memory, exactly as
:func:`agepost.stats.summary.summarise` does; a longer one by passes over ``samples.h5``
(:mod:`agepost.engines.streamed`). Every output is staged and appears only when all are
complete (:mod:`agepost.engines.staging`).

:func:`compute` and :func:`summarise_run` are the in-memory path for notebooks (nothing
written).
"""

from __future__ import annotations

import dataclasses
import datetime
import functools
import hashlib
import logging
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from agepost import __version__
from agepost.bands import default_grid, redshift_band
from agepost.chains import CANONICAL_PARAMETERS, SampleSet, read_chains
from agepost.chains.reader import expand_paths
from agepost.config import RunSettings
from agepost.derive import DerivedSamples, derive, redshift_label, unique_redshifts
from agepost.engines import Engine
from agepost.engines.derive_pass import RunOverview, RunTally, load_samples, varying_parameters
from agepost.engines.passes import GatherPlan, combine_gathered, gather_piece
from agepost.engines.staging import staged_outputs
from agepost.engines.streamed import StreamSettings, streamed_summaries
from agepost.errors import ComputationError
from agepost.exclusions import count_reasons
from agepost.outputs import OutputFolder
from agepost.progress import progress
from agepost.report.samples_file import SAMPLES_FILE, DerivedSamplesWriter
from agepost.report.tables import quantity_record, summary_csv, summary_latex
from agepost.stats.summary import QuantitySummary, summarise

logger = logging.getLogger(__name__)

PARAMETER_UNITS = {"H0": "km/s/Mpc", "m_nu": "eV"}
LATEX_LABELS = {
    "age": "$t_0$",
    "H0": "$H_0$",
    "Omega_m": r"$\Omega_\mathrm{m}$",
    "Omega_k": r"$\Omega_k$",
    "w0": "$w_0$",
    "wa": "$w_a$",
    "m_nu": r"$\sum m_\nu$",
    "N_eff": r"$N_\mathrm{eff}$",
}
#: Rows read and derived at once by :func:`run_to_folder` (about 0.3 GB of working memory
#: with a dozen derived quantities).
CHUNK_ROWS = 500_000
#: Seed of the random subsample drawn for figures when ``plot_cap`` is set (recorded).
PLOT_SUBSAMPLE_SEED = 20261202
#: The one-page report of a run.
REPORT_FILE = "report.html"


@dataclasses.dataclass(frozen=True)
class RunResult:
    """What an in-memory run computed: inputs, derived samples, summaries and warnings."""

    samples: SampleSet
    derived: DerivedSamples
    quantities: dict[str, QuantitySummary]
    parameters: dict[str, QuantitySummary]
    warnings: tuple[str, ...]

    @property
    def overview(self) -> RunOverview:
        """Counts and bookkeeping of the run."""
        derived = self.derived
        return RunOverview(
            source=self.samples.source,
            n_samples=int(derived.exclusion.size),
            n_kept=int(np.count_nonzero(derived.kept)),
            excluded=count_reasons(derived.exclusion),
            n_chains=self.samples.n_chains,
            redshifts=derived.redshifts,
            filled=dict(derived.filled),
            notes=self.samples.notes,
        )


@dataclasses.dataclass(frozen=True)
class RunSummary:
    """What a run written to a folder reports (no samples held in memory).

    ``method`` says how the statistics were made: ``"in memory"`` or ``"streamed"``.
    """

    overview: RunOverview
    quantities: dict[str, QuantitySummary]
    parameters: dict[str, QuantitySummary]
    warnings: tuple[str, ...]
    method: str


def compute(settings: RunSettings) -> RunResult:
    """Read, derive and summarise in memory (no files written)."""
    samples = read_chains(list(settings.chain_files), settings.read)
    derived = derive(samples, settings.redshifts, model=settings.model)
    return summarise_run(samples, derived, levels=settings.levels)


def summarise_run(
    samples: SampleSet, derived: DerivedSamples, *, levels: tuple[float, ...]
) -> RunResult:
    """Summaries of every derived quantity and varying input parameter over kept rows."""
    kept = derived.kept & (derived.weights > 0)
    if not np.any(kept):
        reasons = (
            ", ".join(f"{k}: {v}" for k, v in count_reasons(derived.exclusion).items())
            or "all weights zero"
        )
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
        name: summarise(
            samples.parameters[name].to_numpy(float)[kept], weights, chains, levels=levels
        )
        for name in samples.parameters.columns
        if np.ptp(samples.parameters[name].to_numpy(float)[kept]) > 0
    }
    result = RunResult(samples, derived, quantities, parameters, ())
    return dataclasses.replace(result, warnings=run_warnings(quantities, result.overview))


def run_warnings(quantities: dict[str, QuantitySummary], overview: RunOverview) -> tuple[str, ...]:
    """Warnings of every derived quantity, and one for samples without a derived value."""
    warnings = [
        f"{name}: {text}" for name, summary in quantities.items() for text in summary.warnings
    ]
    n_excluded = overview.n_samples - overview.n_kept
    if n_excluded:
        fraction = n_excluded / overview.n_samples
        warnings.append(
            f"{n_excluded} of {overview.n_samples} samples ({fraction:.2%}) have no derived value: "
            + ", ".join(f"{k} {v}" for k, v in overview.excluded.items())
            + "; the summaries describe the rest, which conditions the posterior on those rows"
        )
    return tuple(warnings)


def run_to_folder(
    settings: RunSettings,
    engine: Engine,
    *,
    command: list[str] | None = None,
    stream: StreamSettings | None = None,
    chunk_rows: int = CHUNK_ROWS,
    show_progress: bool = False,
) -> RunSummary:
    """Derive, summarise and write every output of one run into ``settings.output``.

    Nothing appears in the folder unless the whole run succeeds (outputs are staged).

    Parameters
    ----------
    settings : RunSettings
    engine : Engine
        Where chunks are derived and passes computed (:func:`agepost.engines.open_engine`).
    command : list of str or None
        Command line recorded in the provenance.
    stream : StreamSettings or None
        Memory budgets; the default summarises up to 12 million values in memory.
    chunk_rows : int
        Rows read and derived at once.
    show_progress : bool
        Draw a progress bar on stderr (only on a terminal).
    """
    stream = stream or StreamSettings()
    folder = OutputFolder(settings.output, force=settings.force)
    with staged_outputs(folder, output_names(settings)) as stage:
        samples_path = stage.root / SAMPLES_FILE
        with DerivedSamplesWriter(samples_path) as writer:
            tally = RunTally(writer)
            with progress(None, label="deriving rows", enabled=show_progress) as bar:
                for result in engine.derived_chunks(settings, chunk_rows=chunk_rows):
                    tally.add(result)
                    bar.advance(result.samples.n_samples)
        overview = tally.overview()
        for name, value in overview.filled.items():
            logger.info("%s is not in the chain: assumed %s for every sample", name, value)
        columns = len(tally.columns or []) + len(tally.quantities)
        if tally.n_rows * columns <= stream.in_memory_values:
            summary, corner = _in_memory(samples_path, tally, settings)
        else:
            summary, corner = _streamed(samples_path, tally, settings, engine, stream)
        _write_records(stage, summary, settings, engine, stream, corner, command)
    return summary


def _in_memory(path: Path, tally: RunTally, settings: RunSettings) -> tuple[RunSummary, Any]:
    samples, derived = load_samples(path, tally)
    result = summarise_run(samples, derived, levels=settings.levels)
    kept = np.flatnonzero(derived.kept & (derived.weights > 0))
    rows = _figure_rows(kept.size, settings.read.plot_cap)
    frame = pd.concat(
        [
            samples.parameters.loc[kept[rows]].reset_index(drop=True),
            derived.quantities.loc[kept[rows]].reset_index(drop=True),
        ],
        axis=1,
    )
    summary = RunSummary(
        result.overview, result.quantities, result.parameters, result.warnings, "in memory"
    )
    return summary, FigureRows(frame, derived.weights[kept[rows]], dict(samples.fixed), kept.size)


def _streamed(
    path: Path, tally: RunTally, settings: RunSettings, engine: Engine, stream: StreamSettings
) -> tuple[RunSummary, Any]:
    overview = tally.overview()
    logger.info("%d rows: summarising by passes over %s", tally.n_rows, SAMPLES_FILE)
    parameters = varying_parameters(tally)
    names = [f"derived/{q}" for q in tally.quantities] + [f"parameters/{p}" for p in parameters]
    found = streamed_summaries(
        str(path), tally, names, engine, levels=settings.levels, settings=stream
    )
    quantities = {q: found[f"derived/{q}"] for q in tally.quantities}
    summaries = {p: found[f"parameters/{p}"] for p in parameters}
    summary = RunSummary(
        overview, quantities, summaries, run_warnings(quantities, overview), "streamed"
    )
    if not settings.figures and not settings.report:
        return summary, None
    cap = settings.read.plot_cap or stream.figure_rows
    ranks = _figure_rows(tally.n_counted, cap)
    columns = tuple(f"parameters/{p}" for p in tally.columns or []) + tuple(
        f"derived/{q}" for q in tally.quantities
    )
    plan = GatherPlan(str(path), columns, ranks)
    pieces = engine.map_ordered(gather_piece, tally.slices, shared=plan)
    gathered: dict[str, np.ndarray] = functools.reduce(combine_gathered, pieces)
    weights = gathered.pop("weight")
    frame = pd.DataFrame({name.split("/", 1)[1]: values for name, values in gathered.items()})
    return summary, FigureRows(frame, weights, dict(tally.fixed), tally.n_counted)


def _figure_rows(n_counted: int, cap: int | None) -> np.ndarray:
    """Ranks (among counted rows) drawn for figures: all, or ``cap`` by the recorded seed."""
    if cap is None or n_counted <= cap:
        return np.arange(n_counted)
    logger.info("corner plot drawn from %d of the kept samples", cap)
    return np.sort(
        np.random.default_rng(PLOT_SUBSAMPLE_SEED).choice(n_counted, size=cap, replace=False)
    )


def _write_records(
    stage: OutputFolder,
    summary: RunSummary,
    settings: RunSettings,
    engine: Engine,
    stream: StreamSettings,
    corner: Any,
    command: list[str] | None,
) -> None:
    units = {name: "Gyr" for name in summary.quantities} | {
        name: PARAMETER_UNITS.get(name, "") for name in summary.parameters
    }
    everything = summary.quantities | summary.parameters
    labels = LATEX_LABELS | latex_labels(summary.overview.redshifts)
    stage.write_json("summary.json", summary_record(summary, settings))
    stage.write_text("summary.csv", summary_csv(everything, units))
    stage.write_text("summary.tex", summary_latex(everything, units, labels))
    record = provenance_record(summary, settings, command)
    if corner is not None:
        _figures_and_report(corner, summary, settings, stage, record)
    record["computation"] = {
        "engine": engine.describe(),
        "statistics": summary.method,
        "budgets": dataclasses.asdict(stream),
    }
    stage.write_json("provenance.json", record)


def summary_record(result: RunResult | RunSummary, settings: RunSettings) -> dict[str, Any]:
    """The ``summary.json`` document."""
    overview = result.overview
    return {
        "agepost_version": __version__,
        "source": overview.source,
        "n_samples": overview.n_samples,
        "n_kept": overview.n_kept,
        "n_excluded": overview.n_samples - overview.n_kept,
        "excluded": dict(overview.excluded),
        "n_chains": overview.n_chains,
        "redshifts": list(overview.redshifts),
        "levels": list(settings.levels),
        "model": model_record(settings, overview),
        "quantities": {
            name: quantity_record(s, unit="Gyr") for name, s in result.quantities.items()
        },
        "parameters": {
            name: quantity_record(s, unit=PARAMETER_UNITS.get(name, ""))
            for name, s in result.parameters.items()
        },
        "warnings": list(result.warnings),
    }


def model_record(settings: RunSettings, overview: RunOverview) -> dict[str, Any]:
    """Model choices and every default that was applied."""
    return {
        "radiation": settings.model.radiation,
        "t_cmb_k": settings.model.t_cmb,
        "n_massive": settings.model.n_massive,
        "assumed_for_missing_parameters": dict(overview.filled),
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
    stems: list[str] = [g for g in ("corner", "age_redshift") if g in settings.figures]
    if "marginals" in settings.figures:
        stems += ["marginal_age"] + [
            f"marginal_lookback_z{redshift_label(z)}" for z in unique_redshifts(settings.redshifts)
        ]
    names += [f"{stem}.{suffix}" for stem in stems for suffix in ("png", "pdf")]
    if settings.report:
        names.append(REPORT_FILE)
    return names


@dataclasses.dataclass(frozen=True)
class FigureRows:
    """Kept rows drawn for figures: every parameter column and every derived quantity."""

    frame: pd.DataFrame
    weights: np.ndarray
    fixed: dict[str, float]
    n_population: int


def _figures_and_report(
    rows: FigureRows,
    summary: RunSummary,
    settings: RunSettings,
    folder: OutputFolder,
    provenance: dict[str, Any],
) -> None:
    """Draw the figure groups of ``settings.figures`` and write report.html."""
    from agepost.report.figures import save_figure  # matplotlib only when drawing
    from agepost.report.html import render_report
    from agepost.report.run_figures import build_run_figures, figure_caption, png_bytes

    parameter_columns = [c for c in rows.frame.columns if c in CANONICAL_PARAMETERS]
    band = None
    if "age_redshift" in settings.figures:
        samples = SampleSet(
            parameters=rows.frame[parameter_columns],
            weights=rows.weights,
            chain_id=np.zeros(len(rows.frame), dtype=np.int64),
            fixed=rows.fixed,
        )
        band = redshift_band(
            samples,
            settings.model,
            grid=default_grid(settings.redshifts),
            n_population=rows.n_population,
        )
    figures = build_run_figures(
        parameters=rows.frame[[c for c in parameter_columns if c in summary.parameters]],
        quantities=rows.frame[list(summary.quantities)],
        weights=rows.weights,
        summaries=summary.quantities,
        band=band,
        levels=settings.levels,
        groups=settings.figures,
    )
    for stem, figure in figures.items():
        save_figure(figure, folder, stem)
    if settings.report:
        context = report_context(summary, settings, provenance)
        context["captions"] = {stem: figure_caption(stem) for stem in figures}
        pictures = {stem: png_bytes(figure) for stem, figure in figures.items()}
        folder.write_text(REPORT_FILE, render_report(context, pictures))


def report_context(
    summary: RunSummary, settings: RunSettings, provenance: dict[str, Any]
) -> dict[str, Any]:
    """What the one-page report lists besides the figures."""
    overview = summary.overview
    inputs: dict[str, Any] = {
        f"chain file {i + 1}": f"{item['path']} (sha256 {item['sha256'][:12]}…)"
        for i, item in enumerate(provenance["inputs"])
    }
    inputs |= {
        "samples read": overview.n_samples,
        "kept": overview.n_kept,
        "chains": overview.n_chains,
    }
    model = {
        "radiation": settings.model.radiation,
        "T_cmb [K]": settings.model.t_cmb,
        "massive neutrino species": settings.model.n_massive,
    }
    model |= {f"{name} (not in the chain)": value for name, value in overview.filled.items()}
    units = {name: "Gyr" for name in summary.quantities} | {
        name: PARAMETER_UNITS.get(name, "") for name in summary.parameters
    }
    return {
        "title": f"agepost run: {settings.output.name}",
        "subtitle": f"agepost {__version__}, {provenance['created_utc']}",
        "inputs": inputs,
        "model": model,
        "summary": {
            name: quantity_record(s, unit=units[name])
            for name, s in (summary.quantities | summary.parameters).items()
        },
        "excluded": dict(overview.excluded),
        "warnings": list(summary.warnings),
    }


def provenance_record(
    result: RunResult | RunSummary, settings: RunSettings, command: list[str] | None
) -> dict[str, Any]:
    """Tool version, input checksums, resolved settings, defaults, seeds, exclusions."""
    read = dataclasses.asdict(settings.read)
    read.pop("from_config", None)
    overview = result.overview
    return {
        "agepost_version": __version__,
        "created_utc": datetime.datetime.now(datetime.UTC).isoformat(timespec="seconds"),
        "command": command,
        "config_file": str(settings.config_file) if settings.config_file else None,
        "inputs": [file_fingerprint(path) for path in expand_paths(list(settings.chain_files))],
        "settings": {
            "read": {k: (str(v) if isinstance(v, Path) else v) for k, v in read.items()},
            "model": model_record(settings, overview),
            "redshifts": list(settings.redshifts),
            "levels": list(settings.levels),
            "output": str(settings.output),
            "figures": list(settings.figures),
        },
        "setting_sources": dict(settings.sources),
        "reader_notes": list(overview.notes),
        "excluded": dict(overview.excluded),
        "random_seeds": {"plot_subsample": PLOT_SUBSAMPLE_SEED},
    }


def file_fingerprint(path: Path) -> dict[str, Any]:
    """Path, size and SHA-256 of an input file (read in 1 MiB blocks)."""
    digest = hashlib.sha256()
    with open(path, "rb") as handle:
        for block in iter(lambda: handle.read(1 << 20), b""):
            digest.update(block)
    return {"path": str(path), "bytes": path.stat().st_size, "sha256": digest.hexdigest()}
