"""Confront the age of the universe with the ages of old objects at their redshifts.

For an object seen at redshift ``z`` with age ``A`` and a sample ``i`` of the run whose
cosmic time at ``z`` is ``t_i``:

- ``p_universe_younger`` is the posterior probability that the universe at ``z`` is younger
  than the object, ``sum_i w_i q_i / sum_i w_i`` with ``q_i = P(A > t_i)``. For a
  ``gaussian`` object ``A`` is normal with mean ``age_gyr`` and sigma ``age_err_gyr``
  truncated to ``A > 0``, so ``q_i = Phi_c((t_i - mu)/sigma) / Phi_c(-mu/sigma)`` with
  ``Phi_c`` the normal survival function (the integral over the object's age
  distribution, done in closed form); for a ``lower_limit`` object ``q_i = 1`` if
  ``t_i < age_gyr`` and 0 otherwise. Its Monte Carlo standard error is
  ``sqrt(var_w(q) / ESS)`` with ESS the effective sample size of ``t_i`` (autocorrelation
  and Kish, the smaller).
- ``formation_z``: the redshift at which the object formed, solving
  ``t_i(z_f) = t_i - A_i`` per sample (:mod:`agepost.compare.formation`). A ``gaussian``
  object pairs each sample with one draw ``A_i`` of its truncated normal age (seeded), so
  the posterior includes the age uncertainty; a ``lower_limit`` object uses ``A_i =
  age_gyr``, which gives the lowest formation redshift the limit allows. Summarised over
  the samples where it exists, with their weights.
- ``frac_no_formation``: weighted fraction of samples with ``t_i - A_i <= 0`` (the object
  would be older than that universe at ``z``). For a ``gaussian`` object it is a Monte
  Carlo estimate of ``p_universe_younger``.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence

import numpy as np
from numpy.typing import NDArray
from scipy import stats

from agepost.compare.formation import cosmic_time_table, formation_redshift
from agepost.compare.objects import AgedObject
from agepost.compare.runs import LoadedRun
from agepost.compare.timegrid import check_ages
from agepost.errors import InputError
from agepost.stats.diagnostics import combined_ess
from agepost.stats.quantiles import weighted_mean_std
from agepost.stats.summary import QuantitySummary, summarise

#: Samples tabulated together (about 100 MB of cosmic and lookback times per chunk).
CHUNK_ROWS = 50_000


@dataclasses.dataclass(frozen=True)
class ObjectVerdict:
    """What the run says about one object (see the module docstring)."""

    obj: AgedObject
    universe_time: QuantitySummary
    p_universe_younger: float
    p_universe_younger_mcse: float
    formation_z: QuantitySummary | None
    frac_no_formation: float
    warnings: tuple[str, ...]


def probability_older(time_gyr: NDArray[np.float64], obj: AgedObject) -> NDArray[np.float64]:
    """``q_i = P(A > t_i)``: probability that the object is older than each sample's universe."""
    t = np.asarray(time_gyr, dtype=np.float64)
    if obj.kind == "lower_limit":
        return (t < obj.age_gyr).astype(np.float64)
    mu, sigma = obj.age_gyr, obj.age_err_gyr
    return stats.norm.sf((t - mu) / sigma) / stats.norm.sf(-mu / sigma)


def object_ages(obj: AgedObject, n: int, rng: np.random.Generator) -> NDArray[np.float64] | float:
    """One age per sample: draws of the truncated normal, or the bound of a lower limit."""
    if obj.kind == "lower_limit":
        return obj.age_gyr
    low = -obj.age_gyr / obj.age_err_gyr
    return stats.truncnorm.rvs(
        low, np.inf, loc=obj.age_gyr, scale=obj.age_err_gyr, size=n, random_state=rng
    )


def check_range(objects: Sequence[AgedObject], z_max: float) -> None:
    """InputError for an object beyond the computed range ``0 <= z <= z_max``."""
    for obj in objects:
        if obj.z > z_max:
            raise InputError(
                f"object {obj.name!r} at z = {obj.z:g} lies beyond the computed range "
                f"0 <= z <= {z_max:g}; "
                f"raise --z-max (or z_max in the [confront] table) to at least {obj.z:g}"
            )


def confront_objects(
    run: LoadedRun,
    objects: Sequence[AgedObject],
    *,
    levels: Sequence[float] = (0.68, 0.95),
    z_max: float,
    rng: np.random.Generator | int | None = None,
) -> list[ObjectVerdict]:
    """Probability, formation redshift and no-formation fraction for every object."""
    check_range(objects, z_max)
    generator = np.random.default_rng(rng)
    n = run.n_samples
    ages = [object_ages(obj, n, generator) for obj in objects]
    t_object = np.empty((n, len(objects)))
    z_formation = np.empty((n, len(objects)))
    background = run.background()
    for start in range(0, n, CHUNK_ROWS):  # bounded memory: the table is (rows, ~130)
        rows = slice(start, min(start + CHUNK_ROWS, n))
        part = background.take(rows)
        table = cosmic_time_table(part, [obj.z for obj in objects])
        check_ages(run, np.arange(n)[rows], table[1][:, -1], table[2])  # last node: z = 0
        for k, obj in enumerate(objects):
            age = ages[k]
            age = age[rows] if isinstance(age, np.ndarray) else age
            z_formation[rows, k], t_object[rows, k] = formation_redshift(
                part, obj.z, age, table=table
            )
    verdicts = [
        _verdict(run, obj, t_object[:, k], z_formation[:, k], levels)
        for k, obj in enumerate(objects)
    ]
    return verdicts


def _verdict(
    run: LoadedRun,
    obj: AgedObject,
    t_object: NDArray[np.float64],
    z_formation: NDArray[np.float64],
    levels: Sequence[float],
) -> ObjectVerdict:
    w = run.weights
    q = probability_older(t_object, obj)
    p, spread = weighted_mean_std(q, w)
    ess = combined_ess(t_object, w, run.chain_id) if np.ptp(t_object) > 0 else float(np.sum(w > 0))
    exists = np.isfinite(z_formation)
    frac_no = float(w[~exists].sum() / w.sum())
    notes = []
    formation = None
    if np.any(exists & (w > 0)):
        formation = summarise(z_formation[exists], w[exists], run.chain_id[exists], levels=levels)
        notes += [f"formation_z: {text}" for text in formation.warnings]
    else:
        notes.append(
            "no sample leaves time to form the object: it is older than every sampled "
            "universe at its redshift"
        )
    return ObjectVerdict(
        obj=obj,
        universe_time=summarise(t_object, w, run.chain_id, levels=levels),
        p_universe_younger=float(p),
        p_universe_younger_mcse=float(spread / np.sqrt(ess)),
        formation_z=formation,
        frac_no_formation=frac_no,
        warnings=tuple(notes),
    )
