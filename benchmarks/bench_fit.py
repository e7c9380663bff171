"""Speed of ``agepost fit``: 1,000 distance moduli with full covariance, 4 free parameters.

The data are made here from a known cosmology (flat, Omega_m = 0.3, w0 = -1, H0 = 70) with
noise drawn from a covariance of statistical errors plus a correlated calibration term.
Free: H0 (Gaussian prior 70 +- 2: distance moduli with a marginalised offset do not
constrain it), Omega_m and w0 (uniform priors) and Omega_k (Gaussian prior 0 +- 0.1, standing
in for an external curvature constraint; ``--curvature-sd 0`` makes it uniform on +-0.5,
a banana-shaped posterior whose autocorrelation time is several times longer). The fit runs to the
autocorrelation stop rule (longer than 50 tau, tau stable to 1 percent).

Prints likelihood evaluations per second, wall time, steps and tau, and the speed ratio
against a baseline measured in the same process: a per-walker loop that integrates the
comoving distance at every data redshift and solves the covariance for each walker.
Target: converged in under 60 s on one core.

    python benchmarks/bench_fit.py [--n 1000] [--walkers 16] [--moves differential|stretch]
"""

from __future__ import annotations

import os

for _variable in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_variable] = "1"  # one core: per-core figures

import argparse  # noqa: E402
import tempfile  # noqa: E402
import time  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

from agepost.fit.data import DistanceData  # noqa: E402
from agepost.fit.likelihood import Posterior  # noqa: E402
from agepost.fit.priors import FitModel, FreeParameter, Prior  # noqa: E402
from agepost.fit.sampler import SamplerSettings, run_chain  # noqa: E402
from agepost.physics.background import make_background  # noqa: E402
from agepost.physics.distances import distance_modulus  # noqa: E402
from agepost.physics.times import expansion_history  # noqa: E402

TARGET_S = 60.0


def make_data(n: int, rng: np.random.Generator) -> DistanceData:
    """Distance moduli (offset -19.3 mag) with a full covariance, from the truth above."""
    z = rng.uniform(0.01, 2.3, n)
    background = make_background(h0=70.0, omega_m=0.3)
    chi = expansion_history(background, z, distances=True).comoving_distance_mpc
    errors = 0.10 + 0.05 * rng.random(n)
    covariance = np.diag(errors**2) + 0.02**2 * np.exp(-np.abs(z[:, None] - z[None, :]) / 0.5)
    noise = np.linalg.cholesky(covariance) @ rng.standard_normal(n)
    mu = distance_modulus(background, z, chi)[0] - 19.3 + noise
    return DistanceData("distance_modulus", "benchmark", z, mu, covariance, None, {})


def make_model(*, curvature_sd: float | None) -> FitModel:
    """H0, Omega_m, Omega_k, w0 free; Omega_k Gaussian (sd ``curvature_sd``) or uniform on +-0.5."""
    curvature = (
        Prior("uniform", -0.5, 0.5)
        if curvature_sd is None
        else Prior("gaussian", mean=0.0, sd=curvature_sd)
    )
    return FitModel(
        (
            FreeParameter("H0", Prior("gaussian", mean=70.0, sd=2.0), 70.0),
            FreeParameter("Omega_m", Prior("uniform", 0.01, 0.99), 0.3),
            FreeParameter("Omega_k", curvature, 0.0),
            FreeParameter("w0", Prior("uniform", -2.5, -0.3), -1.0),
        ),
        {},
    )


def baseline_rate(data: DistanceData, model: FitModel, points: np.ndarray) -> float:
    """Evaluations per second of a plain per-walker loop (direct distances, a solve per walker)."""
    ones = np.ones(data.size)
    start = time.perf_counter()
    for theta in points:
        values = model.values(theta[None, :])
        background = make_background(
            h0=values["H0"], omega_m=values["Omega_m"], omega_k=values["Omega_k"], w0=values["w0"]
        )
        chi = expansion_history(background, data.redshifts, distances=True).comoving_distance_mpc
        residual = data.values - distance_modulus(background, data.redshifts, chi)[0]
        solved = np.linalg.solve(data.covariance, np.column_stack([residual, ones]))
        a, b, e = residual @ solved[:, 0], ones @ solved[:, 0], ones @ solved[:, 1]
        _ = (
            -0.5 * (a - b * b / e)
            + 0.5 * np.log(2 * np.pi / e)
            + model.log_prior(theta[None, :])[0]
        )
    return points.shape[0] / (time.perf_counter() - start)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--n", type=int, default=1000, help="data points (default 1000)")
    parser.add_argument(
        "--walkers", type=int, default=16, help="walkers (default 16, 4 per parameter)"
    )
    parser.add_argument("--moves", choices=("differential", "stretch"), default="differential")
    parser.add_argument("--seed", type=int, default=1)
    parser.add_argument(
        "--curvature-sd",
        type=float,
        default=0.1,
        help="sd of the Gaussian prior on Omega_k (default 0.1); 0 means uniform on [-0.5, 0.5]",
    )
    args = parser.parse_args()

    rng = np.random.default_rng(args.seed)
    data = make_data(args.n, rng)
    model = make_model(curvature_sd=args.curvature_sd or None)
    posterior = Posterior([data], model)
    probe = model.start() + rng.normal(0.0, 1e-3, (16, 4))
    baseline = baseline_rate(data, model, probe)
    settings = SamplerSettings(
        walkers=args.walkers, max_steps=50_000, seed=args.seed, moves=args.moves
    )
    with tempfile.TemporaryDirectory() as folder:
        result = run_chain(posterior, Path(folder) / "chain.h5", settings=settings)
    rate = result.evaluations / result.wall_time_s
    print(f"data: {args.n} distance moduli, full covariance; free: {', '.join(result.names)}")
    curvature = f"Omega_k ~ N(0, {args.curvature_sd})" if args.curvature_sd else "Omega_k uniform"
    print(f"walkers {args.walkers}, moves {args.moves}, seed {args.seed}, {curvature}")
    print(f"steps {result.iterations}, converged {result.converged} ({result.stop_reason})")
    print("tau " + ", ".join(f"{n} {t:.1f}" for n, t in zip(result.names, result.tau, strict=True)))
    print(f"chain length / max tau {result.iterations / result.tau.max():.0f}")
    print(f"acceptance fraction {result.acceptance.mean():.2f}")
    print(f"likelihood evaluations {result.evaluations} in {result.wall_time_s:.1f} s wall time")
    print("  (maximum-posterior search included)")
    print(f"evaluations per second {rate:.0f}; baseline per-walker loop {baseline:.0f}")
    print(f"ratio against the baseline {rate / baseline:.1f}")
    verdict = "met" if result.converged and result.wall_time_s < TARGET_S else "MISSED"
    print(f"target: converged in under {TARGET_S:.0f} s on one core: {verdict}")


if __name__ == "__main__":
    main()
