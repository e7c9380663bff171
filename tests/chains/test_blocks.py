"""Burn-in and thinning by step number, and sidecar names files."""

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from numpy.testing import assert_array_equal

from agepost.chains.blocks import RawBlock, burn_and_thin, read_names_file
from agepost.errors import ChainFormatError


def _block(first: int, last: int) -> RawBlock:
    steps = np.arange(first, last)
    return RawBlock(
        columns={"x": steps.astype(float)}, step=steps, walker=None, row=steps, source="t"
    )


@given(
    n=st.integers(0, 200),
    burn=st.integers(0, 250),
    thin=st.integers(1, 12),
    chunk=st.integers(1, 60),
    last_of_each=st.booleans(),
)
def test_chunked_burn_and_thin_equals_slicing_the_whole_chain(n, burn, thin, chunk, last_of_each):
    # law: cutting the chain into blocks changes nothing; reference is plain slicing,
    # x[burn::thin] or, in emcee's get_chain convention, x[burn + thin - 1::thin]
    start = burn + (thin - 1 if last_of_each else 0)
    expected = np.arange(n)[start::thin]
    kept = [
        burn_and_thin(_block(a, min(a + chunk, n)), burn=burn, thin=thin, last_of_each=last_of_each)
        for a in range(0, n, chunk)
    ]
    got = np.concatenate([b.columns["x"] for b in kept]) if kept else np.array([])
    assert_array_equal(got, expected)


def test_names_file_first_token_comments_and_blanks(tmp_path):
    path = tmp_path / "c.names"
    path.write_text(
        "# columns of the Lantern Deep Field chain\n"
        "weight\n\nH0   Hubble constant\nOmega_m*  matter\n"
    )
    assert read_names_file(path) == ("weight", "H0", "Omega_m*")


def test_names_file_missing_or_empty(tmp_path):
    with pytest.raises(ChainFormatError, match="cannot be read.*check the path"):
        read_names_file(tmp_path / "absent.names")
    empty = tmp_path / "empty.names"
    empty.write_text("# nothing\n")
    with pytest.raises(ChainFormatError, match="holds no names"):
        read_names_file(empty)
