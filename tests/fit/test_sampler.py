"""emcee runs: recovery of a known cosmology, seeds, resume, the file layout, the stop rule."""

from __future__ import annotations

import emcee
import numpy as np
import pytest

from agepost.errors import ConfigError
from agepost.fit.likelihood import Posterior
from agepost.fit.priors import FitModel, FreeParameter, Prior
from agepost.fit.sampler import SamplerSettings, find_start, run_chain


def model_of(truth, *, free=("H0", "Omega_m", "w0", "r_d")):
    priors = {
        "H0": Prior("uniform", 50, 90),
        "Omega_m": Prior("uniform", 0.05, 0.8),
        "w0": Prior("uniform", -2.5, -0.2),
        "r_d": Prior("gaussian", mean=147.0, sd=6.0),
    }
    starts = {"H0": 70.0, "Omega_m": 0.3, "w0": -1.0, "r_d": 147.0}
    return FitModel(
        tuple(FreeParameter(n, priors[n], starts[n]) for n in free),
        {n: truth[n] for n in truth if n not in free},
    )


@pytest.mark.slow
def test_recovered_intervals_contain_the_truth(tmp_path, make_synthetic, rng, truth):
    # synthetic data from a known cosmology with noise; fixed seeds, so the outcome is reproducible
    posterior = Posterior(make_synthetic(rng), model_of(truth))
    # tau stable to 5 percent (the default 1 percent doubles the run time for the same check)
    settings = SamplerSettings(
        walkers=24, max_steps=6000, check_every=100, seed=5, tau_tolerance=0.05
    )
    result = run_chain(posterior, tmp_path / "chain.h5", settings=settings)
    assert result.converged, result.stop_reason
    chain = emcee.backends.HDFBackend(str(tmp_path / "chain.h5"), read_only=True).get_chain(
        discard=result.discard, flat=True
    )
    for column, name in enumerate(result.names):
        low, high = np.quantile(chain[:, column], [0.025, 0.975])
        assert low < truth[name] < high, (name, low, high)
    # the stop rule held: longer than 50 tau
    assert result.iterations > 50 * result.tau.max()
    assert 0.1 < result.acceptance.mean() < 0.9


def test_start_is_the_maximum_posterior_point(make_synthetic, rng, truth):
    posterior = Posterior(make_synthetic(rng), model_of(truth, free=("Omega_m", "w0")))
    best, value = find_start(posterior)
    assert value > posterior(posterior.model.start())[0]
    steps = np.array([[0.003, 0], [-0.003, 0], [0, 0.01], [0, -0.01]])
    assert np.all(posterior(best + steps) <= value + 1e-6)


def test_seeded_runs_repeat_and_resume_continues_the_same_chain(
    tmp_path, make_synthetic, rng, truth
):
    posterior = Posterior(make_synthetic(rng, n_mu=40), model_of(truth, free=("Omega_m", "w0")))
    short = SamplerSettings(walkers=8, max_steps=40, check_every=20, seed=11, tau_multiple=1e6)
    long = SamplerSettings(walkers=8, max_steps=80, check_every=20, seed=11, tau_multiple=1e6)
    straight = run_chain(posterior, tmp_path / "straight.h5", settings=long)
    run_chain(posterior, tmp_path / "again.h5", settings=long)
    run_chain(posterior, tmp_path / "resumed.h5", settings=short)
    resumed = run_chain(posterior, tmp_path / "resumed.h5", settings=long, resume=True)
    chains = {
        name: emcee.backends.HDFBackend(str(tmp_path / f"{name}.h5"), read_only=True)
        for name in ("straight", "again", "resumed")
    }
    np.testing.assert_array_equal(chains["straight"].get_chain(), chains["again"].get_chain())
    # the stored generator state makes the resumed chain identical to the uninterrupted one
    np.testing.assert_array_equal(chains["straight"].get_chain(), chains["resumed"].get_chain())
    np.testing.assert_array_equal(
        chains["straight"].get_log_prob(), chains["resumed"].get_log_prob()
    )
    assert resumed.resumed_from == 40 and resumed.iterations == 80 and resumed.seed == 11
    assert not straight.converged and straight.stop_reason == "reached max_steps = 80"


def test_file_is_emcee_backend_with_names(tmp_path, make_synthetic, rng, truth):
    # emcee's own reader sees the steps, acceptance and log-probabilities we wrote in blocks
    import h5py

    posterior = Posterior(make_synthetic(rng, n_mu=40), model_of(truth, free=("Omega_m", "w0")))
    result = run_chain(
        posterior,
        tmp_path / "c.h5",
        settings=SamplerSettings(walkers=8, max_steps=50, check_every=20, seed=3, moves="stretch"),
    )
    backend = emcee.backends.HDFBackend(str(tmp_path / "c.h5"), read_only=True)
    assert backend.iteration == 50 and backend.shape == (8, 2)
    chain, log_prob = backend.get_chain(), backend.get_log_prob()
    assert chain.shape == (50, 8, 2)
    np.testing.assert_allclose(log_prob[-1], posterior(chain[-1]), rtol=0, atol=1e-8)
    np.testing.assert_allclose(backend.accepted / 50, result.acceptance, rtol=1e-15)
    with h5py.File(tmp_path / "c.h5", "r") as handle:
        assert list(handle["mcmc"].attrs["names"]) == ["Omega_m", "w0"]


def test_sampler_settings_and_start_errors(make_synthetic, rng, truth, tmp_path):
    with pytest.raises(ConfigError, match="sampler walkers must be a positive integer"):
        SamplerSettings(walkers=0)
    with pytest.raises(ConfigError, match="sampler moves 'gibbs' is unknown"):
        SamplerSettings(moves="gibbs")
    posterior = Posterior(make_synthetic(rng, n_mu=20), model_of(truth))
    with pytest.raises(
        ConfigError, match="6 walkers are too few for 4 free parameters; use at least 8"
    ):
        run_chain(posterior, tmp_path / "x.h5", settings=SamplerSettings(walkers=6))
    closed = FitModel(
        (FreeParameter("Omega_m", Prior("uniform", 0.0, 1.0), 0.05),),
        {"H0": 68.0, "Omega_k": -0.9, "r_d": 147.0},
    )  # no big bang at the start
    with pytest.raises(ConfigError, match="give zero posterior"):
        find_start(Posterior(make_synthetic(rng, n_mu=20), closed))
    with pytest.raises(ConfigError, match="cannot resume"):
        run_chain(posterior, tmp_path / "x.h5", settings=SamplerSettings(walkers=8), resume=True)
