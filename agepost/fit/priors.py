"""The fitted model: which parameters are free, their priors and start values, and the fixed rest.

Free parameters are chosen among ``H0`` (km/s/Mpc), ``Omega_m``, ``Omega_k``, ``w0``,
``wa`` and, when sound-horizon ratios are fitted, ``r_d`` (Mpc). ``m_nu`` (eV) and
``N_eff`` can only be fixed. Every parameter not named takes the core's default (flat,
cosmological constant, m_nu = 0.06 eV, N_eff = 3.044); ``H0`` and ``Omega_m`` have no
default and must be given.

Priors are uniform on [min, max] or Gaussian (mean, sd), optionally truncated to
[min, max]. Log-densities are normalised on their support, so that posteriors of
different prior choices can be compared.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
from numpy.typing import NDArray

from agepost.errors import ConfigError
from agepost.physics.background import DEFAULTS, RADIATION_MODELS

#: Parameters that may be free, in the order they are stored in the chain.
FREE_PARAMETERS: tuple[str, ...] = ("H0", "Omega_m", "Omega_k", "w0", "wa", "r_d")
#: Parameters that may only be fixed.
FIXED_ONLY: tuple[str, ...] = ("m_nu", "N_eff")
#: Keyword of :func:`agepost.physics.background.make_background` for each cosmological name.
BACKGROUND_KEYWORDS: dict[str, str] = {
    "H0": "h0",
    "Omega_m": "omega_m",
    "Omega_k": "omega_k",
    "w0": "w0",
    "wa": "wa",
    "m_nu": "m_nu",
    "N_eff": "n_eff",
}
#: Value used for a cosmological parameter that the config does not name.
DEFAULT_VALUES: dict[str, float] = {
    "Omega_k": DEFAULTS["omega_k"],
    "w0": DEFAULTS["w0"],
    "wa": DEFAULTS["wa"],
    "m_nu": DEFAULTS["m_nu"],
    "N_eff": DEFAULTS["n_eff"],
}
PRIOR_KINDS: tuple[str, ...] = ("uniform", "gaussian")


@dataclasses.dataclass(frozen=True)
class Prior:
    """A uniform or (truncated) Gaussian prior on one parameter.

    ``minimum``/``maximum`` bound the support (infinite when a Gaussian is untruncated).
    """

    kind: str
    minimum: float = -math.inf
    maximum: float = math.inf
    mean: float = math.nan
    sd: float = math.nan

    def __post_init__(self) -> None:
        if self.kind not in PRIOR_KINDS:
            raise ConfigError(
                f"prior {self.kind!r} is unknown; use one of {', '.join(PRIOR_KINDS)}"
            )
        if not self.minimum < self.maximum:
            raise ConfigError(
                f"prior range [{self.minimum}, {self.maximum}] is empty; min must be below max"
            )
        if self.kind == "uniform" and not (
            math.isfinite(self.minimum) and math.isfinite(self.maximum)
        ):
            raise ConfigError("a uniform prior needs finite min and max")
        if self.kind == "gaussian" and not (
            math.isfinite(self.mean) and self.sd > 0 and math.isfinite(self.sd)
        ):
            raise ConfigError(
                "a gaussian prior needs a finite mean and sd > 0 "
                f"(got mean {self.mean}, sd {self.sd})"
            )

    def contains(self, x: NDArray[np.float64]) -> NDArray[np.bool_]:
        """True where ``x`` lies in the support [min, max]."""
        return (x >= self.minimum) & (x <= self.maximum)

    def log_density(self, x: NDArray[np.float64]) -> NDArray[np.float64]:
        """Normalised log prior density, -inf outside the support; same shape as ``x``."""
        inside = self.contains(x)
        if self.kind == "uniform":
            value = np.full(np.shape(x), -math.log(self.maximum - self.minimum))
        else:
            mass = _normal_cdf((self.maximum - self.mean) / self.sd) - _normal_cdf(
                (self.minimum - self.mean) / self.sd
            )
            value = -0.5 * ((x - self.mean) / self.sd) ** 2 - math.log(
                self.sd * math.sqrt(2 * math.pi) * mass
            )
        return np.where(inside, value, -np.inf)

    @property
    def typical(self) -> float:
        """A central value: the mean of a Gaussian, the middle of a uniform range."""
        return self.mean if self.kind == "gaussian" else 0.5 * (self.minimum + self.maximum)

    @property
    def scale(self) -> float:
        """A width: the sd of a Gaussian, the length of a uniform range."""
        return self.sd if self.kind == "gaussian" else self.maximum - self.minimum

    def describe(self) -> dict[str, float | str]:
        """Plain record for provenance."""
        record: dict[str, float | str] = {"prior": self.kind}
        if self.kind == "gaussian":
            record.update(mean=self.mean, sd=self.sd)
        if math.isfinite(self.minimum):
            record["min"] = self.minimum
        if math.isfinite(self.maximum):
            record["max"] = self.maximum
        return record


@dataclasses.dataclass(frozen=True)
class FreeParameter:
    """A sampled parameter: its name, prior and the optimiser's start value."""

    name: str
    prior: Prior
    start: float

    def __post_init__(self) -> None:
        if not (
            math.isfinite(self.start) and self.prior.minimum <= self.start <= self.prior.maximum
        ):
            raise ConfigError(
                f"start value {self.start} of {self.name} lies outside its prior range "
                f"[{self.prior.minimum}, {self.prior.maximum}]; move the start or widen the prior"
            )


@dataclasses.dataclass(frozen=True)
class FitModel:
    """Free and fixed parameters and the physics settings of the core.

    Attributes
    ----------
    free : the sampled parameters, in chain column order.
    fixed : every other parameter's value, by name (cosmological names and maybe r_d).
    radiation, n_massive, t_cmb : passed to :func:`agepost.physics.background.make_background`.
    """

    free: tuple[FreeParameter, ...]
    fixed: dict[str, float]
    radiation: str = "full"
    n_massive: int = int(DEFAULTS["n_massive"])
    t_cmb: float = DEFAULTS["t_cmb"]

    def __post_init__(self) -> None:
        if not self.free:
            raise ConfigError(
                "no parameter is free: give at least one of H0, Omega_m, Omega_k, w0, wa, r_d "
                "a prior"
            )
        names = [p.name for p in self.free]
        unknown = [n for n in names if n not in FREE_PARAMETERS]
        unknown += [n for n in self.fixed if n not in FREE_PARAMETERS + FIXED_ONLY]
        if unknown:
            raise ConfigError(
                f"parameter {unknown[0]!r} cannot be fitted; "
                f"free ones are {', '.join(FREE_PARAMETERS)} "
                f"and {', '.join(FIXED_ONLY)} can be fixed"
            )
        twice = set(names) & set(self.fixed) or {n for n in names if names.count(n) > 1}
        if twice:
            raise ConfigError(f"parameter {sorted(twice)[0]} is given twice (free and fixed?)")
        if self.radiation not in RADIATION_MODELS:
            raise ConfigError(
                f"radiation model {self.radiation!r} is unknown; "
                f"use one of {', '.join(RADIATION_MODELS)}"
            )
        for required in ("H0", "Omega_m"):
            if required not in names and required not in self.fixed:
                raise ConfigError(
                    f"{required} has no default: make it free (with a prior) or fix its value"
                )

    @property
    def names(self) -> tuple[str, ...]:
        """Names of the free parameters, in chain column order."""
        return tuple(p.name for p in self.free)

    @property
    def uses_sound_horizon(self) -> bool:
        """True when r_d is free or fixed."""
        return "r_d" in self.names or "r_d" in self.fixed

    def start(self) -> NDArray[np.float64]:
        """Start values of the free parameters, shape (n_free,)."""
        return np.array([p.start for p in self.free])

    def log_prior(self, theta: NDArray[np.float64]) -> NDArray[np.float64]:
        """Sum of the log prior densities, shape (n,) for ``theta`` of shape (n, n_free)."""
        total = np.zeros(theta.shape[0])
        for column, parameter in enumerate(self.free):
            total += parameter.prior.log_density(theta[:, column])
        return total

    def values(self, theta: NDArray[np.float64]) -> dict[str, NDArray[np.float64]]:
        """Every parameter as an (n,) array: free ones from ``theta``, then fixed, then defaults."""
        n = theta.shape[0]
        values = {name: theta[:, column] for column, name in enumerate(self.names)}
        for name, value in {**DEFAULT_VALUES, **self.fixed}.items():
            values.setdefault(name, np.full(n, float(value)))
        return values

    def fixed_values(self) -> dict[str, float]:
        """Fixed and defaulted parameters (all but the free ones), for provenance."""
        merged = {**DEFAULT_VALUES, **self.fixed}
        return {name: float(value) for name, value in merged.items() if name not in self.names}


def _normal_cdf(x: float) -> float:
    return 0.5 * math.erfc(-x / math.sqrt(2.0))
