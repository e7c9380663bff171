"""read_chains across layouts: one posterior, every layout, identical SampleSets."""

import hashlib

import numpy as np
import pandas as pd
import pytest
from numpy.testing import assert_array_equal

from agepost.chains.options import ReadOptions
from agepost.chains.reader import concatenate, iter_chain_chunks, read_chains
from agepost.errors import ChainFormatError


def _assert_same(a, b):
    pd.testing.assert_frame_equal(a.parameters, b.parameters, check_exact=True)
    assert_array_equal(a.weights, b.weights)
    assert_array_equal(a.chain_id, b.chain_id)
    assert_array_equal(a.log_posterior, b.log_posterior)
    assert a.fixed == b.fixed


def test_every_layout_gives_the_identical_sampleset(posterior, layouts):
    frame = posterior
    digests = {name: hashlib.sha256(p.read_bytes()).hexdigest() for name, (p, _) in layouts.items()}
    reference = read_chains(layouts["csv header row"][0])
    # the values written are the values read, to the last bit (repr round-trips floats)
    assert_array_equal(reference.parameters["H0"], frame["H0"])
    assert_array_equal(reference.parameters["w0"], frame["w"])
    assert_array_equal(reference.weights, frame["weight"])
    assert_array_equal(reference.log_posterior, -frame["minus_log_posterior"])
    for name, (path, keywords) in layouts.items():
        samples = read_chains(path, ReadOptions(**keywords))
        try:
            _assert_same(samples, reference)
        except AssertionError as error:
            raise AssertionError(f"layout {name!r} differs: {error}") from None
    for name, (path, _) in layouts.items():
        assert hashlib.sha256(path.read_bytes()).hexdigest() == digests[name], name


@pytest.mark.parametrize("chunk_rows", [7, 64, 299, 300, 10_000])
def test_every_layout_streams_to_the_same_rows(layouts, chunk_rows):
    for name, (path, keywords) in layouts.items():
        options = ReadOptions(burn_in=0.2, thin=3, **keywords)
        whole = read_chains(path, options)
        chunks = list(iter_chain_chunks(path, options, chunk_rows=chunk_rows))
        assert all(c.n_samples <= chunk_rows for c in chunks), name
        _assert_same(concatenate(chunks), whole)


def test_files_of_mixed_layouts_are_separate_chains(layouts):
    paths = [
        layouts["csv header row"][0],
        layouts["hdf5 2-D dataset"][0],
        layouts["npz 2-D with names"][0],
    ]
    samples = read_chains(paths)
    assert_array_equal(np.unique(samples.chain_id), [0, 1, 2])
    assert samples.n_samples == 3 * 300


def test_files_with_different_parameters_are_refused(tmp_path):
    first = tmp_path / "a.txt"
    first.write_text("H0 Omega_m\n70 0.3\n")
    second = tmp_path / "b.txt"
    second.write_text("H0 Omega_m w\n70 0.3 -1\n")
    with pytest.raises(ChainFormatError, match="must carry the same parameters"):
        read_chains([first, second])


def test_chunk_rows_must_be_positive(tmp_path):
    with pytest.raises(ChainFormatError, match="chunk_rows"):
        next(iter_chain_chunks(tmp_path / "x", chunk_rows=0))
