"""The kernel's own paths: its checked arithmetic against Python's exact integers, and keys at the
edge of 64 bits against the reference engine.

The kernel runs compiled (when numba is installed) and as plain Python; both forms are checked.
"""

from __future__ import annotations

from decimal import Decimal
from typing import Any

import numpy as np
import pytest
from hypothesis import example, given
from hypothesis import strategies as st

import reconcile
from reconcile.core.canon import canonical_fills
from reconcile.fast import engine, kernel
from reconcile.fast.prepare import prepare
from reconcile.money import allocate, significant_places
from tests.builders import concat, fills
from tests.fast.test_equality import assert_same_book

LIMIT = 2**63 - 1
INTS = st.integers(-LIMIT, LIMIT)
NEAR_EDGE = st.sampled_from([0, 1, -1, 3037000499, 3037000500, -3037000500, LIMIT, -LIMIT])
OPERANDS = st.one_of(INTS, NEAR_EDGE, st.integers(-(10**9), 10**9))


def _both_forms(function: Any) -> list[Any]:
    return [function, function.py_func]


@given(a=OPERANDS, b=OPERANDS, already=st.booleans())
def test_checked_steps_flag_exactly_the_results_past_int64(a: int, b: int, already: bool) -> None:
    # derived: Python's int is exact; a result outside +-(2**63 - 1) is an overflow.
    for mul, add in zip(_both_forms(kernel._mul), _both_forms(kernel._add), strict=True):
        product, bad = mul(a, b, already)
        if abs(a * b) > LIMIT:
            assert (int(product), bool(bad)) == (0, True)
        else:
            assert (int(product), bool(bad)) == (a * b, already)
        total, bad = add(a, b, already)
        if abs(a + b) > LIMIT:
            assert (int(total), bool(bad)) == (0, True)
        else:
            assert (int(total), bool(bad)) == (a + b, already)


@example(amount=995_027_511_698, first=0, second=999_999_994, scale=0, minor=0)  # found by it
@example(amount=10**12, first=5 * 10**8, second=5 * 10**8 - 1, scale=0, minor=0)  # 5e20 > 2**63
@given(
    amount=st.integers(-(10**12), 10**12),
    first=st.integers(0, 10**9),
    second=st.integers(0, 10**9),
    scale=st.integers(0, 8),
    minor=st.integers(0, 3),
)
def test_a_split_in_two_gives_money_allocate_shares(
    amount: int, first: int, second: int, scale: int, minor: int
) -> None:
    # derived: money.allocate (exact fractions) is the definition of the split.
    minor = min(minor, scale)
    if first + second == 0:
        return
    value = Decimal(amount).scaleb(-scale)
    places = max(minor, significant_places(value))
    expected = [
        int(s.scaleb(scale)) for s in allocate(value, [Decimal(first), Decimal(second)], places)
    ]
    for split in _both_forms(kernel._split_in_two):
        one, two, bad = split(amount, first, second, scale, minor, False)
        assert ([int(one), int(two)], bool(bad)) == (expected, False)
        assert int(one) + int(two) == amount


# derived: 3037000499**2 = 9223372030926249001 fits under 2**63 - 1; 3037000500**2 =
# 9223372037000250000 does not. Whole yen, no commission: the only large step is q x price.
FITS, PAST = "3037000499", "3037000500"
EDGE = concat(
    fills(
        [
            ("b1", "buy", FITS, FITS, "2026-11-02T10:00:00Z"),
            ("s1", "sell", FITS, FITS, "2026-11-03T10:00:00Z"),
        ],
        instrument="FITS",
        currency="JPY",
    ),
    fills(
        [
            ("b2", "buy", PAST, PAST, "2026-11-02T11:00:00Z"),
            ("s2", "sell", PAST, PAST, "2026-11-03T11:00:00Z"),
        ],
        instrument="PAST",
        currency="JPY",
    ),
    fills(
        [
            ("b3", "buy", 3, "10.00", "2026-11-02T12:00:00Z", "0.10"),
            ("s3", "sell", 1, "11.00", "2026-11-03T12:00:00Z", "0.10"),
        ],
        instrument="SMALL",
    ),
)


@pytest.mark.parametrize("method", ["fifo", "lifo", "hifo", "average"])
@pytest.mark.parametrize("compiled", [True, False])
def test_a_key_just_past_int64_is_handed_to_the_reference_engine(
    method: str, compiled: bool
) -> None:
    canon = canonical_fills(EDGE)
    prepared = prepare(canon, None, None, method)
    assert prepared.key["status"].tolist() == [kernel.OK] * 3  # prepare lets all three through
    engine.run_kernel(prepared, method, "at-close", compiled=compiled)
    names = prepared.instruments.to_pylist()
    flagged = {n for n, s in zip(names, prepared.key["status"], strict=True) if s != kernel.OK}
    assert flagged == {"PAST"}
    expected = reconcile.match(canon, method=method, engine="reference")  # type: ignore[arg-type]
    actual = engine.fast_book(canon, None, None, method, "at-close", "half-even", compiled=compiled)
    assert_same_book(expected, actual)
    assert np.array_equal(
        actual.round_trips["trip_id"].to_numpy(), expected.round_trips["trip_id"].to_numpy()
    )
