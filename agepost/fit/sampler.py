"""Run emcee on a :class:`~agepost.fit.likelihood.Posterior` until the autocorrelation rule is met.

Steps: a maximum-posterior start found with scipy.optimize (L-BFGS-B with a vectorised
central-difference gradient), a small Gaussian ball of walkers around it, then emcee's
ensemble sampler writing every step to its HDF5 backend. Every ``check_every`` steps the
integrated autocorrelation time tau of each parameter is estimated; the run stops when the
chain is longer than ``tau_multiple`` tau for every parameter and no tau changed by more
than ``tau_tolerance`` (relative) since the last check (emcee's documented guidance uses
the same two tests), or at ``max_steps``. A chain stopped by ``max_steps`` is returned
with ``converged = False``; the caller must say so in its outputs.
"""

from __future__ import annotations

import dataclasses
import logging
import math
import time
from pathlib import Path

import emcee
import h5py
import numpy as np
from numpy.typing import NDArray
from scipy.optimize import minimize

from agepost.errors import ComputationError, ConfigError
from agepost.fit.likelihood import Posterior
from agepost.progress import Progress, progress

logger = logging.getLogger(__name__)

#: Group of the HDF5 file that holds emcee's backend.
BACKEND_GROUP = "mcmc"
#: HDF5 attribute (on the backend group) listing the chain's column names (read by agepost.chains).
NAMES_ATTRIBUTE = "names"
#: HDF5 attribute holding the seed of the run that created the file.
SEED_ATTRIBUTE = "agepost_seed"
#: Attempts to place each walker of the initial ball inside the posterior's support.
BALL_ATTEMPTS = 100
#: Size of the optimiser's first simplex, as a fraction of each prior's width or sd.
START_SIMPLEX = 0.05
#: Names of the move mixtures offered by :class:`SamplerSettings`.
MOVES: tuple[str, ...] = ("differential", "stretch")


@dataclasses.dataclass(frozen=True)
class SamplerSettings:
    """How to run the ensemble sampler.

    Attributes
    ----------
    walkers : number of walkers (at least twice the number of free parameters).
    max_steps : most steps in the chain, counting steps of a resumed file.
    check_every : steps between autocorrelation checks (and progress lines).
    tau_multiple : the chain must be longer than this many tau (default 50).
    tau_tolerance : largest relative change of tau between two checks (default 0.01).
    seed : seed of the initial ball and of emcee's generator; None draws one and records it.
    ball : initial spread of the walkers, as a fraction of each prior's width or sd.
    moves : ``"differential"`` (default: emcee's differential-evolution move, 80 percent,
        with its snooker variant, 20 percent) or ``"stretch"`` (emcee's default move).
        On curved distance-data posteriors the first gave 2 to 4 times shorter
        autocorrelation times in our trials (compare with benchmarks/bench_fit.py --moves).
    """

    walkers: int = 32
    max_steps: int = 20_000
    check_every: int = 100
    tau_multiple: float = 50.0
    tau_tolerance: float = 0.01
    seed: int | None = None
    ball: float = 1e-3
    moves: str = "differential"

    def __post_init__(self) -> None:
        for name in ("walkers", "max_steps", "check_every"):
            value = getattr(self, name)
            if not isinstance(value, int) or isinstance(value, bool) or value < 1:
                raise ConfigError(f"sampler {name} must be a positive integer (got {value!r})")
        if not (self.tau_multiple > 0 and 0 < self.tau_tolerance < 1 and 0 < self.ball < 1):
            raise ConfigError("sampler tau_multiple must be > 0, tau_tolerance and ball in (0, 1)")
        if self.moves not in MOVES:
            raise ConfigError(
                f"sampler moves {self.moves!r} is unknown; use one of {', '.join(MOVES)}"
            )
        if self.seed is not None and (not isinstance(self.seed, int) or self.seed < 0):
            raise ConfigError(f"sampler seed must be a non-negative integer (got {self.seed!r})")


@dataclasses.dataclass(frozen=True)
class ChainResult:
    """What a run produced. Arrays are per free parameter (n_free,) or per walker.

    ``discard`` and ``thin`` follow emcee's guidance: discard 2 max(tau), thin by
    min(tau) / 2.
    """

    names: tuple[str, ...]
    iterations: int
    resumed_from: int
    tau: NDArray[np.float64]
    acceptance: NDArray[np.float64]
    converged: bool
    stop_reason: str
    seed: int
    start: NDArray[np.float64]
    start_log_posterior: float
    evaluations: int
    wall_time_s: float
    discard: int
    thin: int


def find_start(posterior: Posterior) -> tuple[NDArray[np.float64], float]:
    """Maximum-posterior point near the configured start values and its log-posterior.

    Nelder-Mead (it tolerates the -inf of points without a big bang) in coordinates scaled
    by each prior's width or sd, from a simplex of 5 percent of those scales.
    """
    model = posterior.model
    start = model.start()
    start_value = float(posterior(start)[0])
    if not np.isfinite(start_value):
        raise ConfigError(
            f"the start values {dict(zip(model.names, start.tolist(), strict=True))} give zero "
            "posterior "
            "(no big bang, a negative distance or a prior edge); choose other start values"
        )
    scale = np.array([p.prior.scale for p in model.free])

    def objective(x: NDArray) -> float:
        value = float(posterior(start + scale * x)[0])
        return -value if np.isfinite(value) else np.inf

    simplex = np.vstack([np.zeros(start.size), START_SIMPLEX * np.eye(start.size)])
    result = minimize(
        objective,
        np.zeros(start.size),
        method="Nelder-Mead",
        options={
            "initial_simplex": simplex,
            "xatol": 1e-5,
            "fatol": 1e-4,
            "maxiter": 400 * start.size,
        },
    )
    best, best_value = start + scale * result.x, -float(result.fun)
    if not best_value > start_value:
        logger.info("the optimiser did not improve on the start values; starting from them")
        return start, start_value
    logger.info(
        "maximum-posterior start %s (log-posterior %.3f after %d evaluations)",
        dict(zip(model.names, np.round(best, 6).tolist(), strict=True)),
        best_value,
        result.nfev,
    )
    return best, best_value


def initial_ball(
    posterior: Posterior,
    center: NDArray[np.float64],
    *,
    walkers: int,
    ball: float,
    rng: np.random.Generator,
) -> NDArray[np.float64]:
    """Walker positions, shape (walkers, n_free): a Gaussian ball inside the posterior's support."""
    scale = ball * np.array([p.prior.scale for p in posterior.model.free])
    positions = np.empty((walkers, center.size))
    pending = np.arange(walkers)
    for _ in range(BALL_ATTEMPTS):
        trial = center + scale * rng.standard_normal((pending.size, center.size))
        good = np.isfinite(posterior(trial))
        positions[pending[good]] = trial[good]
        pending = pending[~good]
        if pending.size == 0:
            return positions
    raise ComputationError(
        f"could not place {pending.size} walkers around the start with finite posterior; "
        "the start sits on an edge of the support: move it inward or reduce [sampler] ball"
    )


def run_chain(
    posterior: Posterior,
    chain_path: Path,
    *,
    settings: SamplerSettings,
    resume: bool = False,
    show_progress: bool = False,
) -> ChainResult:
    """Sample ``posterior`` into emcee's HDF5 backend at ``chain_path``.

    With ``resume`` the file must hold an earlier run of the same model; sampling goes on
    from its last step with its stored random state. Otherwise the file is created.
    Steps are kept in memory and appended to the file after every ``check_every`` steps
    (writing each step separately costs more than a likelihood call). ``show_progress``
    draws a progress bar on a terminal (see :mod:`agepost.progress`).
    """
    names = posterior.model.names
    if settings.walkers < 2 * len(names):
        raise ConfigError(
            f"{settings.walkers} walkers are too few for {len(names)} free parameters; "
            f"use at least {2 * len(names)}"
        )
    clock = time.perf_counter()
    evaluations_before = posterior.evaluations
    memory = emcee.backends.Backend()
    sampler = emcee.EnsembleSampler(
        settings.walkers,
        len(names),
        posterior,
        vectorize=True,
        backend=memory,
        moves=_moves(settings.moves),
    )
    if resume:
        seed = _load_for_resume(chain_path, memory, names=names, walkers=settings.walkers)
        sampler.random_state = memory.random_state
        last = memory.get_last_sample()
        start, start_value = (
            last.coords[int(np.argmax(last.log_prob))],
            float(np.max(last.log_prob)),
        )
        initial = None
    else:
        seed, start, start_value, initial = _fresh_start(posterior, sampler, settings)
        _create_file(chain_path, names=names, walkers=settings.walkers, seed=seed)
    resumed_from = memory.iteration
    with progress(settings.max_steps, label="sampling", enabled=show_progress) as bar:
        bar.advance(memory.iteration)
        converged, tau = _sample_until_converged(sampler, initial, settings, chain_path, bar)
    iterations = memory.iteration
    finite = bool(np.all(np.isfinite(tau)))
    return ChainResult(
        names=names,
        iterations=iterations,
        resumed_from=resumed_from,
        tau=tau,
        acceptance=np.asarray(memory.accepted / max(iterations, 1), dtype=float),
        converged=converged,
        stop_reason="autocorrelation rule met"
        if converged
        else f"reached max_steps = {settings.max_steps}",
        seed=int(seed),
        start=np.asarray(start),
        start_log_posterior=start_value,
        evaluations=posterior.evaluations - evaluations_before,
        wall_time_s=time.perf_counter() - clock,
        discard=min(math.ceil(2 * np.max(tau)), iterations // 2) if finite else iterations // 2,
        thin=max(1, int(0.5 * np.min(tau))) if finite else 1,
    )


def _fresh_start(
    posterior: Posterior, sampler: emcee.EnsembleSampler, settings: SamplerSettings
) -> tuple[int, NDArray[np.float64], float, NDArray[np.float64]]:
    """Seed, maximum-posterior start, its log-posterior and the initial ball; seeds the sampler."""
    seed = (
        settings.seed if settings.seed is not None else int(np.random.default_rng().integers(2**63))
    )
    ball_seed, emcee_seed = np.random.SeedSequence(seed).spawn(2)
    start, start_value = find_start(posterior)
    initial = initial_ball(
        posterior,
        start,
        walkers=settings.walkers,
        ball=settings.ball,
        rng=np.random.default_rng(ball_seed),
    )
    sampler.backend.reset(settings.walkers, len(start))
    sampler.random_state = np.random.RandomState(np.random.MT19937(emcee_seed)).get_state()
    return seed, start, start_value, initial


def _sample_until_converged(
    sampler: emcee.EnsembleSampler,
    initial: NDArray | None,
    settings: SamplerSettings,
    chain_path: Path,
    bar: Progress,
) -> tuple[bool, NDArray[np.float64]]:
    """Advance in blocks of ``check_every`` steps, appending each to the file; (converged, tau)."""
    memory = sampler.backend
    tau = memory.get_autocorr_time(tol=0) if memory.iteration > 0 else np.full(sampler.ndim, np.inf)
    state = initial if initial is not None else memory.get_last_sample()
    while memory.iteration < settings.max_steps:
        previous_tau, written = tau, memory.iteration
        steps = min(settings.check_every, settings.max_steps - memory.iteration)
        state = sampler.run_mcmc(state, steps, progress=False)
        _append(chain_path, memory, written)
        bar.advance(steps)
        tau = memory.get_autocorr_time(tol=0)
        logger.log(
            logging.DEBUG if bar.shown else logging.INFO,
            "step %d of at most %d: tau %s, chain/tau %.0f (need %g), acceptance %.2f",
            memory.iteration,
            settings.max_steps,
            np.array2string(tau, precision=1),
            memory.iteration / np.max(tau),
            settings.tau_multiple,
            float(np.mean(memory.accepted)) / memory.iteration,
        )
        long_enough = np.all(settings.tau_multiple * tau < memory.iteration)
        stable = np.all(np.abs(previous_tau - tau) < settings.tau_tolerance * tau)
        if long_enough and stable:
            return True, tau
    return False, np.asarray(tau, dtype=float)


def _moves(name: str) -> list[tuple[emcee.moves.Move, float]]:
    if name == "stretch":
        return [(emcee.moves.StretchMove(), 1.0)]
    return [(emcee.moves.DEMove(), 0.8), (emcee.moves.DESnookerMove(), 0.2)]


def _create_file(chain_path: Path, *, names: tuple[str, ...], walkers: int, seed: int) -> None:
    """An empty emcee HDF5 backend, labelled with the parameter names and the seed."""
    emcee.backends.HDFBackend(str(chain_path), name=BACKEND_GROUP).reset(walkers, len(names))
    with h5py.File(chain_path, "a") as handle:
        handle[BACKEND_GROUP].attrs[NAMES_ATTRIBUTE] = list(names)
        handle[BACKEND_GROUP].attrs[SEED_ATTRIBUTE] = seed


def _append(chain_path: Path, memory: emcee.backends.Backend, written: int) -> None:
    """Append steps ``written:`` of the in-memory chain to the file, laid out as emcee's backend."""
    new = memory.iteration - written
    file_backend = emcee.backends.HDFBackend(str(chain_path), name=BACKEND_GROUP)
    file_backend.grow(new, None)
    with file_backend.open("a") as handle:
        group = handle[BACKEND_GROUP]
        group["chain"][written : memory.iteration] = memory.chain[written : memory.iteration]
        group["log_prob"][written : memory.iteration] = memory.log_prob[written : memory.iteration]
        group["accepted"][:] = memory.accepted
        for index, value in enumerate(memory.random_state):
            group.attrs[f"random_state_{index}"] = value
        group.attrs["iteration"] = memory.iteration


def _load_for_resume(
    chain_path: Path, memory: emcee.backends.Backend, *, names: tuple[str, ...], walkers: int
) -> int:
    """Copy an earlier run into ``memory`` (chain, acceptance, random state); returns its seed."""
    try:
        with h5py.File(chain_path, "r") as handle:
            group = handle[BACKEND_GROUP]
            stored = tuple(str(n) for n in group.attrs.get(NAMES_ATTRIBUTE, ()))
            stored_walkers = int(group.attrs["nwalkers"])
            seed = int(group.attrs.get(SEED_ATTRIBUTE, -1))
    except (OSError, KeyError) as error:
        raise ConfigError(
            f"{chain_path}: cannot resume, not an emcee chain written by agepost fit ({error})"
        ) from None
    if stored != names or stored_walkers != walkers:
        raise ConfigError(
            f"{chain_path}: cannot resume: it holds {stored_walkers} walkers of {list(stored)}, "
            f"the config asks for {walkers} walkers of {list(names)}"
        )
    earlier = emcee.backends.HDFBackend(str(chain_path), name=BACKEND_GROUP, read_only=True)
    if earlier.iteration < 1:
        raise ConfigError(f"{chain_path}: cannot resume an empty chain; run without --resume")
    memory.reset(walkers, len(names))
    memory.grow(earlier.iteration, None)
    memory.chain[:] = earlier.get_chain()
    memory.log_prob[:] = earlier.get_log_prob()
    memory.accepted = np.asarray(earlier.accepted, dtype=memory.accepted.dtype)
    memory.iteration = earlier.iteration
    memory.random_state = earlier.random_state
    return seed
