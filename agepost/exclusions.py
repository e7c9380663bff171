"""Reason codes for samples whose derived quantities are undefined.

A sample is never dropped silently: it keeps its row, its derived values are NaN and its
reason code says why. Code 0 means the sample is usable.
"""

from __future__ import annotations

import enum


class Exclusion(enum.IntEnum):
    """Why a sample has no derived value (stored as a small integer per sample)."""

    KEPT = 0
    NO_BIG_BANG = 1
    INVALID_PARAMETERS = 2
    MATTER_BELOW_NEUTRINOS = 3
    NOT_CONVERGED = 4
    NON_FINITE_INPUT = 5

    @property
    def description(self) -> str:
        """One sentence for reports."""
        return _DESCRIPTIONS[self]


_DESCRIPTIONS = {
    Exclusion.KEPT: "usable",
    Exclusion.NO_BIG_BANG: "H^2(a) reaches zero for some a in (0, 1]: no big bang, age undefined",
    Exclusion.INVALID_PARAMETERS: "parameter outside the model's domain (H0 <= 0, N_eff < 0, "
    "T_cmb < 0, m_nu < 0 or Omega_m < 0)",
    Exclusion.MATTER_BELOW_NEUTRINOS: "Omega_m is smaller than the massive-neutrino density "
    "it must contain",
    Exclusion.NOT_CONVERGED: "quadrature did not reach the requested accuracy",
    Exclusion.NON_FINITE_INPUT: "a parameter is NaN or infinite in the input",
}


def count_reasons(codes) -> dict[str, int]:  # noqa: ANN001 - any integer array
    """Counts of each non-zero reason, keyed by the reason's lower-case name."""
    import numpy as np

    values, counts = np.unique(np.asarray(codes), return_counts=True)
    return {
        Exclusion(int(v)).name.lower(): int(c) for v, c in zip(values, counts, strict=True) if v
    }
