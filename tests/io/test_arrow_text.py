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
import pytest
from hypothesis import given
from hypothesis import strategies as st

from reconcile.core.frames import MAX_DECIMAL_DIGITS, decimal_array
from reconcile.errors import PrecisionError
from reconcile.io.writers import arrow_text
from reconcile.io.writers.tables import _one_decimal, decimal_text, text_table
from reconcile.money import minor_unit, places_of

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
    if not _fits_one_column(values):
        return  # test_values_too_wide_for_one_column covers these
    array = decimal_array(values)
    places = np.array([minor_unit(c) or 0 for _, c in rows], dtype=np.int64)
    got = arrow_text.decimal_texts(array, places, _one_decimal).to_pylist()
    assert got == [decimal_text(v, c) for v, c in rows]


def _fits_one_column(values: list[Decimal | None]) -> bool:
    present = [v for v in values if v is not None]
    before = max((v.adjusted() + 1 for v in present if v != 0), default=1)
    after = max((places_of(v) for v in present), default=0)
    return max(before, 1) + after <= MAX_DECIMAL_DIGITS


def test_values_too_wide_for_one_column() -> None:
    # Found by hypothesis: 26 digits before the point beside 51 after need 77 digits, one more
    # than Arrow's widest decimal (decimal256: precision 1 to 76, pyarrow documentation).
    values = [Decimal("10000000000000000000000000"), Decimal("9.9999999999999999999999990E-26")]
    with pytest.raises(PrecisionError) as caught:
        decimal_array(values, "realized_pnl")
    assert str(caught.value) == (
        "column realized_pnl: expected values that fit 76 digits at one scale, "
        "found 26 digits before the point and 51 after (77 in all)"
    )


def test_values_exactly_as_wide_as_one_column() -> None:
    values = [Decimal("1" * 25), Decimal("0." + "0" * 50 + "1")]  # 25 + 51 = 76 digits
    assert decimal_array(values).type == pa.decimal256(76, 51)


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
