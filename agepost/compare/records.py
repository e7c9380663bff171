"""JSON-ready records and CSV text of run comparisons (keys documented in docs/compare.md).

Functions here build dicts and text; files are written by the command through
:class:`agepost.outputs.OutputFolder`.
"""

from __future__ import annotations

import csv
import io
import math
from typing import Any

from agepost.compare.confront import ObjectVerdict
from agepost.compare.reweight import Reweighted
from agepost.compare.runs import LoadedRun
from agepost.compare.shifts import RunComparison
from agepost.report.tables import quantity_record
from agepost.stats.difference import DifferenceSummary
from agepost.stats.summary import IntervalSummary

#: Units of input parameters (derived quantities are in Gyr).
PARAMETER_UNITS = {"H0": "km/s/Mpc", "m_nu": "eV"}


def unit_of(name: str, comparison: RunComparison) -> str:
    """Gyr for derived quantities, the parameter's unit otherwise."""
    return "Gyr" if name in comparison.quantities else PARAMETER_UNITS.get(name, "")


def intervals_record(intervals: dict[str, IntervalSummary]) -> dict[str, dict[str, Any]]:
    """``{"0.68": {"equal_tail": [lo, hi], "hpd": [lo, hi], "upper": x, "lower": x}}``."""
    return {
        key: {
            "equal_tail": list(item.equal_tail),
            "hpd": list(item.hpd),
            "upper": item.upper,
            "lower": item.lower,
        }
        for key, item in intervals.items()
    }


def difference_record(
    summary: DifferenceSummary, *, unit: str, first: str, second: str
) -> dict[str, Any]:
    """Record of one pair's difference ``second - first``."""
    return {
        "first": first,
        "second": second,
        "difference": {
            "unit": unit,
            "median": summary.median,
            "mean": summary.mean,
            "std": summary.std,
            "intervals": intervals_record(summary.intervals),
        },
        "prob_same_sign": summary.prob_same_sign,
        "tension_sigma": summary.tension_sigma,
        "tension_is_lower_bound": summary.tension_is_lower_bound,
        "tension_sigma_gaussian": summary.tension_sigma_gaussian,
        "n_draws": summary.n_draws,
        "ess_first": summary.ess_first,
        "ess_second": summary.ess_second,
        "warnings": list(summary.warnings),
    }


def run_record(run: LoadedRun) -> dict[str, Any]:
    """Where a run came from and how its times were made."""
    return {
        "source": run.source,
        "n_rows": run.n_rows,
        "n_used": run.n_samples,
        "n_left_out": run.n_excluded,
        "n_chains": int(len(set(run.chain_id.tolist()))),
        "redshifts": list(run.redshifts),
        "model": {
            "radiation": run.model.radiation,
            "t_cmb_k": run.model.t_cmb,
            "n_massive": run.model.n_massive,
            "values_for_absent_parameters": dict(run.model.defaults),
            "fixed_by_reader": dict(run.fixed),
        },
    }


def comparison_record(comparison: RunComparison, runs: list[LoadedRun]) -> dict[str, Any]:
    """The body of ``comparison.json`` (the command adds bands, inputs and settings)."""
    sections: dict[str, dict[str, Any]] = {"quantities": {}, "parameters": {}}
    for section, names in (
        ("quantities", comparison.quantities),
        ("parameters", comparison.parameters),
    ):
        for name in names:
            unit = unit_of(name, comparison)
            sections[section][name] = {
                "unit": unit,
                "runs": {
                    label: quantity_record(comparison.summaries[label][name], unit=unit)
                    for label in comparison.labels
                },
                "differences": {
                    key: difference_record(
                        comparison.differences[name][key], unit=unit, first=first, second=second
                    )
                    for key, (first, second) in comparison.pairs.items()
                },
            }
    return {
        "runs": {run.label: run_record(run) for run in runs},
        "pairs": {key: {"first": a, "second": b} for key, (a, b) in comparison.pairs.items()},
        **sections,
        "resampling": {
            "method": "systematic resampling of each run by weight, second run's draws "
            "randomly permuted",
            "n_draws": comparison.n_draws,
            "seed": comparison.seed,
        },
        "warnings": [note for run in runs if (note := left_out_note(run))]
        + comparison_warnings(comparison),
    }


def left_out_note(run: LoadedRun) -> str | None:
    """A sentence when rows of the run were left out (no derived value, or zero weight)."""
    if not run.n_excluded:
        return None
    return (
        f"{run.label}: {run.n_excluded} of {run.n_rows} rows have no derived value or zero weight "
        "and were left out; the comparison conditions on the rest"
    )


def comparison_warnings(comparison: RunComparison) -> list[str]:
    """Every warning of the per-run summaries and of the differences, prefixed by where."""
    notes = []
    for label in comparison.labels:
        for name, summary in comparison.summaries[label].items():
            notes += [f"{label} {name}: {text}" for text in summary.warnings]
    for name, pairs in comparison.differences.items():
        for key, difference in pairs.items():
            notes += [f"{name} ({key}): {text}" for text in difference.warnings]
    return notes


def _number(value: float | None) -> str:
    if value is None or not math.isfinite(value):
        return ""
    return repr(float(value))


def comparison_csv(comparison: RunComparison) -> str:
    """CSV text in long form: a ``run`` row per quantity and run, a ``shift`` row per pair.

    Columns: ``quantity, unit, row, label, median``, then for each level key ``K``
    ``equal_tail_lo_K, equal_tail_hi_K, hpd_lo_K, hpd_hi_K``, then ``prob_same_sign,
    tension_sigma, tension_is_lower_bound, tension_sigma_gaussian`` (empty on run rows).
    ``label`` is the run label, or the pair key ``"second - first"`` on shift rows.
    """
    keys: list[str] = []
    for label in comparison.labels:
        for summary in comparison.summaries[label].values():
            keys += [k for k in summary.intervals if k not in keys]
    header = ["quantity", "unit", "row", "label", "median"]
    header += [
        f"{field}_{key}"
        for key in keys
        for field in ("equal_tail_lo", "equal_tail_hi", "hpd_lo", "hpd_hi")
    ]
    header += [
        "prob_same_sign",
        "tension_sigma",
        "tension_is_lower_bound",
        "tension_sigma_gaussian",
    ]
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(header)
    for name in (*comparison.quantities, *comparison.parameters):
        unit = unit_of(name, comparison)
        for label in comparison.labels:
            summary = comparison.summaries[label][name]
            writer.writerow(
                [
                    name,
                    unit,
                    "run",
                    label,
                    _number(summary.median),
                    *_ends(summary.intervals, keys),
                    "",
                    "",
                    "",
                    "",
                ]
            )
        for key, difference in comparison.differences[name].items():
            writer.writerow(
                [
                    name,
                    unit,
                    "shift",
                    key,
                    _number(difference.median),
                    *_ends(difference.intervals, keys),
                    _number(difference.prob_same_sign),
                    _number(difference.tension_sigma),
                    str(difference.tension_is_lower_bound).lower(),
                    _number(difference.tension_sigma_gaussian),
                ]
            )
    return buffer.getvalue()


def _ends(intervals: dict[str, IntervalSummary], keys: list[str]) -> list[str]:
    cells = []
    for key in keys:
        item = intervals.get(key)
        ends = (*item.equal_tail, *item.hpd) if item is not None else (math.nan,) * 4
        cells += [_number(v) for v in ends]
    return cells


def verdict_record(verdict: ObjectVerdict) -> dict[str, Any]:
    """Record of one object in ``confront.json`` (keyed by the object's name)."""
    obj = verdict.obj
    return {
        "z": obj.z,
        "kind": obj.kind,
        "age_gyr": obj.age_gyr,
        "age_err_gyr": obj.age_err_gyr if obj.kind == "gaussian" else None,
        "universe_age_at_z": quantity_record(verdict.universe_time, unit="Gyr"),
        "p_universe_younger": verdict.p_universe_younger,
        "p_universe_younger_mcse": verdict.p_universe_younger_mcse,
        "formation_z": None
        if verdict.formation_z is None
        else quantity_record(verdict.formation_z, unit=""),
        "formation_z_is_lower_bound": obj.kind == "lower_limit",
        "frac_no_formation": verdict.frac_no_formation,
        "warnings": list(verdict.warnings),
    }


def reweight_record(result: Reweighted, run: LoadedRun, *, ess_floor: float) -> dict[str, Any]:
    """The body of ``reweight.json``: constraint, ESS and summaries before and after."""
    constraint = result.constraint
    sections: dict[str, dict[str, Any]] = {"quantities": {}, "parameters": {}}
    for name, before in result.before.items():
        section = "quantities" if name in run.quantities.columns else "parameters"
        unit = "Gyr" if section == "quantities" else PARAMETER_UNITS.get(name, "")
        after = result.after[name]
        sections[section][name] = {
            "unit": unit,
            "before": quantity_record(before, unit=unit),
            "after": quantity_record(after, unit=unit),
            "median_shift": after.median - before.median,
        }
    return {
        "run": run_record(run),
        "constraint": {
            "kind": constraint.kind,
            "age_gyr": constraint.age_gyr,
            "age_err_gyr": constraint.age_err_gyr,
            "description": constraint.describe(),
        },
        "ess_kish_before": result.ess_kish_before,
        "ess_kish_after": result.ess_kish_after,
        "ess_fraction_kept": result.ess_kish_after / result.ess_kish_before,
        "ess_floor": ess_floor,
        **sections,
        "warnings": list(result.warnings),
    }
