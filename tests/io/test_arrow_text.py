"""Whole-column text equals the per-value formatters character for character (hypothesis).

The per-value functions are the definition: ``decimal_text`` (our exact-decimal rule, derived),
``pd.Timestamp.isoformat`` and ``pd.Timedelta.isoformat`` (pandas, a general-purpose reference
library; the forms are ISO 8601 date-times and durations).
"""

from __future__ import annotations

from decimal import Decimal

import numpy as np
import pandas as pd
import pyarrow as pa
from hypothesis import given
from hypothesis import strategies as st

from reconcile.core.frames import decimal_array
from reconcile.io.writers import arrow_text
from reconcile.io.writers.tables import _one_decimal, decimal_text, text_table
from reconcile.money import minor_unit

CODES = ["USD", "JPY", "BHD", "CLF"]
NS_RANGE = st.integers(-(2**62), 2**62)


@given(
    st.lists(
        st.tuples(
            st.one_of(
                [
                    st.decimals(allow_nan=False, allow_infinity=False, places=p)
                    for p in (0, 2, 3, 5, 10, 12)
                ]
            )
            | st.decimals(min_value=-1, max_value=1, allow_nan=False, allow_infinity=False)
            | st.none(),  # a missing amount in a money column (fee tables have them)
            st.sampled_from(CODES),
        ),
        max_size=30,
    )
)
def test_decimal_column_text_equals_decimal_text(rows: list[tuple[Decimal | None, str]]) -> None:
    values = [v for v, _ in rows]
    if any(v is not None and len(v.as_tuple().digits) > 30 for v in values):
        return
    array = decimal_array(values)
    places = np.array([minor_unit(c) or 0 for _, c in rows], dtype=np.int64)
    got = arrow_text.decimal_texts(array, places, _one_decimal).to_pylist()
    assert got == [decimal_text(v, c) for v, c in rows]


def test_tiny_values_that_arrow_writes_with_an_exponent() -> None:
    values = [Decimal("0.0000000123"), Decimal("-0.0000001"), Decimal("5")]
    array = decimal_array(values)
    got = arrow_text.decimal_texts(array, np.array([2, 2, 2]), _one_decimal).to_pylist()
    assert got == [decimal_text(v, "USD") for v in values] == ["0.0000000123", "-0.0000001", "5.00"]


@given(st.lists(st.integers(-(2**62), 2**62), max_size=30))
def test_time_column_text_equals_timestamp_isoformat(stamps: list[int]) -> None:
    series = pd.Series(pd.to_datetime(stamps, unit="ns", utc=True))
    got = text_table(pd.DataFrame({"close_time": series}))["close_time"].tolist()
    assert got == [t.isoformat() for t in series]


@given(
    st.lists(st.one_of(st.integers(-(2**62), 2**62), st.integers(-(10**12), 10**12)), max_size=30)
)
def test_duration_column_text_equals_timedelta_isoformat(spans: list[int]) -> None:
    series = pd.Series(pd.to_timedelta(spans, unit="ns"))
    got = text_table(pd.DataFrame({"holding_time": series}))["holding_time"].tolist()
    assert got == [t.isoformat() for t in series]


def test_missing_values_stay_missing() -> None:
    frame = pd.DataFrame(
        {
            "average_price": pd.Series(
                [Decimal("1.50"), None], dtype=pd.ArrowDtype(pa.decimal128(3, 2))
            ),
            "close_time": pd.Series([pd.Timestamp("2026-11-02T10:00:00Z"), pd.NaT]),
        }
    )
    text = text_table(frame)
    assert text["average_price"].tolist()[0] == "1.5"
    assert pd.isna(text["average_price"].tolist()[1])
    assert pd.isna(text["close_time"].tolist()[1])
