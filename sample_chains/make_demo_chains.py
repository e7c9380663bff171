"""Make the demo chains of an invented scenario (run from anywhere; fixed seed).

Scenario: the "Lantern Deep Field" survey (invented) released two posterior runs of its
background-expansion fit: ``lantern_lcdm_*`` (flat LambdaCDM: H0, Omega_m) and
``lantern_curved_w0wa_*`` (curvature and evolving dark energy too). Each run has four
independent Metropolis chains written as whitespace text with a header row and a leading
multiplicity column (repeated states collapsed), the layout many samplers write.
The numbers are invented for demonstrations only; tests never check against them.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
SEED = 20261202
N_STEPS = 6000
N_CHAINS = 4

RUNS = {
    "lantern_lcdm": {
        "names": ["H0", "Omega_m"],
        "mean": [68.2, 0.305],
        "sd": [0.6, 0.008],
        "correlation": {(0, 1): -0.8},
    },
    "lantern_curved_w0wa": {
        "names": ["H0", "Omega_m", "Omega_k", "w0", "wa"],
        "mean": [67.4, 0.312, -0.004, -0.92, -0.35],
        "sd": [1.2, 0.012, 0.003, 0.08, 0.3],
        "correlation": {(0, 1): -0.7, (3, 4): -0.8, (0, 3): -0.2},
    },
}


def covariance(spec: dict) -> np.ndarray:
    """Covariance matrix from standard deviations and pairwise correlations."""
    sd = np.asarray(spec["sd"])
    corr = np.eye(sd.size)
    for (i, j), rho in spec["correlation"].items():
        corr[i, j] = corr[j, i] = rho
    return corr * np.outer(sd, sd)


def metropolis(
    mean: np.ndarray, cov: np.ndarray, n_steps: int, rng: np.random.Generator
) -> np.ndarray:
    """A random-walk Metropolis chain on a Gaussian target, started off the peak."""
    precision = np.linalg.inv(cov)
    step = np.linalg.cholesky(cov) * (2.38 / np.sqrt(mean.size))
    x = mean + 3 * np.sqrt(np.diag(cov)) * rng.standard_normal(mean.size)
    log_p = -0.5 * (x - mean) @ precision @ (x - mean)
    chain = np.empty((n_steps, mean.size + 1))
    for i in range(n_steps):
        proposal = x + step @ rng.standard_normal(mean.size)
        log_q = -0.5 * (proposal - mean) @ precision @ (proposal - mean)
        if np.log(rng.uniform()) < log_q - log_p:
            x, log_p = proposal, log_q
        chain[i, :-1], chain[i, -1] = x, -log_p
    return chain


def collapse(chain: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Merge consecutive repeated states into rows with a multiplicity."""
    change = np.any(np.diff(chain, axis=0) != 0, axis=1)
    starts = np.concatenate([[0], np.flatnonzero(change) + 1])
    counts = np.diff(np.concatenate([starts, [len(chain)]]))
    return chain[starts], counts


def main() -> None:
    rng = np.random.default_rng(SEED)
    for run, spec in RUNS.items():
        mean, cov = np.asarray(spec["mean"]), covariance(spec)
        for k in range(1, N_CHAINS + 1):
            rows, counts = collapse(metropolis(mean, cov, N_STEPS, rng))
            header = " ".join(["weight", *spec["names"], "minus_log_post"])
            table = np.column_stack([counts, rows])
            fmt = ["%d"] + ["%.6f"] * (table.shape[1] - 1)
            np.savetxt(HERE / f"{run}_{k}.txt", table, fmt=fmt, header=header, comments="")


if __name__ == "__main__":
    main()
