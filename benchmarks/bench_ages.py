"""Throughput and accuracy of the age engine, against a per-sample scipy quad loop.

Prints, for each model: samples per second on one core, peak memory of the call, the
maximum relative error measured against scipy quad at tight tolerance on a subset, and
the speed ratio against a per-sample scipy.integrate.quad loop (default tolerance) run on
a subset in the same process.

    python benchmarks/bench_ages.py [--n 1000000] [--subset 2000]
"""

from __future__ import annotations

import os

for _variable in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_variable] = "1"  # one core: per-core figures

import argparse  # noqa: E402
import math  # noqa: E402
import resource  # noqa: E402
import time  # noqa: E402
import tracemalloc  # noqa: E402
import warnings  # noqa: E402

import numpy as np  # noqa: E402
from scipy import integrate  # noqa: E402

from agepost.physics import neutrinos  # noqa: E402
from agepost.physics.background import make_background  # noqa: E402
from agepost.physics.times import expansion_history  # noqa: E402


def models(n: int, rng: np.random.Generator) -> dict[str, dict]:
    """Parameter samples: posterior-like general model, the wide test box, flat LCDM."""
    return {
        "general model, posterior-like (Omega_k, w0-wa, m_nu free, full radiation)": dict(
            h0=rng.normal(67.5, 1.5, n),
            omega_m=rng.normal(0.31, 0.015, n),
            omega_k=rng.normal(0, 0.01, n),
            w0=rng.normal(-0.95, 0.1, n),
            wa=rng.normal(-0.2, 0.4, n),
            m_nu=rng.uniform(0, 0.3, n),
        ),
        "general model, posterior-like, m_nu fixed at 0.06 eV": dict(
            h0=rng.normal(67.5, 1.5, n),
            omega_m=rng.normal(0.31, 0.015, n),
            omega_k=rng.normal(0, 0.01, n),
            w0=rng.normal(-0.95, 0.1, n),
            wa=rng.normal(-0.2, 0.4, n),
            m_nu=0.06,
        ),
        "general model, wide test box (H0 50-90, Om 0.05-0.6, Ok +-0.2, w0 -2-0, wa +-2, m_nu 0-1)": dict(
            h0=rng.uniform(50, 90, n),
            omega_m=rng.uniform(0.05, 0.6, n),
            omega_k=rng.uniform(-0.2, 0.2, n),
            w0=rng.uniform(-2, 0, n),
            wa=rng.uniform(-2, 2, n),
            m_nu=rng.uniform(0, 1, n),
        ),
        "flat LambdaCDM (full radiation, m_nu 0.06 eV)": dict(
            h0=rng.normal(67.5, 1.5, n), omega_m=rng.normal(0.31, 0.015, n)
        ),
    }


def scalar_integrand(background, i: int):
    """a / sqrt(a^4 E^2) for sample i with plain-float arithmetic (fair for a quad loop)."""
    b = background
    o_r, o_cb, o_k, o_de = (
        float(x[i]) for x in (b.omega_radiation, b.omega_cb, b.omega_k, b.omega_de)
    )
    w0, wa, ln_y0 = float(b.w0[i]), float(b.wa[i]), float(b.ln_y_today[i])
    o_nu = b.n_massive * float(b.omega_nu_species[i])
    table, steps = neutrinos._fine_table()
    ln_min, step = neutrinos._LN_Y_MIN, neutrinos._FINE_STEP

    def integrand(a: float) -> float:
        if a <= 0.0:
            return 0.0
        ln_a = math.log(a)
        d = (
            o_r
            + a * (o_cb + a * o_k)
            + o_de * math.exp((1 - 3 * (w0 + wa)) * ln_a - 3 * wa * (1 - a))
        )
        if o_nu:
            x = min(max((ln_y0 + ln_a - ln_min) / step, 0.0), table.size - 1.0)
            j = int(x)
            d += o_nu * (table[j] + (x - j) * steps[j])
        return a / math.sqrt(d)

    return integrand


def quad_age(background, i: int, **tolerance) -> float:
    """Age of sample i in units of 1/H0 by scipy quad (the per-sample baseline)."""
    integrand = scalar_integrand(background, i)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", integrate.IntegrationWarning)
        return integrate.quad(integrand, 0.0, 1.0, **tolerance)[0]


def measure(name: str, parameters: dict, subset: int) -> None:
    background = make_background(**parameters)
    n = background.size
    expansion_history(background.take(slice(0, 1000)))  # warm the neutrino table
    seconds = np.inf
    for _ in range(3):  # best of three: the machine may be shared
        start = time.perf_counter()
        history = expansion_history(background)
        seconds = min(seconds, time.perf_counter() - start)
    tracemalloc.start()
    expansion_history(background.take(slice(0, min(n, 200_000))))
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    kept = np.flatnonzero(history.exclusion == 0)
    rate = n / seconds

    chosen = kept[:: max(1, kept.size // subset)][:subset]
    start = time.perf_counter()
    for i in chosen:
        quad_age(background, i)
    quad_rate = chosen.size / (time.perf_counter() - start)

    check = chosen[:300]
    errors = [
        abs(
            history.age_gyr[i]
            / history.hubble_time_gyr[i]
            / quad_age(
                background, i, epsabs=0.0, epsrel=1e-12, limit=2000, points=[1e-4, 1e-2, 0.1]
            )
            - 1
        )
        for i in check
    ]
    print(f"\n{name}")
    print(f"  samples                 {n:,} ({n - kept.size} excluded: no big bang or invalid)")
    print(f"  engine                  {rate:,.0f} ages per second ({seconds:.2f} s, best of 3)")
    print(f"  peak memory             {peak / 2**20:,.0f} MiB for 200,000 samples (tracemalloc)")
    print(
        f"  max relative error      {max(errors):.2e} over {len(check)} samples vs quad at epsrel 1e-12"
    )
    print(
        f"  quad loop baseline      {quad_rate:,.0f} ages per second ({chosen.size} samples, default tolerance)"
    )
    print(f"  speed ratio             {rate / quad_rate:,.0f}x")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--n", type=int, default=1_000_000, help="samples per model")
    parser.add_argument(
        "--subset", type=int, default=2000, help="samples in the quad baseline loop"
    )
    parser.add_argument("--seed", type=int, default=1)
    args = parser.parse_args()
    rng = np.random.default_rng(args.seed)
    print(f"agepost age engine benchmark: {args.n:,} samples per model, one core")
    for name, parameters in models(args.n, rng).items():
        measure(name, parameters, args.subset)
    print(
        f"\nprocess peak resident memory {resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 2**10:,.0f} MiB"
    )


if __name__ == "__main__":
    main()
