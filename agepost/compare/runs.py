"""Load finished runs (output folders) or chain files as comparable, rebuildable sets of samples.

A run folder is what ``agepost run`` or ``agepost derive`` wrote: ``samples.h5`` (input
parameters, derived quantities in Gyr, weights, chain ids and exclusion codes; layout in
:mod:`agepost.report.samples_file`), ``summary.json`` (its ``model`` record says how the
times were made) and ``provenance.json`` (its ``settings.read.fixed`` holds parameters the
reader fixed). A chain input is read with :func:`agepost.chains.read_chains` and derived
here. Either way only kept rows with positive weight are used, and the expansion history
of every sample can be rebuilt (:meth:`LoadedRun.background`) from its parameters and the
recorded model.
"""

from __future__ import annotations

import dataclasses
import json
import re
from collections.abc import Sequence
from pathlib import Path
from types import SimpleNamespace
from typing import Any

import h5py
import numpy as np
import pandas as pd
from numpy.typing import NDArray

from agepost.chains import CANONICAL_PARAMETERS, ReadOptions, read_chains
from agepost.chains.reader import DEFAULT_CHUNK_ROWS, concatenate, expand_paths
from agepost.derive import ModelSettings, concatenate_derived, derive
from agepost.errors import ConfigError, InputError
from agepost.exclusions import Exclusion
from agepost.physics.background import Background, make_background
from agepost.report.samples_file import SAMPLES_FILE


@dataclasses.dataclass(frozen=True)
class LoadedRun:
    """The kept, positively weighted samples of one run.

    Attributes
    ----------
    label : str
        Short name used in tables, legends and JSON keys.
    source : str
        Run folder or chain files it came from.
    parameters : DataFrame (n, k)
        Canonical input parameters the samples carry (H0 in km/s/Mpc, m_nu in eV).
    quantities : DataFrame (n, q)
        Derived quantities in Gyr (``age``, ``lookback_z<z>``, ``cosmic_time_z<z>``).
    weights, chain_id : (n,) arrays
    model : ModelSettings
        Radiation model, T_cmb, massive species, and values for absent parameters.
    fixed : dict
        Canonical parameters the reader held at one value.
    redshifts : tuple of float
        Redshifts the derived times were made at.
    n_rows, n_excluded : int
        Rows in the input, and rows left out (no derived value or zero weight).
    input_files : tuple of Path
        Files read (for checksums in the provenance).
    """

    label: str
    source: str
    parameters: pd.DataFrame
    quantities: pd.DataFrame
    weights: NDArray[np.float64]
    chain_id: NDArray[np.int64]
    model: ModelSettings
    fixed: dict[str, float]
    redshifts: tuple[float, ...]
    n_rows: int
    n_excluded: int
    input_files: tuple[Path, ...]

    @property
    def n_samples(self) -> int:
        """Kept rows."""
        return len(self.weights)

    def background(self, rows: NDArray[np.intp] | None = None) -> Background:
        """Density budget of the samples (or of ``rows``), for recomputing times."""
        pick = slice(None) if rows is None else rows
        arrays: dict[str, Any] = {}
        for name, keyword in CANONICAL_PARAMETERS.items():
            if name in self.parameters.columns:
                arrays[keyword] = self.parameters[name].to_numpy(float)[pick]
            elif name in self.fixed:
                arrays[keyword] = float(self.fixed[name])
            else:
                arrays[keyword] = float(self.model.defaults[keyword])
        count = self.n_samples if rows is None else len(rows)
        arrays["h0"] = np.broadcast_to(arrays["h0"], (count,))
        return make_background(
            **arrays,
            t_cmb=self.model.t_cmb,
            n_massive=self.model.n_massive,
            radiation=self.model.radiation,
        )


def default_label(item: str | Path) -> str:
    """Label from a folder name or a file stem (glob characters dropped)."""
    path = Path(item)
    name = path.name if path.is_dir() else path.stem
    return re.sub(r"[*?\[\]]", "", name).strip("_-. ") or str(item)


def load_runs(
    items: Sequence[str | Path],
    *,
    labels: Sequence[str] | None = None,
    redshifts: Sequence[float] = (),
    model: ModelSettings | None = None,
    read: ReadOptions | None = None,
    engine: Any | None = None,
) -> list[LoadedRun]:
    """Load each item (run folder, chain file or quoted glob) with a unique label.

    ``redshifts``, ``model``, ``read`` and ``engine`` (an :mod:`agepost.engines` engine
    that derives chain inputs chunk by chunk) apply to chain inputs only; run folders carry
    their own.
    """
    if labels is not None and len(labels) != len(items):
        raise ConfigError(
            f"{len(labels)} labels given for {len(items)} runs; give one label per run"
        )
    names = list(labels) if labels is not None else [default_label(item) for item in items]
    seen: dict[str, str] = {}
    for name, item in zip(names, items, strict=True):
        if not name.strip():
            raise ConfigError(f"the label of {item} is empty; give a name with --labels")
        if name in seen:
            raise ConfigError(
                f"{seen[name]} and {item} are both labelled {name!r}; "
                "give distinct names with --labels"
            )
        seen[name] = str(item)
    return [
        load_run(item, label=name, redshifts=redshifts, model=model, read=read, engine=engine)
        for name, item in zip(names, items, strict=True)
    ]


def load_run(
    item: str | Path,
    *,
    label: str | None = None,
    redshifts: Sequence[float] = (),
    model: ModelSettings | None = None,
    read: ReadOptions | None = None,
    engine: Any | None = None,
) -> LoadedRun:
    """One run folder (has ``samples.h5``) or chain file(s) (derived at ``redshifts``)."""
    label = label or default_label(item)
    if Path(item).is_dir():
        return _load_folder(Path(item), label)
    model = model or ModelSettings()
    if engine is None:
        samples = read_chains(str(item), read or ReadOptions())
        derived = derive(samples, redshifts, model=model)
    else:
        job = SimpleNamespace(
            chain_files=(str(item),),
            read=read or ReadOptions(),
            model=model,
            redshifts=tuple(redshifts),
        )
        parts = list(engine.derived_chunks(job, chunk_rows=DEFAULT_CHUNK_ROWS))
        samples = concatenate([p.samples for p in parts])
        derived = concatenate_derived([p.derived for p in parts])
    keep = derived.kept & (derived.weights > 0)
    _require_rows(keep, str(item))
    defaults = dict(model.defaults) | {
        CANONICAL_PARAMETERS[k]: v for k, v in derived.filled.items()
    }
    return LoadedRun(
        label=label,
        source=samples.source,
        parameters=samples.parameters.loc[keep].reset_index(drop=True),
        quantities=derived.quantities.loc[keep].reset_index(drop=True),
        weights=derived.weights[keep],
        chain_id=derived.chain_id[keep],
        model=dataclasses.replace(model, defaults=defaults),
        fixed={k: float(v) for k, v in samples.fixed.items() if k in CANONICAL_PARAMETERS},
        redshifts=tuple(derived.redshifts),
        n_rows=int(keep.size),
        n_excluded=int(np.count_nonzero(~keep)),
        input_files=tuple(expand_paths(str(item))),
    )


def _require_rows(keep: NDArray[np.bool_], where: str) -> None:
    if not np.any(keep):
        raise InputError(
            f"{where}: no sample has a derived value and a positive weight; "
            "check the chain and its weights"
        )


def _read_json(path: Path) -> dict[str, Any]:
    try:
        document = json.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise InputError(
            f"{path} is missing; a run folder holds the summary.json that agepost run/derive wrote"
        ) from None
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as error:
        raise InputError(
            f"{path} cannot be read as JSON ({error}); rerun agepost run/derive"
        ) from None
    if not isinstance(document, dict):
        raise InputError(f"{path} is not a JSON object; rerun agepost run/derive")
    return document


def model_from_summary(summary: dict[str, Any], where: Path) -> ModelSettings:
    """ModelSettings from the ``model`` record of a ``summary.json``."""
    record = summary.get("model")
    if not isinstance(record, dict):
        raise InputError(f"{where} has no 'model' record; rerun agepost run/derive to recreate it")
    assumed = record.get("assumed_for_missing_parameters", {}) or {}
    unknown = [k for k in assumed if k not in CANONICAL_PARAMETERS]
    if unknown:
        raise InputError(f"{where}: model assumes unknown parameter {unknown[0]!r}")
    defaults = dict(ModelSettings().defaults) | {
        CANONICAL_PARAMETERS[k]: float(v) for k, v in assumed.items()
    }
    try:
        return ModelSettings(
            radiation=str(record["radiation"]),
            n_massive=int(record["n_massive"]),
            t_cmb=float(record["t_cmb_k"]),
            defaults=defaults,
        )
    except (KeyError, TypeError, ValueError) as error:
        raise InputError(
            f"{where}: the model record lacks or garbles {error}; rerun agepost run/derive"
        ) from None
    except ConfigError as error:
        raise InputError(f"{where}: {error.message}") from None


def _load_folder(folder: Path, label: str) -> LoadedRun:
    summary_path = folder / "summary.json"
    samples_path = folder / SAMPLES_FILE
    if not samples_path.is_file():
        raise InputError(
            f"{folder} has no {SAMPLES_FILE}; give an output folder of agepost run/derive "
            "or a chain file"
        )
    summary = _read_json(summary_path)
    model = model_from_summary(summary, summary_path)
    provenance_path = folder / "provenance.json"
    fixed: dict[str, float] = {}
    if provenance_path.is_file():
        read_settings = _read_json(provenance_path).get("settings", {}).get("read", {})
        fixed = {
            k: float(v)
            for k, v in (read_settings.get("fixed") or {}).items()
            if k in CANONICAL_PARAMETERS
        }
    parameters, quantities, weights, chain_id, exclusion = _read_samples(samples_path)
    keep = (exclusion == Exclusion.KEPT) & (weights > 0)
    _require_rows(keep, str(samples_path))
    return LoadedRun(
        label=label,
        source=str(folder),
        parameters=parameters.loc[keep].reset_index(drop=True),
        quantities=quantities.loc[keep].reset_index(drop=True),
        weights=weights[keep],
        chain_id=chain_id[keep],
        model=model,
        fixed=fixed,
        redshifts=tuple(float(z) for z in summary.get("redshifts", [])),
        n_rows=int(keep.size),
        n_excluded=int(np.count_nonzero(~keep)),
        input_files=(samples_path,),
    )


def _read_samples(path: Path) -> tuple[pd.DataFrame, pd.DataFrame, NDArray, NDArray, NDArray]:
    """Datasets of a derived-samples file: parameters, derived, weight, chain_id, exclusion."""
    try:
        with h5py.File(path, "r") as handle:
            for name in ("parameters", "derived", "weight", "chain_id", "exclusion"):
                if name not in handle:
                    raise InputError(f"{path} lacks the {name!r} entry; rerun agepost run/derive")
            parameters = pd.DataFrame(
                {k: handle["parameters"][k][()] for k in handle["parameters"]}
            )
            parameters = parameters[[c for c in CANONICAL_PARAMETERS if c in parameters.columns]]
            quantities = pd.DataFrame({k: handle["derived"][k][()] for k in handle["derived"]})
            weights = np.asarray(handle["weight"][()], float)
            chain_id = np.asarray(handle["chain_id"][()], np.int64)
            exclusion = np.asarray(handle["exclusion"][()], np.int8)
    except OSError as error:
        raise InputError(
            f"{path} is not a readable HDF5 file ({error}); rerun agepost run/derive"
        ) from None
    if "age" in quantities.columns:  # keep the order age, then by redshift as written
        quantities = quantities[
            ["age", *sorted(set(quantities.columns) - {"age"}, key=_name_order)]
        ]
    n = weights.size
    if (
        any(len(frame) not in (0, n) for frame in (parameters, quantities))
        or chain_id.size != n
        or exclusion.size != n
    ):
        raise InputError(
            f"{path}: its datasets have different lengths; the file is damaged, rerun the run"
        )
    bad = np.flatnonzero(~np.isfinite(weights) | (weights < 0))
    if bad.size:
        raise InputError(
            f"{path}: weight in row {bad[0]} is {weights[bad[0]]}; weights must be finite and >= 0"
        )
    return parameters, quantities, weights, chain_id, exclusion


def _name_order(name: str) -> tuple[float, int, str]:
    """Sort derived names by redshift, lookback before cosmic time (the order derive writes)."""
    match = re.search(r"_z([0-9.eE+-]+)$", name)
    return (float(match.group(1)) if match else -1.0, 0 if name.startswith("lookback") else 1, name)
