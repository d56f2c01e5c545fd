"""Whole-column helpers of canon agree with pandas (a general-purpose reference library).

"One value per key" is what ``groupby([...]).nunique() <= 1`` says; key codes are equal exactly
where the (account, instrument) pairs are equal, as ``groupby(...).ngroup()`` numbers them.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pyarrow as pa
from hypothesis import given
from hypothesis import strategies as st

from reconcile.core import vectorised

NAMES = st.sampled_from(["A", "B", "C", "ACC-7", "Z" * 12])
ROWS = st.lists(st.tuples(NAMES, NAMES, st.sampled_from(["USD", "EUR", "JPY"])), max_size=40)


def _frame(rows: list[tuple[str, str, str]]) -> pd.DataFrame:
    return pd.DataFrame(rows, columns=["account", "instrument", "currency"], dtype=object)


@given(ROWS)
def test_key_codes_equal_where_the_pairs_are_equal(rows: list[tuple[str, str, str]]) -> None:
    frame = _frame(rows)
    codes = vectorised.key_codes(pa.array(frame["account"]), pa.array(frame["instrument"]))
    groups = frame.groupby(["account", "instrument"], sort=False).ngroup().to_numpy()
    assert np.array_equal(codes[:, None] == codes[None, :], groups[:, None] == groups[None, :])


@given(ROWS)
def test_one_value_per_key_is_what_pandas_nunique_says(rows: list[tuple[str, str, str]]) -> None:
    frame = _frame(rows)
    keys = vectorised.key_codes(pa.array(frame["account"]), pa.array(frame["instrument"]))
    expected = bool((frame.groupby(["account", "instrument"])["currency"].nunique() <= 1).all())
    values = pa.array(frame["currency"], pa.string())
    assert vectorised.one_value_per_key(keys, values) is expected
    assert vectorised.one_value_per_key(keys, values, vectorised.codes(values)) is expected


def test_sparse_pair_codes_are_made_dense() -> None:
    # Two rows of a possible 10^6 x 10^6 pairs: the codes index an array of two, not 10^12.
    accounts, instruments = np.array([0, 999_999]), np.array([999_999, 0])
    assert sorted(vectorised.pair_codes(accounts, instruments).tolist()) == [0, 1]


def test_pair_codes_of_32_bit_codes_do_not_wrap() -> None:
    # With 65,536 instrument codes, account 65,536 x 65,536 is 2^32: formed in 32 bits the
    # pair (65536, 0) would wrap onto (0, 0).
    accounts = np.array([0, 65_536, 0], np.int32)
    instruments = np.array([0, 0, 65_535], np.int32)
    assert len(set(vectorised.pair_codes(accounts, instruments).tolist())) == 3
    codes = vectorised.codes(pa.array(["USD", "EUR", "USD"]))
    assert codes is not None
    assert codes.tolist() == [0, 1, 0]


def test_codes_of_a_column_with_a_missing_value_are_none() -> None:
    assert vectorised.codes(pa.array(["USD", None])) is None


@given(st.integers(min_value=0, max_value=2_000))
def test_blank_text_is_what_arrow_repeats(length: int) -> None:
    blank = vectorised.blank_text(length)
    blank.validate(full=True)
    assert blank.cast(pa.string()).equals(pa.repeat(pa.scalar("", pa.string()), length))
    series = vectorised.string_series(blank)
    assert str(series.dtype) == "str"
    assert series.tolist() == [""] * length
