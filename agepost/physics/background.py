"""Density budget of the expansion history: what H^2(a) is made of, for many samples at once.

Conventions (H0 in km/s/Mpc, masses in eV, temperatures in K):

- ``omega_m`` is all matter that is non-relativistic today: baryons, cold dark matter and
  massive neutrinos; the neutrinos' present density (Fermi-Dirac, at a = 1) is counted
  inside it and the rest scales as a^-3.
- The three neutrino species share ``n_eff`` equally: each has temperature
  T_nu = (4/11)^(1/3) (n_eff/3)^(1/4) T_cmb, so while relativistic each carries n_eff/3 of
  the standard (7/8)(4/11)^(4/3) Omega_gamma. ``n_massive`` of them (default 1) share
  ``m_nu`` equally; the rest are massless.
- Dark energy has w(a) = w0 + wa (1 - a) and its density today closes the budget:
  Omega_de = 1 - Omega_k - Omega_m - Omega_gamma - Omega_nu,massless.
- Radiation models: ``none`` (no photons or neutrinos), ``massless`` (photons and n_eff
  massless neutrinos; ``m_nu`` ignored), ``full`` (photons, massless and massive neutrinos).
"""

from __future__ import annotations

import dataclasses
from typing import Any, Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray

from agepost.errors import ConfigError
from agepost.exclusions import Exclusion
from agepost.physics import constants
from agepost.physics.neutrinos import energy_density_ratio_from_log

RadiationModel = Literal["none", "massless", "full"]
RADIATION_MODELS: tuple[str, ...] = ("none", "massless", "full")

#: Defaults applied to every parameter a chain or a call does not give.
DEFAULTS: dict[str, float] = {
    "omega_k": 0.0,
    "w0": -1.0,
    "wa": 0.0,
    "m_nu": 0.06,
    "n_eff": 3.044,
    "t_cmb": 2.7255,
    "n_massive": 1,
}
DEFAULT_RADIATION: RadiationModel = "full"


@dataclasses.dataclass(frozen=True)
class Background:
    """Present-day density parameters of ``n`` samples, all arrays of shape ``(n,)``.

    Build it with :func:`make_background`; the fields are dimensionless except ``h0``
    (km/s/Mpc). ``scaled_h2(a)`` gives a^4 E^2(a), with E = H/H0.
    """

    h0: NDArray[np.float64]
    omega_m: NDArray[np.float64]
    omega_k: NDArray[np.float64]
    w0: NDArray[np.float64]
    wa: NDArray[np.float64]
    omega_cb: NDArray[np.float64]  # matter without the massive neutrinos
    omega_radiation: NDArray[np.float64]  # photons + massless neutrinos, scaling as a^-4
    omega_nu_species: NDArray[np.float64]  # one massive species if it were massless (0 if m_nu = 0)
    n_massive: int
    ln_y_today: NDArray[np.float64]  # ln(m_i c^2 / k T_nu) of each massive species today
    omega_de: NDArray[np.float64]
    omega_radiation_early: NDArray[np.float64]  # all radiation while every neutrino is relativistic
    exclusion: NDArray[np.int8]  # Exclusion code per sample from the parameter checks
    radiation: str

    @property
    def size(self) -> int:
        """Number of samples."""
        return int(self.h0.size)

    @property
    def has_dark_energy_evolution(self) -> bool:
        """True when some sample has w0 != -1 or wa != 0."""
        return bool(np.any(self.w0 != -1.0) or np.any(self.wa != 0.0))

    def take(self, index: NDArray[np.intp] | slice) -> Background:
        """Subset of the samples (same model settings)."""
        fields: dict[str, Any] = {}
        for field in dataclasses.fields(self):
            value = getattr(self, field.name)
            fields[field.name] = value[index] if isinstance(value, np.ndarray) else value
        return Background(**fields)

    def scaled_h2(self, a: ArrayLike, *, index: NDArray[np.intp] | None = None) -> NDArray:
        """a^4 E(a)^2 for scale factors ``a`` broadcast against the samples.

        Parameters
        ----------
        a : array_like
            Shape ``(n,)``, ``(n, k)`` or anything broadcasting against ``(n, 1)`` after
            selection by ``index``.
        index : array of int, optional
            Sample of each row of ``a`` (default: row i is sample i).
        """
        a = np.asarray(a, dtype=float)
        pick = (lambda x: x) if index is None else (lambda x: x[index])

        def column(x: NDArray) -> NDArray:
            values = pick(x)
            return values.reshape(values.shape + (1,) * (a.ndim - values.ndim))

        a2 = a * a
        total = column(self.omega_radiation) + a * (
            column(self.omega_cb) + a * column(self.omega_k)
        )
        need_log = self.n_massive > 0 and self.radiation == "full"
        evolving = self.has_dark_energy_evolution
        ln_a = np.log(a) if (need_log or evolving) else np.empty(0)
        if evolving:
            w0, wa = column(self.w0), column(self.wa)
            total += column(self.omega_de) * np.exp(
                (1.0 - 3.0 * (w0 + wa)) * ln_a - 3.0 * wa * (1.0 - a)
            )
        else:
            total += column(self.omega_de) * (a2 * a2)
        if need_log:
            ratio = energy_density_ratio_from_log(column(self.ln_y_today) + ln_a)
            total += (self.n_massive * column(self.omega_nu_species)) * ratio
        return total

    def scaled_h2_on_grid(self, a: NDArray[np.float64]) -> NDArray[np.float64]:
        """a^4 E(a)^2 of every sample on one shared grid ``a`` of shape (k,); returns (n, k).

        Faster than :meth:`scaled_h2`: terms that are a fixed function of ``a`` times a
        per-sample density are accumulated in place, without per-node logarithms.
        """
        a = np.asarray(a, dtype=float)
        need_log = self.n_massive > 0 and self.radiation == "full"
        evolving = self.has_dark_energy_evolution
        ln_a = np.log(a) if (need_log or evolving) else np.empty(0)
        terms = [(self.omega_cb, a), (self.omega_k, a * a)]
        if not evolving:
            terms.append((self.omega_de, a**4))
        shared_neutrinos = need_log and bool(np.all(self.ln_y_today == self.ln_y_today[0]))
        if shared_neutrinos:
            ratio = energy_density_ratio_from_log(self.ln_y_today[0] + ln_a)
            terms.append((self.n_massive * self.omega_nu_species, ratio))
        total = np.empty((self.size, a.size))
        total[:] = self.omega_radiation[:, None]
        work = np.empty_like(total)
        for density, shape in terms:
            np.multiply(density[:, None], shape[None, :], out=work)
            total += work
        if evolving:
            np.multiply((1.0 - 3.0 * (self.w0 + self.wa))[:, None], ln_a[None, :], out=work)
            total_exponent = np.multiply((-3.0 * self.wa)[:, None], (1.0 - a)[None, :])
            work += total_exponent
            np.exp(work, out=work)
            work *= self.omega_de[:, None]
            total += work
        if need_log and not shared_neutrinos:
            ratio = energy_density_ratio_from_log(self.ln_y_today[:, None] + ln_a[None, :])
            ratio *= (self.n_massive * self.omega_nu_species)[:, None]
            total += ratio
        return total


def _as_float_array(name: str, value: ArrayLike, n: int) -> NDArray[np.float64]:
    array = np.asarray(value, dtype=float)
    if array.ndim == 0:
        return np.full(n, float(array))
    if array.ndim != 1 or array.size != n:
        raise ConfigError(
            f"parameter {name!r} has shape {array.shape}; expected a scalar or ({n},)"
        )
    return array


def make_background(
    *,
    h0: ArrayLike,
    omega_m: ArrayLike,
    omega_k: ArrayLike = DEFAULTS["omega_k"],
    w0: ArrayLike = DEFAULTS["w0"],
    wa: ArrayLike = DEFAULTS["wa"],
    m_nu: ArrayLike = DEFAULTS["m_nu"],
    n_eff: ArrayLike = DEFAULTS["n_eff"],
    t_cmb: ArrayLike = DEFAULTS["t_cmb"],
    n_massive: int = int(DEFAULTS["n_massive"]),
    radiation: str = DEFAULT_RADIATION,
) -> Background:
    """Density budget for arrays (or scalars) of parameters; all broadcast to one length.

    Samples with parameters outside the model's domain are not rejected here: they get an
    :class:`~agepost.exclusions.Exclusion` code in ``exclusion`` and NaN-free placeholder
    densities, so one bad row never stops a chain.
    """
    if radiation not in RADIATION_MODELS:
        raise ConfigError(
            f"unknown radiation model {radiation!r}; choose one of {', '.join(RADIATION_MODELS)}"
        )
    if n_massive not in (0, 1, 2, 3):
        raise ConfigError(f"n_massive must be 0, 1, 2 or 3 (got {n_massive})")
    inputs = dict(
        h0=h0, omega_m=omega_m, omega_k=omega_k, w0=w0, wa=wa, m_nu=m_nu, n_eff=n_eff, t_cmb=t_cmb
    )
    n = max(np.size(v) for v in inputs.values())
    p = {name: _as_float_array(name, value, n) for name, value in inputs.items()}

    exclusion = np.zeros(n, dtype=np.int8)
    finite = np.all([np.isfinite(v) for v in p.values()], axis=0)
    exclusion[~finite] = Exclusion.NON_FINITE_INPUT
    invalid = finite & (
        (p["h0"] <= 0) | (p["n_eff"] < 0) | (p["t_cmb"] < 0) | (p["m_nu"] < 0) | (p["omega_m"] < 0)
    )
    exclusion[invalid] = Exclusion.INVALID_PARAMETERS
    ok = exclusion == 0
    # Placeholders keep the arithmetic finite for excluded rows; their results are masked.
    for name, placeholder in (
        ("h0", 70.0),
        ("omega_m", 0.3),
        ("omega_k", 0.0),
        ("w0", -1.0),
        ("wa", 0.0),
        ("m_nu", 0.0),
        ("n_eff", 3.0),
        ("t_cmb", 2.7255),
    ):
        p[name] = np.where(ok, p[name], placeholder)

    h2 = (p["h0"] / 100.0) ** 2
    omega_gamma = constants.OMEGA_GAMMA_H2_PER_K4 * p["t_cmb"] ** 4 / h2
    species = (
        omega_gamma
        * constants.NEUTRINO_TO_PHOTON_PER_SPECIES
        * p["n_eff"]
        / constants.N_NEUTRINO_SPECIES
    )
    if radiation == "none":
        omega_gamma, species = np.zeros(n), np.zeros(n)
    massive = n_massive if radiation == "full" else 0
    t_nu_k = (
        p["t_cmb"]
        * constants.NEUTRINO_TEMPERATURE_RATIO
        * (p["n_eff"] / constants.N_NEUTRINO_SPECIES) ** 0.25
    )
    # Rows whose "massive" species really carry mass; with m_nu = 0 (or no relic neutrinos
    # at all, N_eff = 0 or T_cmb = 0) those species are plain radiation.
    has_mass = (p["m_nu"] > 0) & (t_nu_k > 0) & (species > 0)
    with np.errstate(divide="ignore", invalid="ignore"):
        ln_y = np.log(p["m_nu"] / max(massive, 1) / (constants.BOLTZMANN_EV_K * t_nu_k))
    ln_y_today = np.where(has_mass, ln_y, -np.inf)
    massive_species = np.where(has_mass, species, 0.0)
    omega_nu_massive_today = massive * massive_species * energy_density_ratio_from_log(ln_y_today)
    omega_cb = p["omega_m"] - omega_nu_massive_today
    below = ok & (omega_cb < 0)
    exclusion[below] = Exclusion.MATTER_BELOW_NEUTRINOS
    omega_massless = (
        omega_gamma
        + (constants.N_NEUTRINO_SPECIES - massive) * species
        + massive * (species - massive_species)
    )
    omega_de = 1.0 - p["omega_k"] - p["omega_m"] - omega_massless
    return Background(
        h0=p["h0"],
        omega_m=p["omega_m"],
        omega_k=p["omega_k"],
        w0=p["w0"],
        wa=p["wa"],
        omega_cb=np.where(below, 0.0, omega_cb),
        omega_radiation=omega_massless,
        omega_nu_species=massive_species,
        n_massive=massive,
        ln_y_today=ln_y_today,
        omega_de=omega_de,
        omega_radiation_early=omega_gamma + constants.N_NEUTRINO_SPECIES * species,
        exclusion=exclusion,
        radiation=radiation,
    )
