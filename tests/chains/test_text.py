"""Text chains through read_chains: layouts, weights, chain ids, burn-in and bad input."""

import gzip
import hashlib
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from numpy.testing import assert_allclose, assert_array_equal

from agepost.chains.checks import ChainWarning
from agepost.chains.options import ReadOptions
from agepost.chains.reader import iter_chain_chunks, read_chains, recognition_table
from agepost.errors import ChainFormatError

ROWS = np.array(
    [
        [1.0, 67.5, 0.31, -1.0],
        [3.0, 68.1, 0.30, -0.9],
        [2.0, 66.9, 0.32, -1.1],
        [1.0, 67.0, 0.315, -0.95],
    ]
)
NAMES = ["weight", "H0", "Omega_m", "w"]


def _write(path: Path, text: str) -> Path:
    path.write_text(text)
    return path


def _body(separator: str = " ") -> str:
    return "".join(separator.join(repr(float(v)) for v in row) + "\n" for row in ROWS)


def _digest(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def _check_expected(samples):
    assert_allclose(samples.parameters["H0"], ROWS[:, 1], rtol=0)
    assert_allclose(samples.parameters["Omega_m"], ROWS[:, 2], rtol=0)
    assert_allclose(samples.parameters["w0"], ROWS[:, 3], rtol=0)
    assert_allclose(samples.weights, ROWS[:, 0], rtol=0)
    assert_array_equal(samples.chain_id, 0)


@pytest.mark.parametrize("separator", [" ", ",", "\t", "   "])
def test_header_row_any_separator(tmp_path, separator):
    path = _write(tmp_path / "c.txt", separator.join(NAMES) + "\n" + _body(separator))
    _check_expected(read_chains(path))


def test_commented_header_and_comment_lines(tmp_path):
    path = _write(
        tmp_path / "c.txt", "# Lantern Deep Field run 3\n# " + " ".join(NAMES) + "\n" + _body()
    )
    _check_expected(read_chains(path))


def test_no_header_names_from_options_or_sidecar(tmp_path):
    path = _write(tmp_path / "c.txt", _body())
    _check_expected(read_chains(path, ReadOptions(names=tuple(NAMES))))
    sidecar = _write(tmp_path / "c.names", "".join(f"{n}   description of {n}\n" for n in NAMES))
    _check_expected(read_chains(path, ReadOptions(names_file=sidecar)))


def test_no_header_and_no_names_says_which_option(tmp_path):
    path = _write(tmp_path / "c.txt", _body())
    with pytest.raises(ChainFormatError, match="no column names.*names"):
        read_chains(path)


def test_gzip_text(tmp_path):
    path = tmp_path / "c.txt.gz"
    path.write_bytes(gzip.compress((",".join(NAMES) + "\n" + _body(",")).encode()))
    _check_expected(read_chains(path))


def test_several_files_are_chain_ids_list_and_glob(tmp_path):
    for i in range(3):
        _write(tmp_path / f"run_{i}.txt", " ".join(NAMES) + "\n" + _body())
    samples = read_chains(str(tmp_path / "run_*.txt"))
    assert_array_equal(samples.chain_id, np.repeat([0, 1, 2], len(ROWS)))
    listed = read_chains([tmp_path / "run_0.txt", tmp_path / "run_2.txt"])
    assert listed.n_chains == 2 and listed.n_samples == 2 * len(ROWS)


def test_burn_in_fraction_count_and_thin(tmp_path):
    n = 20
    frame = pd.DataFrame({"H0": 60.0 + np.arange(n), "Omega_m": np.full(n, 0.3)})
    path = tmp_path / "c.csv"
    frame.to_csv(path, index=False)
    # fraction 0.25 of 20 rows = 5 rows dropped, then every 3rd: rows 5, 8, 11, 14, 17
    samples = read_chains(path, ReadOptions(burn_in=0.25, thin=3))
    assert_allclose(samples.parameters["H0"], 60.0 + np.array([5, 8, 11, 14, 17]))
    samples = read_chains(path, ReadOptions(burn_in=18))
    assert_allclose(samples.parameters["H0"], [78.0, 79.0])
    with pytest.raises(ChainFormatError, match="leave no rows"):
        read_chains(path, ReadOptions(burn_in=20))


@pytest.mark.parametrize("chunk_rows", [1, 3, 7, 1000])
def test_chunks_concatenate_to_the_whole_read(tmp_path, chunk_rows):
    n = 23
    frame = pd.DataFrame(
        {"H0": 60.0 + np.arange(n), "Omega_m": np.full(n, 0.3), "weight": np.arange(n) % 3 + 1}
    )
    path = tmp_path / "c.csv"
    frame.to_csv(path, index=False)
    options = ReadOptions(burn_in=0.3, thin=2)
    whole = read_chains(path, options)
    chunks = list(iter_chain_chunks(path, options, chunk_rows=chunk_rows))
    assert all(c.n_samples <= chunk_rows for c in chunks)
    assert_allclose(
        np.concatenate([c.parameters["H0"] for c in chunks]), whole.parameters["H0"], rtol=0
    )
    assert_allclose(np.concatenate([c.weights for c in chunks]), whole.weights, rtol=0)


def test_recognition_table_for_the_cli(tmp_path):
    path = _write(tmp_path / "c.txt", "weight h omega_m\n1 0.7 0.147\n")
    table = dict(recognition_table(path))
    assert table["H0"] == "100 * column h"
    assert table["Omega_m"] == "(omega_m) / (H0/100)^2"
    assert table["weight"] == "column weight"
    assert table["Omega_k"] == "absent: model default"


def test_log_posterior_column_negated_when_minus(tmp_path):
    path = _write(tmp_path / "c.txt", "weight mlp H0 Omega_m\n2 10.5 70 0.3\n1 11.0 69 0.31\n")
    samples = read_chains(path, ReadOptions(log_posterior_column="mlp"))
    assert_allclose(samples.log_posterior, [-10.5, -11.0])
    samples = read_chains(
        path, ReadOptions(log_posterior_column="mlp", log_posterior_kind="log_likelihood")
    )
    assert_allclose(samples.log_posterior, [10.5, 11.0])


# --- bad input: one clear message, input untouched -----------------------------------


BAD_TEXT = [
    ("", "empty"),
    ("H0 Omega_m\n", "no data rows"),
    ("H0 Omega_m\n70 0.3\n71 0.3 5\n", "line 3 has 3 fields"),
    ("H0 Omega_m\n70 0.3\n71\n", "line 3 has 1 fields"),
    ("H0,Omega_m\n70,0.3\n71,\n", "line 3, column 'Omega_m' is empty"),
    ("H0 Omega_m\n70 0.3\n71 abc\n", "line 3, column 'Omega_m' holds 'abc'"),
    ("H0 H0 Omega_m\n70 70 0.3\n", "'H0' appears twice"),
    ("HO Omega_m\n70 0.3\n", "no column gives H0.*did you mean 'HO'"),
    ("weight H0 Omega_m\n1 70 0.3\n-2 70 0.3\n", "negative value.*data row 2"),
    ("weight H0 Omega_m\n0 70 0.3\n0 70 0.3\n", "every kept weight is zero"),
    ("weight H0 Omega_m\nnan 70 0.3\n", "weight column 'weight' has 1 NaN"),
    ("H0 Omega_m\n70 31.1\n", "outside the physical range"),
]


@pytest.mark.parametrize(("text", "pattern"), BAD_TEXT)
def test_bad_text_gives_one_clear_message(tmp_path, text, pattern):
    path = _write(tmp_path / "bad.txt", text)
    before = _digest(path)
    with pytest.raises(ChainFormatError, match=pattern) as info:
        read_chains(path)
    assert str(path) in str(info.value)
    assert "\n" not in str(info.value)
    assert _digest(path) == before


def test_misspelled_weight_column_suggests_nearest(tmp_path):
    path = _write(tmp_path / "c.txt", "weigth H0 Omega_m\n1 70 0.3\n")
    with pytest.raises(ChainFormatError, match="weight_column = 'weight'.*did you mean 'weigth'"):
        read_chains(path, ReadOptions(weight_column="weight"))


def test_nan_parameters_kept_and_counted_or_refused(tmp_path):
    path = _write(tmp_path / "c.txt", "H0 Omega_m\n70 0.3\n71 nan\n72 inf\n")
    samples = read_chains(path)
    assert samples.n_samples == 3
    assert np.isnan(samples.parameters["Omega_m"][1]) and np.isinf(samples.parameters["Omega_m"][2])
    assert any(
        note.startswith("Omega_m: 2 NaN or infinite value(s), first at data row 2")
        for note in samples.notes
    )
    with pytest.raises(ChainFormatError, match="Omega_m has 2 NaN.*data row 2.*nan_policy"):
        read_chains(path, ReadOptions(nan_policy="raise"))


def test_missing_file_and_empty_glob(tmp_path):
    with pytest.raises(ChainFormatError, match="no such chain file"):
        read_chains(tmp_path / "absent.txt")
    with pytest.raises(ChainFormatError, match="matches no file"):
        read_chains(str(tmp_path / "*.txt"))


def test_convention_warning_once_per_file_when_streaming(tmp_path):
    path = _write(tmp_path / "c.txt", "H0 Omega_m\n" + "0.70 0.3\n" * 10)
    with pytest.warns(ChainWarning) as record:
        chunks = list(iter_chain_chunks(path, chunk_rows=2))
    assert len(chunks) == 5
    assert len([w for w in record if issubclass(w.category, ChainWarning)]) == 1


def test_log_weights_are_exponentiated_relative_to_their_maximum(tmp_path):
    path = _write(tmp_path / "c.txt", "lw H0 Omega_m\n0.0 70 0.3\n-0.6931471805599453 71 0.3\n")
    samples = read_chains(path, ReadOptions(log_weight_column="lw"))
    # hand calculation: exp(0 - 0) = 1, exp(-ln 2 - 0) = 0.5
    assert_allclose(samples.weights, [1.0, 0.5], rtol=1e-15)


def test_names_option_overrides_a_header_row(tmp_path):
    path = _write(tmp_path / "c.txt", "a b c d\n" + _body())
    _check_expected(read_chains(path, ReadOptions(names=tuple(NAMES))))
    with pytest.raises(ChainFormatError, match="gives 3 names but line 2 has 4 fields"):
        read_chains(path, ReadOptions(names=("weight", "H0", "Omega_m")))
