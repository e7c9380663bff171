"""Loading distance tables and covariance files; every bad input names its file and row."""

from __future__ import annotations

import numpy as np
import pytest

from agepost.errors import InputError
from agepost.fit.data import check_covariance, load_covariance, load_distance_data


def write(path, text):
    path.write_text(text, encoding="utf-8")
    return path


def test_csv_and_whitespace_tables_read_alike_in_file_order(tmp_path):
    csv = write(
        tmp_path / "a.csv",
        "# comment\nz,mu,mu_err\n0.5,42.1,0.1\n0.1,38.2,0.2\n0.5,42.0,0.1  # dup\n",
    )
    txt = write(tmp_path / "a.txt", "z mu mu_err\n\n0.5 42.1 0.1\n0.1 38.2 0.2\n0.5 42.0 0.1\n")
    a = load_distance_data(csv, kind="distance_modulus")
    b = load_distance_data(txt, kind="distance_modulus")
    # unsorted and duplicate redshifts are kept as given (row order = covariance order)
    np.testing.assert_array_equal(a.redshifts, [0.5, 0.1, 0.5])
    np.testing.assert_array_equal(a.values, b.values)
    np.testing.assert_allclose(
        a.covariance, np.diag([0.01, 0.04, 0.01]), rtol=1e-15
    )  # err**2, rounding only
    assert set(a.checksums) == {str(csv)}


def test_columns_can_be_renamed(tmp_path):
    path = write(tmp_path / "h.csv", "redshift,hz,sigma\n0.3,75,5\n")
    data = load_distance_data(
        path, kind="expansion_rate", columns={"z": "redshift", "value": "hz", "error": "sigma"}
    )
    assert data.values.tolist() == [75.0] and data.covariance.tolist() == [[25.0]]


def test_ratio_rows_carry_their_quantity(tmp_path):
    path = write(
        tmp_path / "r.csv", "z,quantity,ratio,ratio_err\n0.5,DM,13.0,0.2\n0.5,DH,20.0,0.5\n"
    )
    data = load_distance_data(path, kind="sound_horizon_ratio")
    assert data.quantities == ("DM", "DH")


def test_bad_ratio_quantity_names_the_line(tmp_path):
    path = write(tmp_path / "r.csv", "z,quantity,ratio,ratio_err\n0.5,DA,13.0,0.2\n")
    with pytest.raises(
        InputError, match=r"r.csv line 2: column 'quantity' holds 'DA'; use one of DM, DV, DH"
    ):
        load_distance_data(path, kind="sound_horizon_ratio")


def test_negative_error_is_refused_with_file_and_line(tmp_path):
    path = write(tmp_path / "mu.csv", "z,mu,mu_err\n0.1,38,0.1\n# note\n0.2,39,-0.1\n")
    with pytest.raises(InputError, match=r"mu.csv line 4: column 'mu_err' holds -0.1.*must be > 0"):
        load_distance_data(path, kind="distance_modulus")


@pytest.mark.parametrize(
    ("text", "pattern"),
    [
        ("", "the file is empty"),
        ("z,mu,mu_err\n", "no data rows below the header"),
        ("z,mu\n0.1,38\n", r"column 'mu_err' not found in the header \(columns: z, mu\)"),
        ("z,mu,mu_err\n0.1,abc,0.1\n", r"line 2: column 'mu' holds 'abc', not a number"),
        ("z,mu,mu_err\n0.1,nan,0.1\n", r"line 2: column 'mu' holds nan"),
        ("z,mu,mu_err\n0.0,38,0.1\n", r"line 2: column 'z' holds 0.0.*must be > 0"),
        ("z,mu,mu_err\n0.1,38\n", r"line 2: 2 fields but the header names 3 columns"),
    ],
)
def test_bad_tables_get_one_clear_message(tmp_path, text, pattern):
    path = write(tmp_path / "bad.csv", text)
    with pytest.raises(InputError, match=pattern):
        load_distance_data(path, kind="distance_modulus")


def test_missing_file_and_unknown_kind(tmp_path):
    with pytest.raises(InputError, match="file not found"):
        load_distance_data(tmp_path / "nope.csv", kind="distance_modulus")
    with pytest.raises(InputError, match="data kind 'distances' is unknown"):
        load_distance_data(tmp_path / "nope.csv", kind="distances")


def test_expansion_rate_may_sit_at_z0_but_must_be_positive(tmp_path):
    ok = write(tmp_path / "h.csv", "z,H,H_err\n0,70,2\n")
    assert load_distance_data(ok, kind="expansion_rate").redshifts.tolist() == [0.0]
    bad = write(tmp_path / "h2.csv", "z,H,H_err\n0.5,-70,2\n")
    with pytest.raises(InputError, match=r"column 'H' holds -70.0"):
        load_distance_data(bad, kind="expansion_rate")


def test_full_covariance_replaces_or_adds_to_the_errors(tmp_path):
    table = write(tmp_path / "mu.csv", "z,mu,mu_err\n0.1,38,0.1\n0.2,39,0.2\n")
    cov = write(tmp_path / "cov.txt", "2\n0.02 0.01\n0.01 0.05\n")  # leading size accepted
    full = load_distance_data(table, kind="distance_modulus", covariance_path=cov)
    np.testing.assert_array_equal(full.covariance, [[0.02, 0.01], [0.01, 0.05]])
    added = load_distance_data(
        table, kind="distance_modulus", covariance_path=cov, covariance_includes_errors=False
    )
    np.testing.assert_allclose(added.covariance, [[0.03, 0.01], [0.01, 0.09]], rtol=1e-15)
    assert set(added.checksums) == {str(table), str(cov)}


def test_covariance_from_npy_without_pickles(tmp_path):
    path = tmp_path / "cov.npy"
    np.save(path, np.array([[2.0, 0.5], [0.5, 1.0]]))
    np.testing.assert_array_equal(load_covariance(path, 2), [[2.0, 0.5], [0.5, 1.0]])
    objects = tmp_path / "obj.npy"
    np.save(objects, np.array([{"a": 1}], dtype=object), allow_pickle=True)
    with pytest.raises(InputError, match="cannot read the covariance"):
        load_covariance(objects, 1)


@pytest.mark.parametrize(
    ("text", "pattern"),
    [
        (
            "1 0\n0 1\n0 0\n",
            r"covariance holds 6 numbers but table.csv has 2 rows; give a 2 x 2 matrix",
        ),
        ("1 0 0\n0 1 0\n0 0 1\n", r"covariance holds 3 x 3 but table.csv has 2 rows"),
        ("1 0.5\n0.4 1\n", r"not symmetric: entry \(1, 2\) = 0.5 but \(2, 1\) = 0.4"),
        ("1 2\n2 1\n", r"not positive definite \(Cholesky factorisation fails at row 2\)"),
        ("-1 0\n0 1\n", r"not positive definite \(Cholesky factorisation fails at row 1\)"),
        ("1 nan\nnan 1\n", r"entry \(1, 2\) is not a finite number"),
        ("1 x\n0 1\n", r"line 1: column 'covariance' holds 'x'"),
    ],
)
def test_covariance_validation_errors(tmp_path, text, pattern):
    path = write(tmp_path / "cov.txt", text)
    with pytest.raises(InputError, match=pattern):
        load_covariance(path, 2, table_path="table.csv")


def test_singular_systematics_pass_once_the_errors_are_added(tmp_path):
    table = write(tmp_path / "mu.csv", "z,mu,mu_err\n0.1,38,0.1\n0.2,39,0.2\n")
    rank_one = write(tmp_path / "sys.txt", "0.01 0.01\n0.01 0.01\n")  # semi-definite alone
    with pytest.raises(InputError, match="not positive definite"):
        load_distance_data(table, kind="distance_modulus", covariance_path=rank_one)
    data = load_distance_data(
        table, kind="distance_modulus", covariance_path=rank_one, covariance_includes_errors=False
    )
    check_covariance(data.covariance, source="sum")  # does not raise
