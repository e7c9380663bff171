"""HDF5 chains: choosing the dataset, names, orientation, and damaged files."""

import hashlib

import h5py
import numpy as np
import pytest
from numpy.testing import assert_array_equal

from agepost.chains.options import ReadOptions
from agepost.chains.reader import read_chains
from agepost.errors import ChainFormatError

VALUES = np.array([[70.0, 0.30], [68.0, 0.31], [66.0, 0.32]])


def _digest(path):
    return hashlib.sha256(path.read_bytes()).hexdigest()


def test_transposed_dataset_is_read_by_its_names(tmp_path):
    path = tmp_path / "t.h5"
    with h5py.File(path, "w") as handle:
        handle.create_dataset("chain", data=VALUES.T).attrs["columns"] = ["H0", "Omega_m"]
    samples = read_chains(path)
    assert_array_equal(samples.parameters["H0"], VALUES[:, 0])


def test_names_option_overrides_and_dataset_option_chooses(tmp_path):
    path = tmp_path / "two.h5"
    with h5py.File(path, "w") as handle:
        handle.create_dataset("a", data=VALUES)
        handle.create_dataset("b", data=VALUES[::-1])
    with pytest.raises(ChainFormatError, match=r"several possible chains \(a, b\).*--dataset"):
        read_chains(path, ReadOptions(names=("H0", "Omega_m")))
    samples = read_chains(path, ReadOptions(names=("H0", "Omega_m"), dataset="b"))
    assert_array_equal(samples.parameters["H0"], VALUES[::-1, 0])
    with pytest.raises(ChainFormatError, match="no dataset or group 'c'; the file has a, b"):
        read_chains(path, ReadOptions(names=("H0", "Omega_m"), dataset="c"))


BAD = {
    "no names": (lambda h: h.create_dataset("x", data=VALUES), "no names attribute.*--names"),
    "wrong name count": (
        lambda h: h.create_dataset("x", data=VALUES).attrs.create(
            "names", ["H0", "Omega_m", "w", "wa"]
        ),
        "4 column names for a dataset of shape",
    ),
    "ragged group": (
        lambda h: (
            h.create_dataset("g/H0", data=[70.0, 71.0]),
            h.create_dataset("g/Omega_m", data=[0.3]),
        ),
        "different lengths",
    ),
    "empty dataset": (
        lambda h: h.create_dataset("x", shape=(0, 2), dtype=float).attrs.create(
            "names", ["H0", "Omega_m"]
        ),
        "has no rows",
    ),
    "nothing usable": (lambda h: h.create_dataset("x", data=np.ones((2, 2, 2))), "no 2-D dataset"),
    "text dataset": (
        lambda h: h.create_dataset("x", data=np.array([[b"a", b"b"]])).attrs.create(
            "names", ["H0", "Omega_m"]
        ),
        "cannot be read as numbers",
    ),
}


@pytest.mark.parametrize("case", list(BAD))
def test_bad_hdf5_content(tmp_path, case):
    build, pattern = BAD[case]
    path = tmp_path / "bad.h5"
    with h5py.File(path, "w") as handle:
        build(handle)
    before = _digest(path)
    with pytest.raises(ChainFormatError, match=pattern) as info:
        read_chains(path)
    assert str(path) in str(info.value)
    assert _digest(path) == before


def test_truncated_and_corrupt_files(tmp_path):
    good = tmp_path / "good.h5"
    with h5py.File(good, "w") as handle:
        handle.create_dataset("x", data=np.ones((5000, 2))).attrs["names"] = ["H0", "Omega_m"]
    data = good.read_bytes()
    truncated = tmp_path / "truncated.h5"
    truncated.write_bytes(data[: len(data) // 2])
    corrupt = tmp_path / "corrupt.h5"
    corrupt.write_bytes(data[:8] + bytes(range(256)) * 20)
    for path in (truncated, corrupt):
        before = _digest(path)
        with pytest.raises(ChainFormatError, match="truncated or corrupt") as info:
            read_chains(path)
        assert str(path) in str(info.value)
        assert _digest(path) == before
