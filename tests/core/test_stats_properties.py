"""Properties of the statistics over random histories (hypothesis)."""

from __future__ import annotations

from decimal import Decimal
from fractions import Fraction

import pandas as pd
from hypothesis import given
from hypothesis import strategies as st

import reconcile
from reconcile.core.stats import peak_drawdown, zero_drawdown
from reconcile.money import minor_unit
from tests.builders import rows_of
from tests.strategies import histories

D = Decimal
ZERO_RULES = st.sampled_from(["breakeven", "win", "loss"])
COUNTS = ["currency", "trades", "net_pnl"]


def _unit(currency: str) -> Fraction:
    return Fraction(1, 10 ** (minor_unit(currency) or 0))


@given(history=histories(max_fills=30), rule=ZERO_RULES)
def test_wins_losses_and_breakevens_add_up_to_the_count(history: pd.DataFrame, rule: str) -> None:
    book = reconcile.match(history)
    table = reconcile.stats(book, zero_pnl=rule).summary
    assert (table["wins"] + table["losses"] + table["breakevens"]).tolist() == table[
        "trades"
    ].tolist()
    assert int(table["trades"].sum()) == len(book.round_trips)
    if rule != "breakeven":
        assert table["breakevens"].sum() == 0


@given(history=histories(max_fills=30))
def test_profit_factor_times_gross_loss_is_gross_profit(history: pd.DataFrame) -> None:
    # Dormeier (2011), p. 198: profit factor = gross profit / gross loss. The ratio has 4 places
    # and both sums are rounded to the minor unit, so the product agrees within those roundings.
    table = reconcile.stats(reconcile.match(history)).summary
    for currency, factor, profit, loss in zip(
        *(table[c].tolist() for c in ("currency", "profit_factor", "gross_profit", "gross_loss")),
        strict=True,
    ):
        if loss == 0:
            assert factor is None or pd.isna(factor)
            continue
        unit = _unit(currency)
        error = Fraction(1, 20_000) * abs(Fraction(loss)) + unit * (Fraction(factor) + 1)
        assert abs(Fraction(factor) * abs(Fraction(loss)) - Fraction(profit)) <= error


@given(history=histories(max_fills=30))
def test_expectancy_times_count_is_the_net(history: pd.DataFrame) -> None:
    # Expectancy = win rate x average win - loss rate x average loss (common practice):
    # the mean net P&L per trade, up to rounding (each breakeven may hide half a minor unit).
    table = reconcile.stats(reconcile.match(history)).summary
    for currency, count, expectancy, net in rows_of(
        table[["currency", "trades", "expectancy", "net_pnl"]]
    ):
        unit = _unit(currency)
        assert abs(Fraction(expectancy) * count - Fraction(net)) <= (count + 1) * unit


@given(history=histories(max_fills=30), by=st.sampled_from(["month", "account", "weekday"]))
def test_groups_partition_the_trades_of_each_currency(history: pd.DataFrame, by: str) -> None:
    book = reconcile.match(history)
    whole = {c: (n, net) for c, n, net in rows_of(reconcile.stats(book).summary[COUNTS])}
    parts = reconcile.stats(book, by, timezone="Asia/Tokyo").summary[COUNTS]
    for currency, (count, net) in whole.items():
        group = [(n, v) for c, n, v in rows_of(parts) if c == currency]
        assert sum(n for n, _ in group) == count
        total = sum((Fraction(v) for _, v in group), Fraction(0))
        assert abs(total - Fraction(net)) <= _unit(currency) * len(group)


@given(history=histories(max_fills=30))
def test_the_drawdown_from_the_peak_is_never_less_than_from_zero(history: pd.DataFrame) -> None:
    table = reconcile.stats(reconcile.match(history)).summary
    assert (table["max_drawdown"] >= table["drawdown_from_zero"]).all()
    assert (table["max_drawdown_peak"] >= 0).all()


@given(steps=st.lists(st.integers(-1_000, 1_000), min_size=1, max_size=60))
def test_drawdowns_agree_with_pandas_running_maximum(steps: list[int]) -> None:
    # Reference: pandas' cumsum and cummax over integers (exact), prefixed by the starting zero.
    series = pd.Series([0, *steps]).cumsum()
    expected_peak = int((series.cummax() - series).max())
    expected_zero = max(0, -int(series.min()))
    points = [(n, D(int(v))) for n, v in enumerate(series.iloc[1:], start=1)]
    found = peak_drawdown(points, origin=0)
    assert found.depth == expected_peak
    assert zero_drawdown(points, origin=0).depth == expected_zero
    if found.depth:
        start, trough = found.start, found.trough
        assert start is not None
        assert trough is not None
        assert series[start] - series[trough] == expected_peak
        recovered = [n for n in range(trough, len(series)) if series[n] >= series[start]]
        assert found.recovery == (recovered[0] if recovered else None)
