"""emcee's own HDF5 backend, written by emcee itself in the test (a tiny seeded run)."""

import emcee
import h5py
import numpy as np
import pytest
from numpy.testing import assert_array_equal

from agepost.chains.options import ReadOptions
from agepost.chains.reader import concatenate, iter_chain_chunks, read_chains
from agepost.errors import ChainFormatError

NAMES = ("H0", "Omega_m", "w")
N_WALKERS = 8
N_STEPS = 40
CENTRE = np.array([67.5, 0.31, -1.0])
SCALE = np.array([0.5, 0.01, 0.05])


def _log_prob(theta):
    return -0.5 * float(np.sum(((theta - CENTRE) / SCALE) ** 2))


def _run(path, seed=7, group="mcmc"):
    """Run emcee for N_STEPS with its HDF5 backend writing ``path``; return the backend."""
    backend = emcee.backends.HDFBackend(str(path), name=group)
    backend.reset(N_WALKERS, len(NAMES))
    sampler = emcee.EnsembleSampler(N_WALKERS, len(NAMES), _log_prob, backend=backend)
    sampler.random_state = np.random.RandomState(seed).get_state()
    start = CENTRE + SCALE * np.random.default_rng(seed).normal(size=(N_WALKERS, len(NAMES)))
    sampler.run_mcmc(start, N_STEPS, progress=False)
    return backend


@pytest.fixture
def emcee_file(tmp_path):
    path = tmp_path / "okapi_fit.h5"
    return path, _run(path)


@pytest.mark.parametrize(
    ("burn_in", "discard", "thin"), [(0, 0, 1), (10, 10, 3), (0.25, 10, 4), (5, 5, 1)]
)
def test_matches_what_emcee_itself_returns(emcee_file, burn_in, discard, thin):
    path, backend = emcee_file
    samples = read_chains(path, ReadOptions(names=NAMES, burn_in=burn_in, thin=thin))
    # reference: emcee's own accessors with the same discard/thin (0.25 of 40 steps = 10)
    expected = backend.get_chain(discard=discard, thin=thin, flat=True)
    assert_array_equal(samples.parameters["H0"], expected[:, 0])
    assert_array_equal(samples.parameters["Omega_m"], expected[:, 1])
    assert_array_equal(samples.parameters["w0"], expected[:, 2])
    assert_array_equal(
        samples.log_posterior, backend.get_log_prob(discard=discard, thin=thin, flat=True)
    )
    n_kept_steps = len(backend.get_chain(discard=discard, thin=thin))
    assert_array_equal(samples.chain_id, np.tile(np.arange(N_WALKERS), n_kept_steps))
    assert samples.n_chains == N_WALKERS
    assert_array_equal(samples.weights, 1.0)


@pytest.mark.parametrize("chunk_rows", [1, 8, 20, 1000])
def test_streaming_by_steps_equals_whole_read(emcee_file, chunk_rows):
    path, _ = emcee_file
    options = ReadOptions(names=NAMES, burn_in=0.3, thin=2)
    chunks = list(iter_chain_chunks(path, options, chunk_rows=chunk_rows))
    whole = read_chains(path, options)
    merged = concatenate(chunks)
    assert_array_equal(merged.parameters.to_numpy(), whole.parameters.to_numpy())
    assert_array_equal(merged.log_posterior, whole.log_posterior)
    assert_array_equal(merged.chain_id, whole.chain_id)


def test_two_runs_give_separate_walker_chain_ids(tmp_path):
    _run(tmp_path / "a.h5", seed=1)
    _run(tmp_path / "b.h5", seed=2)
    samples = read_chains(str(tmp_path / "*.h5"), ReadOptions(names=NAMES))
    assert_array_equal(np.unique(samples.chain_id), np.arange(2 * N_WALKERS))


def test_names_from_a_group_attribute_and_a_named_group(tmp_path):
    path = tmp_path / "named.h5"
    backend = _run(path, group="lantern")
    with h5py.File(path, "a") as handle:
        handle["lantern"].attrs["names"] = list(NAMES)
    samples = read_chains(path, ReadOptions(layout="emcee"))
    assert_array_equal(samples.parameters["H0"], backend.get_chain(flat=True)[:, 0])


def test_missing_names_say_what_to_do(emcee_file):
    path, _ = emcee_file
    with pytest.raises(ChainFormatError, match="store no parameter names.*--names"):
        read_chains(path)
    with pytest.raises(ChainFormatError, match="2 names for 3 parameters"):
        read_chains(path, ReadOptions(names=("H0", "Omega_m")))


def test_layout_emcee_on_a_plain_dataset_is_refused(tmp_path):
    path = tmp_path / "plain.h5"
    with h5py.File(path, "w") as handle:
        handle.create_dataset("samples", data=np.ones((3, 2))).attrs["names"] = ["H0", "Omega_m"]
    with pytest.raises(ChainFormatError, match="not an emcee backend group"):
        read_chains(path, ReadOptions(layout="emcee"))
