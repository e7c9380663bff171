"""Reweight a run by an independent constraint on the age of the universe today.

The constraint's likelihood ``L(t0)`` multiplies each sample's weight,
``w_i' = w_i L(t0_i)``, which turns the run's posterior into the posterior given the run's
data and the constraint, provided the two are independent (an age from stellar
populations, say, against an expansion-history fit). Likelihoods, normalised to 1 at
their peak:

- ``gaussian``: ``L = exp(-(t0 - mu)^2 / (2 sigma^2))`` with ``mu = age_gyr``,
  ``sigma = age_err_gyr``;
- ``lower_limit`` with ``age_err_gyr = 0``: ``L = 1`` if ``t0 >= age_gyr``, else 0 (a hard
  bound);
- ``lower_limit`` with ``age_err_gyr = sigma > 0``: ``L = Phi((t0 - age_gyr) / sigma)``, the
  probability that an object whose age is normal with that mean and sigma is younger than
  the universe (a soft bound).

Reweighting cannot create samples where the run has none: the Kish effective sample
size after reweighting, ``(sum w')^2 / sum w'^2``, says how many remain, and a value below
the configured floor is a warning. If no weight survives (every ``L`` is 0 in double
precision, for a Gaussian about 38 sigma from every sample) the result is an error.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Sequence

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy import stats

from agepost.compare.runs import LoadedRun
from agepost.errors import ComputationError, ConfigError, InputError
from agepost.stats.quantiles import kish_ess
from agepost.stats.summary import LOW_ESS, QuantitySummary, summarise

CONSTRAINT_KINDS = ("lower_limit", "gaussian")
#: Default floor of the Kish ESS after reweighting (common practice, as for summaries).
DEFAULT_ESS_FLOOR = LOW_ESS


@dataclasses.dataclass(frozen=True)
class AgeConstraint:
    """An independent constraint on the age today (Gyr); see the module docstring."""

    kind: str
    age_gyr: float
    age_err_gyr: float = 0.0

    def __post_init__(self) -> None:
        if self.kind not in CONSTRAINT_KINDS:
            raise ConfigError(
                f"constraint kind {self.kind!r} is unknown; use lower_limit or gaussian"
            )
        if not math.isfinite(self.age_gyr) or self.age_gyr <= 0:
            raise ConfigError(f"constraint age {self.age_gyr} Gyr must be finite and > 0")
        if not math.isfinite(self.age_err_gyr) or self.age_err_gyr < 0:
            raise ConfigError(
                f"constraint age error {self.age_err_gyr} Gyr must be finite and >= 0"
            )
        if self.kind == "gaussian" and self.age_err_gyr == 0:
            raise ConfigError("a gaussian age constraint needs its one-sigma error (--age-err) > 0")

    def describe(self) -> str:
        """Short text for legends and messages."""
        if self.kind == "gaussian":
            return f"t0 = {self.age_gyr:g} +- {self.age_err_gyr:g} Gyr"
        if self.age_err_gyr:
            return f"t0 > {self.age_gyr:g} Gyr (soft, sigma {self.age_err_gyr:g})"
        return f"t0 > {self.age_gyr:g} Gyr"

    def likelihood(self, age_gyr: ArrayLike) -> NDArray[np.float64]:
        """``L(t0)`` per sample, peak-normalised (see the module docstring)."""
        t = np.asarray(age_gyr, dtype=np.float64)
        if self.kind == "gaussian":
            return np.exp(-0.5 * ((t - self.age_gyr) / self.age_err_gyr) ** 2)
        if self.age_err_gyr == 0:
            return (t >= self.age_gyr).astype(np.float64)
        return stats.norm.cdf((t - self.age_gyr) / self.age_err_gyr)


@dataclasses.dataclass(frozen=True)
class Reweighted:
    """A run before and after reweighting.

    Attributes
    ----------
    constraint : AgeConstraint
    weights : (n,) new weights ``w_i L(t0_i)``.
    ess_kish_before, ess_kish_after : Kish ESS of the old and new weights.
    before, after : name -> QuantitySummary of the derived quantities and varying parameters.
    warnings : tuple of str
    """

    constraint: AgeConstraint
    weights: NDArray[np.float64]
    ess_kish_before: float
    ess_kish_after: float
    before: dict[str, QuantitySummary]
    after: dict[str, QuantitySummary]
    warnings: tuple[str, ...]


def reweight_weights(
    age_gyr: ArrayLike, weights: ArrayLike, constraint: AgeConstraint, *, where: str = "run"
) -> NDArray[np.float64]:
    """New weights ``w_i L(t0_i)``; ComputationError when none stays positive."""
    t = np.asarray(age_gyr, dtype=np.float64)
    new = np.asarray(weights, dtype=np.float64) * constraint.likelihood(t)
    if not np.any(new > 0):
        raise ComputationError(
            f"the constraint {constraint.describe()} leaves zero effective samples of {where}: "
            f"every sample has likelihood 0 (sampled ages {t.min():.4g} to {t.max():.4g} Gyr); "
            "the run and the constraint do not overlap, so reweighting cannot represent "
            "their combination"
        )
    return new


def reweight_run(
    run: LoadedRun,
    constraint: AgeConstraint,
    *,
    levels: Sequence[float] = (0.68, 0.95),
    ess_floor: float = DEFAULT_ESS_FLOOR,
) -> Reweighted:
    """Reweight ``run`` by ``constraint`` and summarise before and after."""
    if "age" not in run.quantities.columns:
        raise InputError(f"{run.source} has no derived age; derive it first (agepost derive)")
    if not math.isfinite(ess_floor) or ess_floor < 0:
        raise ConfigError(f"the ESS floor {ess_floor} must be finite and >= 0")
    new = reweight_weights(
        run.quantities["age"].to_numpy(float), run.weights, constraint, where=run.source
    )
    ess_before, ess_after = kish_ess(run.weights), kish_ess(new)
    notes = []
    if ess_after < ess_floor:
        notes.append(
            f"Kish effective sample size after reweighting is {ess_after:.1f} (of {ess_before:.1f} "
            f"before), below the floor {ess_floor:g}: the reweighted numbers rest on few samples; "
            "sample the combined posterior directly for a trustworthy result"
        )
    names = [("quantities", q) for q in run.quantities.columns] + [
        ("parameters", p)
        for p in run.parameters.columns
        if np.ptp(run.parameters[p].to_numpy(float)) > 0
    ]
    before, after = {}, {}
    for section, name in names:
        values = (run.quantities if section == "quantities" else run.parameters)[name].to_numpy(
            float
        )
        before[name] = summarise(values, run.weights, run.chain_id, levels=levels)
        after[name] = summarise(values, new, run.chain_id, levels=levels)
        notes += [f"{name} after reweighting: {text}" for text in after[name].warnings]
    return Reweighted(constraint, new, ess_before, ess_after, before, after, tuple(notes))
