"""What a fit leaves behind besides the chain: its summary record and the age run config.

The run config follows the layout read by :mod:`agepost.config` (``agepost run``): the
chain file in emcee's HDF5 layout with the recommended burn-in and thinning, the fixed
parameters, the radiation model of the fit and an output folder beside it.
"""

from __future__ import annotations

import datetime
import json
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import emcee
import numpy as np
from numpy.typing import NDArray

from agepost import __version__
from agepost.fit.data import DistanceData
from agepost.fit.priors import FitModel
from agepost.fit.sampler import BACKEND_GROUP, ChainResult, SamplerSettings

#: Mean acceptance fractions outside this range are reported (common practice: 0.2 to 0.5 is
#: healthy).
ACCEPTANCE_RANGE = (0.1, 0.9)
#: Parameters the age pipeline ignores (nuisance parameters of the fit).
NUISANCE = ("r_d",)


class FitWarning(UserWarning):
    """A fit finished but its chain is weak (not converged, odd acceptance); see the summary."""


def fit_warnings(result: ChainResult, settings: SamplerSettings) -> list[str]:
    """Sentences about anything that weakens the chain (empty when all is well)."""
    messages = []
    if not result.converged:
        shortest = (
            result.iterations / float(np.max(result.tau))
            if np.all(np.isfinite(result.tau))
            else float("nan")
        )
        messages.append(
            f"chain NOT converged: {result.stop_reason}; it is {shortest:.0f} tau long "
            f"(rule: > {settings.tau_multiple:g} tau, tau stable to {settings.tau_tolerance:.0%}); "
            "resume it with --resume and a larger max_steps before trusting the intervals"
        )
    mean_acceptance = float(np.mean(result.acceptance))
    if not ACCEPTANCE_RANGE[0] <= mean_acceptance <= ACCEPTANCE_RANGE[1]:
        messages.append(
            f"mean acceptance fraction {mean_acceptance:.2f} is outside {ACCEPTANCE_RANGE}; "
            "check the priors and try the other sampler moves"
        )
    return messages


def summary_record(
    chain_path: Path,
    result: ChainResult,
    *,
    model: FitModel,
    settings: SamplerSettings,
    datasets: Sequence[DistanceData],
    config_file: Path,
    warnings_list: Sequence[str],
) -> dict[str, Any]:
    """The fit summary (written as JSON): parameters, acceptance, tau, convergence, seeds, data."""
    samples = emcee.backends.HDFBackend(
        str(chain_path), name=BACKEND_GROUP, read_only=True
    ).get_chain(discard=result.discard, thin=result.thin, flat=True)
    parameters = _parameter_summaries(samples, result, model)
    return {
        "tool": f"agepost {__version__} fit",
        "created": datetime.datetime.now(datetime.UTC).isoformat(timespec="seconds"),
        "config": str(config_file),
        "converged": result.converged,
        "stop_reason": result.stop_reason,
        "warnings": list(warnings_list),
        "steps": result.iterations,
        "resumed_from_step": result.resumed_from,
        "walkers": int(result.acceptance.size),
        "discard_steps": result.discard,
        "thin": result.thin,
        "samples_kept": int(samples.shape[0]),
        "autocorrelation_time": dict(zip(result.names, result.tau.tolist(), strict=True)),
        "chain_length_over_tau": float(result.iterations / np.max(result.tau)),
        "stop_rule": {
            "tau_multiple": settings.tau_multiple,
            "tau_tolerance": settings.tau_tolerance,
            "check_every": settings.check_every,
            "max_steps": settings.max_steps,
        },
        "acceptance_fraction": {
            "mean": float(np.mean(result.acceptance)),
            "min": float(np.min(result.acceptance)),
            "max": float(np.max(result.acceptance)),
        },
        "parameters": parameters,
        "fixed": model.fixed_values(),
        "model": {"radiation": model.radiation, "n_massive": model.n_massive, "t_cmb": model.t_cmb},
        "sampler": {"moves": settings.moves, "ball": settings.ball},
        "seeds": {
            "seed": result.seed,
            "use": "SeedSequence(seed).spawn(2): initial ball, then emcee's generator; "
            "a resumed run continues from the generator state stored in the chain file",
        },
        "start_log_posterior": result.start_log_posterior,
        "data": [
            {"kind": d.kind, "file": d.source, "points": d.size, "sha256": d.checksums}
            for d in datasets
        ],
        "likelihood_evaluations": result.evaluations,
        "wall_time_s": result.wall_time_s,
        "evaluations_per_s": result.evaluations / result.wall_time_s
        if result.wall_time_s > 0
        else None,
    }


def _parameter_summaries(
    samples: NDArray[np.float64], result: ChainResult, model: FitModel
) -> dict[str, Any]:
    """Median, equal-tailed 68 and 95 percent intervals, mean, sd, start and prior per parameter."""
    parameters = {}
    for column, parameter in enumerate(model.free):
        values = samples[:, column]
        q = np.quantile(values, [0.025, 0.16, 0.5, 0.84, 0.975])
        parameters[parameter.name] = {
            "median": q[2],
            "interval_68": [q[1], q[3]],
            "interval_95": [q[0], q[4]],
            "mean": float(np.mean(values)),
            "sd": float(np.std(values, ddof=1)) if values.size > 1 else None,
            "start": float(result.start[column]),
            "prior": parameter.prior.describe(),
        }
    return parameters


def run_config_text(
    chain_name: str,
    result: ChainResult,
    *,
    model: FitModel,
    redshifts: Sequence[float],
    config_file: Path,
    warnings_list: Sequence[str],
) -> str:
    """TOML text of a configuration for ``agepost run`` on the fitted chain."""
    lines = [
        f"# Age run on the chain fitted by agepost {__version__} from {config_file.name}.",
        "# Run it with:  agepost run <this file>   (paths are relative to this file)",
    ]
    lines += [f"# WARNING: {message}" for message in warnings_list]
    fixed = model.fixed_values()
    lines += [
        "",
        "[chain]",
        f"files = [{_toml(chain_name)}]",
        'layout = "emcee"',
        f"dataset = {_toml(BACKEND_GROUP)}",
        f"names = [{', '.join(_toml(name) for name in result.names)}]",
        f"burn_in = {result.discard}   # steps, about 2 autocorrelation times",
        f"thin = 1   # every step kept (emcee's guidance would thin by {result.thin}; optional)",
        "fixed = { "
        + ", ".join(
            f"{name} = {_toml(value)}" for name, value in fixed.items() if name not in NUISANCE
        )
        + " }",
        "",
        "[model]",
        f"radiation = {_toml(model.radiation)}",
        f"n_massive = {model.n_massive}",
        f"t_cmb = {_toml(model.t_cmb)}",
        "",
        "[quantities]",
        f"redshifts = [{', '.join(_toml(float(z)) for z in redshifts)}]",
        "",
        "[output]",
        'folder = "age"',
        "",
    ]
    return "\n".join(lines)


def _toml(value: str | float) -> str:
    """A TOML string or float literal (JSON's string escapes are valid TOML)."""
    if isinstance(value, str):
        return json.dumps(value)
    return repr(float(value))
