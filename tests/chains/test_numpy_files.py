""".npy and .npz chains: names, several arrays, and pickles refused."""

import hashlib

import numpy as np
import pytest
from numpy.testing import assert_array_equal

from agepost.chains.options import ReadOptions
from agepost.chains.reader import read_chains
from agepost.errors import ChainFormatError

VALUES = np.array([[70.0, 0.30], [68.0, 0.31], [66.0, 0.32]])


def _digest(path):
    return hashlib.sha256(path.read_bytes()).hexdigest()


def test_pickle_inside_npy_is_refused_and_file_untouched(tmp_path):
    path = tmp_path / "objects.npy"
    np.save(path, np.array([{"H0": 70.0}, 0.3], dtype=object), allow_pickle=True)
    before = _digest(path)
    with pytest.raises(
        ChainFormatError, match="Python objects.*refused for safety.*allow_pickle=False"
    ):
        read_chains(path, ReadOptions(names=("H0",)))
    assert _digest(path) == before


def test_pickle_inside_npz_is_refused(tmp_path):
    path = tmp_path / "objects.npz"
    np.savez(path, samples=np.array([[{"a": 1}]], dtype=object))
    with pytest.raises(ChainFormatError, match="an array in the archive holds Python objects"):
        read_chains(path)


def test_plain_npy_needs_names(tmp_path):
    path = tmp_path / "plain.npy"
    np.save(path, VALUES)
    with pytest.raises(ChainFormatError, match="carries no column names.*--names"):
        read_chains(path)
    samples = read_chains(path, ReadOptions(names=("H0", "Omega_m")))
    assert_array_equal(samples.parameters["Omega_m"], VALUES[:, 1])


def test_npz_with_several_tables_needs_dataset(tmp_path):
    path = tmp_path / "two.npz"
    np.savez(path, first=VALUES, second=VALUES[::-1], names=np.array(["H0", "Omega_m"]))
    with pytest.raises(ChainFormatError, match=r"several arrays \(first, second\).*--dataset"):
        read_chains(path)
    samples = read_chains(path, ReadOptions(dataset="second"))
    assert_array_equal(samples.parameters["H0"], VALUES[::-1, 0])


def test_one_dimensional_npy_is_refused(tmp_path):
    path = tmp_path / "flat.npy"
    np.save(path, VALUES[:, 0])
    with pytest.raises(ChainFormatError, match=r"shape \(3,\).*2-D"):
        read_chains(path, ReadOptions(names=("H0",)))


def test_truncated_npy_and_npz(tmp_path):
    npy = tmp_path / "cut.npy"
    np.save(npy, np.ones((1000, 2)))
    npy.write_bytes(npy.read_bytes()[:3000])
    with pytest.raises(ChainFormatError, match="not a readable .npy file"):
        read_chains(npy, ReadOptions(names=("H0", "Omega_m")))
    npz = tmp_path / "cut.npz"
    np.savez(npz, samples=np.ones((1000, 2)))
    npz.write_bytes(npz.read_bytes()[:3000])
    with pytest.raises(ChainFormatError, match="not a readable .npz archive"):
        read_chains(npz, ReadOptions(names=("H0", "Omega_m")))
