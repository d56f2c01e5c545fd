"""Whole-column integer arithmetic of the fast path against Python's exact integers and decimals.

The reference for each check is Python itself: arbitrary-precision ``int`` for products and
sums, and :mod:`reconcile.money` (the decimal module's quantize, and exact fractions) for
rounding and division. The compiled row loops, their plain-Python form and the whole-column numpy
versions must give the same integers and flag the same rows ("derived": three implementations of
one definition, checked against the decimal module's).
"""

from __future__ import annotations

from decimal import Decimal
from unittest.mock import patch

import numpy as np
import pyarrow as pa
from hypothesis import given
from hypothesis import strategies as st

from reconcile.fast import scaled
from reconcile.money import Rounding, divide, round_to

LIMIT = 2**63 - 1
INTS = st.integers(-LIMIT, LIMIT)
SMALL = st.integers(-(10**12), 10**12)
VALUES = st.lists(st.one_of(INTS, SMALL), min_size=1, max_size=30)


@given(a=VALUES, b=VALUES)
def test_checked_mul_and_add_flag_exactly_the_rows_past_int64(a: list[int], b: list[int]) -> None:
    size = min(len(a), len(b))
    x, y = np.array(a[:size], np.int64), np.array(b[:size], np.int64)
    product, over = scaled.checked_mul(x, y)
    total, over_sum = scaled.checked_add(x, y)
    for i in range(size):
        assert bool(over[i]) == (abs(a[i] * b[i]) > LIMIT)
        assert bool(over_sum[i]) == (abs(a[i] + b[i]) > LIMIT)
        if not over[i]:
            assert int(product[i]) == a[i] * b[i]
        if not over_sum[i]:
            assert int(total[i]) == a[i] + b[i]


ROWS = st.lists(
    st.tuples(st.one_of(INTS, SMALL), st.integers(0, 20), st.integers(0, 4)), min_size=1
)


@given(rows=ROWS, half_up=st.booleans())
def test_rounding_to_places_agrees_with_the_decimal_module(
    rows: list[tuple[int, int, int]], half_up: bool
) -> None:
    values = np.array([r[0] for r in rows], np.int64)
    scales = np.array([r[1] for r in rows], np.int64)
    places = np.array([r[2] for r in rows], np.int64)
    loop_out, loop_bad = np.empty_like(values), np.zeros(len(values), bool)
    scaled._round_rows.py_func(values, scales - places, half_up, loop_out, loop_bad)  # type: ignore[attr-defined]
    results = [
        scaled.round_to_places(values, scales, places, half_up),
        scaled.round_columns(values, scales, places, half_up),
        (loop_out, loop_bad),
    ]
    rule: Rounding = "half-up" if half_up else "half-even"
    for i, (value, scale, place) in enumerate(rows):
        expected = round_to(Decimal(value).scaleb(-scale), place, rule).scaleb(place)
        fits = abs(expected) <= LIMIT and abs(scale - place) <= 18
        for out, bad in results:
            assert bool(bad[i]) == (not fits)
            if fits:
                assert int(out[i]) == int(expected)


POSITIVE = st.one_of(st.integers(1, LIMIT), st.integers(1, 10**9))


@given(
    rows=st.lists(
        st.tuples(st.one_of(INTS, SMALL), st.integers(0, 18), POSITIVE, st.integers(0, 12)),
        min_size=1,
        max_size=20,
    )
)
def test_ratio_agrees_with_exact_division(rows: list[tuple[int, int, int, int]]) -> None:
    num = np.array([r[0] for r in rows], np.int64)
    num_scale = np.array([r[1] for r in rows], np.int64)
    den = np.array([r[2] for r in rows], np.int64)
    den_scale = np.array([r[3] for r in rows], np.int64)
    loop_out, loop_bad = np.empty_like(num), np.zeros(len(num), bool)
    shift = den_scale + 10 - num_scale
    scaled._ratio_rows.py_func(num, den, shift, loop_out, loop_bad)  # type: ignore[attr-defined]
    results = [
        scaled.ratio(num, num_scale, den, den_scale, 10),
        scaled.ratio_columns(num, num_scale, den, den_scale, 10),
        (loop_out, loop_bad),
    ]
    for i, (n, ns, d, ds) in enumerate(rows):
        expected = divide(Decimal(n).scaleb(-ns), Decimal(d).scaleb(-ds), 10).scaleb(10)
        outs = {(bool(bad[i]), None if bad[i] else int(out[i])) for out, bad in results}
        assert len(outs) == 1, outs  # the three implementations agree
        ((bad, out),) = outs
        if not bad:
            assert out == int(expected)


@given(
    rows=st.lists(st.tuples(st.one_of(INTS, SMALL), st.integers(-20, 20)), min_size=1),
    scale=st.integers(0, 20),
)
def test_rescaling_agrees_with_exact_integers(rows: list[tuple[int, int]], scale: int) -> None:
    values = np.array([r[0] for r in rows], np.int64)
    shift = np.array([r[1] for r in rows], np.int64)
    target = scale + shift
    keys = np.arange(len(values))[::-1]  # each row's key, whose target is the row's own
    key_target = target[::-1]
    loop_out, loop_bad = np.empty_like(values), np.zeros(len(values), bool)
    scaled._rescale_rows.py_func(values, scale, keys, key_target, loop_out, loop_bad)  # type: ignore[attr-defined]
    results = [
        scaled.rescale(values, scale, keys, key_target),
        scaled.rescale_columns(values, scale, target),
        (loop_out, loop_bad),
    ]
    for i, (value, step) in enumerate(rows):
        # Moving down floors (callers only move down where no digit is lost); up is exact.
        expected = value // 10 ** min(-step, 18) if step < 0 else value * 10**step
        fits = abs(expected) <= LIMIT
        for out, bad in results:
            assert bool(bad[i]) == (not fits)
            if fits:
                assert int(out[i]) == expected


@given(
    rows=st.lists(st.tuples(st.one_of(INTS, SMALL), st.integers(0, 12), st.booleans()), min_size=1),
    uniform=st.booleans(),
)
def test_decimal_columns_hold_each_integer_at_its_own_scale(
    rows: list[tuple[int, int, bool]], uniform: bool
) -> None:
    values = np.array([r[0] for r in rows], np.int64)
    scales: np.ndarray | int = rows[0][1] if uniform else np.array([r[1] for r in rows], np.int64)
    valid = np.array([r[2] for r in rows], bool)
    expected = [
        Decimal(value).scaleb(-(rows[0][1] if uniform else places)) if present else None
        for value, places, present in rows
    ]
    present = [e for e in expected if e is not None]
    # The narrowest type: whole digits of the largest value (at least one) plus the scale.
    scale = rows[0][1] if uniform else max(r[1] for r in rows)
    whole = max((e.adjusted() + 1 for e in present if e), default=1)
    for compiled in (True, False):  # the fused compiled pass and the whole-column numpy steps
        with patch.object(scaled, "numba_available", return_value=compiled):
            column = scaled.to_decimal(values, scales, valid)
        assert column.to_pylist() == expected
        assert (column.type.precision, column.type.scale) == (max(whole, 1) + scale, scale)


@given(
    values=st.lists(st.integers(-(10**30), 10**30) | SMALL, min_size=1, max_size=30),
    seed=st.integers(0, 2**32 - 1),
)
def test_unscaling_in_key_order_is_unscaling_then_taking(values: list[int], seed: int) -> None:
    column = pa.array([Decimal(v).scaleb(-4) for v in values], pa.decimal128(38, 4))
    order = np.random.default_rng(seed).permutation(len(values))
    ints, scale, fits = scaled.unscaled_in_order(column, order)
    assert scale == 4
    for n, i in enumerate(order):
        # Python's own integers: a value fits when it lies strictly inside +-2**62.
        inside = abs(values[i]) < 2**62
        assert bool(fits[i]) == inside
        assert int(ints[n]) == (values[i] if inside else 0)
