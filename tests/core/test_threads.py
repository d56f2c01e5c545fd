"""Concurrent column building keeps names, order, exceptions and the decimal context."""

from __future__ import annotations

import decimal
import functools
import threading

import pytest

from reconcile.core.threads import concurrently


def test_results_come_back_under_their_names_in_the_order_given() -> None:
    makers = {f"c{n}": functools.partial(pow, n, 2) for n in range(10)}
    assert list(concurrently(makers).items()) == [(f"c{n}", n * n) for n in range(10)]


def test_the_first_failing_column_in_order_raises() -> None:
    def fail(message: str) -> int:
        raise ValueError(message)

    with pytest.raises(ValueError, match="first"):
        concurrently({"a": lambda: 1, "b": lambda: fail("first"), "c": lambda: fail("second")})


def test_each_maker_sees_the_callers_decimal_context() -> None:
    def precision() -> tuple[int, bool]:
        return decimal.getcontext().prec, threading.current_thread() is threading.main_thread()

    with decimal.localcontext(prec=77):
        seen = concurrently({"a": precision, "b": precision, "c": precision})
    assert {p for p, _ in seen.values()} == {77}
