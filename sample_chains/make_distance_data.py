"""Make the invented distance data of the "Lantern Deep Field" survey used by configs/fit_demo.toml.

The scenario is invented for demonstrations: 200 distance moduli of standardised
explosions in the Lantern Deep Field (with a correlated calibration covariance), 16
expansion-rate points from the field's passive galaxies, and 8 sound-horizon distance ratios
from its galaxy clustering. The truth is a flat w-model with H0 = 68.5 km/s/Mpc,
Omega_m = 0.31, w0 = -0.93, r_d = 147.5 Mpc, the radiation model ``full``. Noise is drawn
with a fixed seed, so the files are reproducible:

    python sample_chains/make_distance_data.py

Invented data are for demonstrations only; the tests check against independent references.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from agepost.physics.background import make_background
from agepost.physics.distances import (
    distance_modulus,
    hubble_rate,
    transverse_comoving_distance,
    volume_averaged_distance,
)
from agepost.physics.times import expansion_history

SEED = 20_260_611
TRUTH = {"h0": 68.5, "omega_m": 0.31, "w0": -0.93}
R_D_MPC = 147.5
ABSOLUTE_MAGNITUDE = -19.25  # the offset the fit marginalises
HERE = Path(__file__).resolve().parent


def main() -> None:
    rng = np.random.default_rng(SEED)
    background = make_background(**TRUTH)
    write_distance_moduli(background, rng)
    write_expansion_rates(background, rng)
    write_ratios(background, rng)


def write_distance_moduli(background, rng: np.random.Generator) -> None:  # noqa: ANN001
    """200 apparent distance moduli (mu + M) with a calibration covariance in a separate file."""
    z = np.round(rng.uniform(0.015, 1.6, 200), 4)
    chi = expansion_history(background, z, distances=True).comoving_distance_mpc
    mu = distance_modulus(background, z, chi)[0]
    errors = np.round(0.11 + 0.06 * rng.random(z.size), 3)
    # calibration: a shared zero-point per observing season, plus a smooth redshift drift
    season = rng.integers(0, 4, z.size)
    calibration = 0.015**2 * (season[:, None] == season[None, :]) + 0.02**2 * np.outer(z, z) / 2.56
    noise = np.linalg.cholesky(calibration + np.diag(errors**2)) @ rng.standard_normal(z.size)
    observed = mu + ABSOLUTE_MAGNITUDE + noise
    header = "z,mu,mu_err,season"
    rows = [
        f"{a:.4f},{b:.4f},{c:.3f},{s}"
        for a, b, c, s in zip(z, observed, errors, season, strict=True)
    ]
    _write(
        HERE / "lantern_distances.csv",
        [
            "# Lantern Deep Field (invented survey): distance moduli of standardised explosions.",
            "# mu includes an unknown absolute-magnitude offset; mu_err is the statistical error.",
            "# Calibration covariance (without the statistical errors): lantern_distances_cov.txt",
            header,
            *rows,
        ],
    )
    lines = [f"{z.size}"] + [" ".join(f"{v:.6e}" for v in row) for row in calibration]
    _write(HERE / "lantern_distances_cov.txt", lines)


def write_expansion_rates(background, rng: np.random.Generator) -> None:  # noqa: ANN001
    """16 H(z) points with 4 to 9 percent errors, white-space separated."""
    z = np.round(np.sort(rng.uniform(0.07, 1.9, 16)), 3)
    h = hubble_rate(background, z)[0]
    errors = np.round(h * rng.uniform(0.04, 0.09, z.size), 2)
    observed = h + errors * rng.standard_normal(z.size)
    _write(
        HERE / "lantern_expansion.txt",
        [
            "# Lantern Deep Field (invented survey): expansion rate from passive-galaxy ages",
            "# H and H_err in km/s/Mpc",
            "z H H_err",
            *[f"{a:.3f} {b:.2f} {c:.2f}" for a, b, c in zip(z, observed, errors, strict=True)],
        ],
    )


def write_ratios(background, rng: np.random.Generator) -> None:  # noqa: ANN001
    """8 distance ratios D/r_d (DM, DH, DV) with 1.5 to 3 percent errors."""
    z = np.array([0.30, 0.51, 0.51, 0.71, 0.71, 0.93, 1.32, 1.32])
    quantities = ["DV", "DM", "DH", "DM", "DH", "DV", "DM", "DH"]
    chi = expansion_history(background, z, distances=True).comoving_distance_mpc
    values = np.empty(z.size)
    for i, (redshift, quantity) in enumerate(zip(z, quantities, strict=True)):
        column = chi[:, i : i + 1]
        if quantity == "DM":
            values[i] = transverse_comoving_distance(background, column)[0, 0]
        elif quantity == "DV":
            values[i] = volume_averaged_distance(background, [redshift], column)[0, 0]
        else:
            values[i] = 299_792.458 / hubble_rate(background, [redshift])[0, 0]
    truth = values / R_D_MPC
    errors = np.round(truth * rng.uniform(0.015, 0.03, z.size), 3)
    observed = truth + errors * rng.standard_normal(z.size)
    _write(
        HERE / "lantern_ratios.csv",
        [
            "# Lantern Deep Field (invented survey): clustering distances over the sound",
            "# horizon r_d; quantity DM, DV or DH says which distance",
            "z,quantity,ratio,ratio_err",
            *[
                f"{a:.2f},{q},{b:.3f},{c:.3f}"
                for a, q, b, c in zip(z, quantities, observed, errors, strict=True)
            ],
        ],
    )


def _write(path: Path, lines: list[str]) -> None:
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")


if __name__ == "__main__":
    main()
