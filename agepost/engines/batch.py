"""Batch mode: many runs (configurations or chain files), one output folder each, one index.

Each input is a separate run through :func:`agepost.pipeline.run_to_folder`: its outputs
are staged, so a failed input leaves nothing in its folder and never touches another.
A failure (bad configuration, unreadable chain, existing outputs, ...) is recorded in
the index with its message and the other inputs carry on. With the Dask engine up to
``jobs`` runs share the cluster at once (threads of this process submitting tasks); the
local engine runs the inputs one after another, each in bounded memory.

Index table (``index.csv`` and ``index.json`` in the batch folder)
------------------------------------------------------------------
CSV, one row per run and quantity (a failed run has one row with an empty quantity):
``input, status, output, quantity, unit, n_samples, median, mean, std``, then for each
level key ``K``: ``equal_tail_lo_K, equal_tail_hi_K, hpd_lo_K, hpd_hi_K``, then
``ess, rhat, message``. ``status`` is ``ok`` or ``failed``. JSON: ``{"agepost_version",
"runs": [{"input", "status", "output", "message", "n_samples", "n_kept", "n_excluded",
"quantities": {name: record}, "parameters": {name: record}}]}`` where each record is the
quantity's entry of that run's ``summary.json``.
"""

from __future__ import annotations

import concurrent.futures
import csv
import dataclasses
import io
import logging
import math
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import Any

from agepost import __version__
from agepost.errors import AgepostError
from agepost.outputs import OutputFolder

logger = logging.getLogger(__name__)

INDEX_FILES = ("index.csv", "index.json")


@dataclasses.dataclass(frozen=True)
class BatchInput:
    """One input of a batch: a label, where its outputs go, and how to make its settings."""

    label: str
    output: Path
    settings: Callable[[], Any]


@dataclasses.dataclass(frozen=True)
class BatchEntry:
    """Outcome of one input: ``status`` is ``ok`` (with its summary record) or ``failed``."""

    label: str
    output: Path
    status: str
    message: str
    record: dict[str, Any] | None


def folder_names(labels: Sequence[str]) -> list[str]:
    """One distinct folder name per input: the file stem, with ``-2``, ``-3`` on repeats."""
    seen: dict[str, int] = {}
    names = []
    for label in labels:
        stem = Path(label).name.split(".")[0] or "run"
        seen[stem] = seen.get(stem, 0) + 1
        names.append(stem if seen[stem] == 1 else f"{stem}-{seen[stem]}")
    return names


def run_batch(
    inputs: Sequence[BatchInput], run_one: Callable[[Any], dict[str, Any]], *, jobs: int
) -> list[BatchEntry]:
    """Run every input (``run_one(settings) -> summary record``); failures are recorded.

    ``jobs`` runs go at once (threads); results keep the order of ``inputs``.
    """

    def attempt(item: BatchInput) -> BatchEntry:
        try:
            record = run_one(item.settings())
        except AgepostError as error:
            logger.warning("%s failed: %s", item.label, error)
            return BatchEntry(item.label, item.output, "failed", str(error), None)
        except Exception as error:  # noqa: BLE001 - one input's bug must not stop the others
            logger.exception("%s failed with an unexpected error", item.label)
            return BatchEntry(
                item.label, item.output, "failed", f"{type(error).__name__}: {error}", None
            )
        return BatchEntry(item.label, item.output, "ok", "", record)

    if jobs <= 1:
        return [attempt(item) for item in inputs]
    with concurrent.futures.ThreadPoolExecutor(max_workers=jobs) as pool:
        return list(pool.map(attempt, inputs))


def index_csv(entries: Sequence[BatchEntry]) -> str:
    """The CSV index (see the module docstring)."""
    keys: list[str] = []
    for entry in entries:
        for record in _records(entry).values():
            keys += [k for k in record["intervals"] if k not in keys]
    header = ["input", "status", "output", "quantity", "unit", "n_samples", "median", "mean", "std"]
    header += [
        f"{f}_{k}" for k in keys for f in ("equal_tail_lo", "equal_tail_hi", "hpd_lo", "hpd_hi")
    ]
    header += ["ess", "rhat", "message"]
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(header)
    for entry in entries:
        start = [entry.label, entry.status, str(entry.output)]
        records = _records(entry)
        if not records:
            writer.writerow(start + [""] * (len(header) - 4) + [entry.message])
        for name, record in records.items():
            row = start + [name, record["unit"], record["n_samples"]]
            row += [_cell(record[k]) for k in ("median", "mean", "std")]
            for key in keys:
                interval = record["intervals"].get(key, {})
                ends = [
                    *interval.get("equal_tail", [None, None]),
                    *interval.get("hpd", [None, None]),
                ]
                row += [_cell(v) for v in ends]
            writer.writerow(row + [_cell(record["ess"]), _cell(record["rhat"]), entry.message])
    return buffer.getvalue()


def index_record(entries: Sequence[BatchEntry]) -> dict[str, Any]:
    """The JSON index (see the module docstring)."""
    runs = []
    for entry in entries:
        run: dict[str, Any] = {
            "input": entry.label,
            "status": entry.status,
            "output": str(entry.output),
            "message": entry.message,
        }
        if entry.record is not None:
            run |= {k: entry.record[k] for k in ("n_samples", "n_kept", "n_excluded")}
            run |= {k: entry.record[k] for k in ("quantities", "parameters")}
        runs.append(run)
    return {"agepost_version": __version__, "runs": runs}


def write_index(folder: OutputFolder, entries: Sequence[BatchEntry]) -> list[Path]:
    """Write ``index.csv`` and ``index.json`` atomically into ``folder``."""
    return [
        folder.write_text("index.csv", index_csv(entries)),
        folder.write_json("index.json", index_record(entries)),
    ]


def _records(entry: BatchEntry) -> dict[str, dict[str, Any]]:
    if entry.record is None:
        return {}
    return entry.record["quantities"] | entry.record["parameters"]


def _cell(value: Any) -> str:
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return ""
    return repr(float(value)) if isinstance(value, float) else str(value)
