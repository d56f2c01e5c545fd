"""Statistics over round trips: published definitions, hand-built trips with known answers.

Each check names where its value comes from: a published source, "common practice" for a fact of
the trade with no single source, or "derived" for a case of our own worked by hand beside it.
"""

from __future__ import annotations

from collections.abc import Sequence
from datetime import UTC, datetime, timedelta
from decimal import Decimal
from typing import Any

import pandas as pd
import pytest

import reconcile
from reconcile.core.stats import peak_drawdown, zero_drawdown
from reconcile.errors import ConfigError
from tests.builders import concat, fills, rows_of

D = Decimal
DAY0 = datetime(2026, 10, 5, 14, 0, tzinfo=UTC)  # a Monday


def trips(
    nets: Sequence[int | str],
    *,
    hold: Sequence[timedelta] | None = None,
    commission: str = "0",
    currency: str = "USD",
    instrument: str = "X",
    account: str = "A",
    short: bool = False,
) -> pd.DataFrame:
    """One round trip a day, each of 1 unit bought at 100 and sold at 100 + net (gross = net)."""
    rows = []
    for n, net in enumerate(nets):
        opened = DAY0 + timedelta(days=n)
        closed = opened + (hold[n] if hold else timedelta(hours=1))
        first, second = ("sell", "buy") if short else ("buy", "sell")
        exit_price = D(100) - D(net) if short else D(100) + D(net)
        rows += [
            (f"{instrument}o{n}", first, 1, "100", opened.isoformat(), commission),
            (f"{instrument}c{n}", second, 1, str(exit_price), closed.isoformat(), commission),
        ]
    return fills(rows, currency=currency, instrument=instrument, account=account)


def summary(frame: pd.DataFrame, **options: Any) -> dict[str, Any]:
    """The one summary row, with None for a blank."""
    table = reconcile.stats(reconcile.match(frame), **options).summary
    assert len(table) == 1
    return dict(zip(table.columns, rows_of(table)[0], strict=True))


def test_profit_factor_is_gross_profit_over_gross_loss() -> None:
    # Dormeier, "Investing with Volume Analysis" (2011), p. 198: gross profit 50,000 over gross
    # loss 40,000 gives a profit factor of 1.25.
    row = summary(trips([30_000, -25_000, 20_000, -15_000]))
    assert (row["gross_profit"], row["gross_loss"]) == (D("50000.00"), D("-40000.00"))
    assert row["profit_factor"] == D("1.25")


def test_expectancy_is_win_rate_times_average_win_less_loss_rate_times_average_loss() -> None:
    # Common practice (the usual definition in trading texts; no single source named here):
    # expectancy = win rate x average win - loss rate x average loss; 0.40 x 250 - 0.60 x 100 = 40.
    row = summary(trips([250, -100, -100, 250, -100, 250, -100, -100, 250, -100]))
    assert row["win_rate"] == D("0.4")
    assert (row["average_win"], row["average_loss"]) == (D(250), D(-100))
    assert row["expectancy"] == D("40.00")
    assert row["payoff"] == D("2.5")  # common practice: average win / |average loss|


def test_maximum_drawdown_of_the_published_worked_series() -> None:
    # Maximum drawdown: the largest decline from the running peak (Magdon-Ismail & Atiya, "Risk",
    # 2004). Worked series from the DolphinDB documentation of its maximum-drawdown function:
    # 36, 96, 42, 100, 59, 86, 25, 64, 72 has peak 100, trough 25, drawdown 75 (0.75 of the peak).
    series = [36, 96, 42, 100, 59, 86, 25, 64, 72]
    found = peak_drawdown([(n, D(v)) for n, v in enumerate(series, start=1)], origin=0)
    assert (found.peak, found.depth) == (D(100), D(75))
    assert found.depth / found.peak == D("0.75")
    assert (found.start, found.trough, found.recovery) == (4, 7, None)
    assert found.state == "not recovered"


def test_the_worked_series_as_round_trips_gives_the_same_drawdown() -> None:
    # The same published series (DolphinDB documentation), as the cumulative net P&L of nine
    # round trips: each trip's net is the step between two values.
    series = [36, 96, 42, 100, 59, 86, 25, 64, 72]
    steps = [b - a for a, b in zip([0, *series], series, strict=False)]
    result = reconcile.stats(reconcile.match(trips(steps)))
    row = result.summary.iloc[0]
    assert (row["max_drawdown"], row["max_drawdown_peak"]) == (D(75), D(100))
    close = [DAY0 + timedelta(days=n, hours=1) for n in range(9)]
    assert (row["max_drawdown_start"], row["max_drawdown_trough"]) == (close[3], close[6])
    assert row["max_drawdown_recovery"] is pd.NaT
    assert row["max_drawdown_state"] == "not recovered"
    assert row["drawdown_from_zero"] == 0  # it never fell below where it started
    assert row["drawdown_from_zero_state"] == "no drawdown"
    assert result.cumulative["cumulative_pnl"].tolist() == [0, *series]
    assert result.cumulative["drawdown"].max() == 75


def test_recovery_is_the_first_close_back_at_the_peak() -> None:
    # Derived: cumulative 50, 20, 40, 50 (back to the peak), 60. Drawdown 30 from the first close
    # to the second, recovered at the fourth close.
    row = summary(trips([50, -30, 20, 10, 10]))
    close = [DAY0 + timedelta(days=n, hours=1) for n in range(5)]
    assert row["max_drawdown"] == D(30)
    assert (row["max_drawdown_start"], row["max_drawdown_trough"]) == (close[0], close[1])
    assert (row["max_drawdown_recovery"], row["max_drawdown_state"]) == (close[3], "recovered")


def test_drawdown_from_zero_starts_where_the_series_last_stood_at_zero_or_above() -> None:
    # Derived: cumulative 10, -20, -50, 0 (recovered), -10. The deepest point below zero is -50,
    # in the fall that began after the first close; from the peak (10) the drawdown is 60.
    row = summary(trips([10, -30, -30, 50, -10]))
    close = [DAY0 + timedelta(days=n, hours=1) for n in range(5)]
    assert row["drawdown_from_zero"] == D(50)
    assert (row["drawdown_from_zero_start"], row["drawdown_from_zero_trough"]) == (
        close[0],
        close[2],
    )
    assert row["drawdown_from_zero_recovery"] == close[3]
    assert row["max_drawdown"] == D(60)
    assert row["max_drawdown_recovery"] is None


def test_a_first_loss_is_a_drawdown_from_the_start() -> None:
    # Derived: the series starts at zero at the first trade's opening; a first loss of 40 is a
    # drawdown of 40 from that start, from the peak and from zero alike.
    row = summary(trips([-40, 10]))
    assert row["max_drawdown"] == row["drawdown_from_zero"] == D(40)
    assert row["max_drawdown_start"] == DAY0  # the first trade's opening
    assert row["max_drawdown_peak"] == D(0)


def test_ties_on_a_drawdown_keep_the_first_episode() -> None:
    # Derived: two falls of 10 (10 -> 0 and 10 -> 0 again): the first is reported.
    found = peak_drawdown([(1, D(10)), (2, D(0)), (3, D(10)), (4, D(0))], origin=0)
    assert (found.start, found.trough, found.recovery) == (1, 2, 3)
    assert zero_drawdown([(1, D(10)), (2, D(0))], origin=0).state == "no drawdown"


def test_every_tie_is_listed_for_the_extremes() -> None:
    # Derived: wins of 70 (trips 1 and 3) tie for the largest; losses of -20 (trips 2 and 4) tie
    # for the largest loss; trips 1 and 4 are held two hours, the others one.
    hours = [timedelta(hours=h) for h in (2, 1, 1, 2)]
    result = reconcile.stats(reconcile.match(trips([70, -20, 70, -20], hold=hours)))
    row = result.summary.iloc[0]
    assert (row["largest_win"], row["largest_win_trades"]) == (D(70), "1, 3")
    assert (row["largest_loss"], row["largest_loss_trades"]) == (D(-20), "2, 4")
    assert (row["longest_holding"], row["longest_holding_trades"]) == (hours[0], "1, 4")
    assert (row["shortest_holding"], row["shortest_holding_trades"]) == (hours[1], "2, 3")
    listed = result.extremes[["measure", "trade"]].values.tolist()
    assert listed == [
        ["largest win", "1"],
        ["largest win", "3"],
        ["largest loss", "2"],
        ["largest loss", "4"],
        ["longest holding", "1"],
        ["longest holding", "4"],
        ["shortest holding", "2"],
        ["shortest holding", "3"],
    ]


@pytest.mark.parametrize(
    ("rule", "wins", "losses", "breakevens", "win_streak", "loss_streak", "win_rate"),
    [
        # Derived: trips +5, 0, +5, -5, 0, -5. A breakeven breaks both streaks.
        ("breakeven", 2, 2, 2, 1, 1, D("0.3333")),
        ("win", 4, 2, 0, 3, 1, D("0.6667")),
        ("loss", 2, 4, 0, 1, 3, D("0.3333")),
    ],
)
def test_the_zero_pnl_rule_decides_how_a_zero_counts(
    rule: str,
    wins: int,
    losses: int,
    breakevens: int,
    win_streak: int,
    loss_streak: int,
    win_rate: Decimal,
) -> None:
    row = summary(trips([5, 0, 5, -5, 0, -5]), zero_pnl=rule)
    assert (row["wins"], row["losses"], row["breakevens"]) == (wins, losses, breakevens)
    assert (row["longest_win_streak"], row["longest_loss_streak"]) == (win_streak, loss_streak)
    assert row["win_rate"] == win_rate  # common practice: wins over all trades, 4 places
    assert row["net_pnl"] == D(0)


def test_profit_factor_and_payoff_are_blank_when_there_is_no_loss() -> None:
    # Common practice: with no losing trade the ratio has no denominator; it is left blank rather
    # than shown as infinite.
    row = summary(trips([10, 20]))
    blank = ("profit_factor", "payoff", "average_loss", "largest_loss", "largest_loss_trades")
    assert [row[name] for name in blank] == [None] * len(blank)
    assert row["win_rate"] == 1


def test_fee_drag_is_costs_over_gross() -> None:
    # Derived: gross 40 + 60 = 100; commission 1.25 a fill x 4 = 5.00; drag 5 / 100 = 0.05.
    row = summary(trips([40, 60], commission="1.25"))
    assert (row["gross_pnl"], row["commission"], row["net_pnl"]) == (D(100), D(5), D(95))
    assert (row["commission_drag"], row["fee_drag"]) == (D("0.05"), D("0.05"))
    assert row["financing_drag"] == 0


def test_currencies_are_never_added_together() -> None:
    book = reconcile.match(
        concat(trips([10, -4]), trips([1000], currency="JPY", instrument="Y", account="B"))
    )
    result = reconcile.stats(book)
    assert result.summary["currency"].tolist() == ["JPY", "USD"]
    assert result.summary["net_pnl"].tolist() == [D(1000), D(6)]
    by_account = reconcile.stats(book, "account").summary
    assert by_account[["account", "currency", "trades"]].values.tolist() == [
        ["A", "USD", 2],
        ["B", "JPY", 1],
    ]


def test_months_and_weekdays_are_taken_in_the_given_time_zone() -> None:
    # 2026-11-01 03:30 UTC is Saturday 2026-10-31 23:30 in New York (EDT, UTC-4; the US change
    # back to standard time is that Sunday at 02:00 local): common practice, IANA tz database.
    history = fills(
        [
            ("o", "buy", 1, "100", "2026-10-30T15:00:00Z"),
            ("c", "sell", 1, "101", "2026-11-01T03:30:00Z"),
        ]
    )
    book = reconcile.match(history)
    utc = reconcile.stats(book, ["month", "weekday"]).summary
    local = reconcile.stats(book, ["month", "weekday"], timezone="America/New_York").summary
    assert utc[["month", "weekday"]].values.tolist() == [["2026-11", "Sunday"]]
    assert local[["month", "weekday"]].values.tolist() == [["2026-10", "Saturday"]]


def test_weekdays_sort_in_calendar_order_and_sides_are_long_or_short() -> None:
    book = reconcile.match(concat(trips([1, 2, 3]), trips([4], short=True, instrument="Z")))
    weekdays = reconcile.stats(book, "weekday").summary["weekday"].tolist()
    assert weekdays == ["Monday", "Tuesday", "Wednesday"]
    sides = reconcile.stats(book, "side").summary
    assert sides[["side", "trades", "net_pnl"]].values.tolist() == [
        ["long", 3, D(6)],
        ["short", 1, D(4)],
    ]


def test_closed_lots_can_be_the_unit_instead_of_round_trips() -> None:
    # Derived: one round trip closed in two pieces, +10 on the first unit, -4 on the second.
    history = fills(
        [
            ("b", "buy", 2, "100", "2026-10-05"),
            ("s1", "sell", 1, "110", "2026-10-06"),
            ("s2", "sell", 1, "96", "2026-10-07"),
        ]
    )
    book = reconcile.match(history)
    trips_row = reconcile.stats(book).summary.iloc[0]
    lots = reconcile.stats(book, over="closed-lots").summary.iloc[0]
    assert (trips_row["trades"], trips_row["wins"]) == (1, 1)
    assert (lots["trades"], lots["wins"], lots["losses"]) == (2, 1, 1)
    assert lots["largest_loss_trades"] == "b/s2"
    assert lots["net_pnl"] == trips_row["net_pnl"] == D(6)


def test_group_totals_are_summed_exactly_and_rounded_once() -> None:
    # Derived: three trips each gaining 0.005 USD show 0.00 each (half-even) and count as
    # breakevens; their exact total 0.015 rounds once to 0.02.
    rows = []
    for n in range(3):
        rows += [
            (f"b{n}", "buy", 1, "10.000", f"2026-11-0{2 + n}T10:00:00Z"),
            (f"s{n}", "sell", 1, "10.005", f"2026-11-0{2 + n}T11:00:00Z"),
        ]
    row = summary(fills(rows))
    assert row["breakevens"] == 3
    assert row["net_pnl"] == D("0.02")


def test_trades_closing_at_the_same_instant_are_one_step_of_the_curve() -> None:
    same = "2026-10-06T12:00:00Z"
    book = reconcile.match(
        concat(
            fills([("a1", "buy", 1, "100", "2026-10-05"), ("a2", "sell", 1, "90", same)]),
            fills(
                [("b1", "buy", 1, "100", "2026-10-05"), ("b2", "sell", 1, "130", same)],
                instrument="Y",
            ),
        )
    )
    curve = reconcile.stats(book).cumulative
    assert curve[["trades", "pnl", "cumulative_pnl"]].values.tolist() == [
        [0, D(0), D(0)],
        [2, D(20), D(20)],  # -10 and +30 at once: no intermediate drawdown of 10
    ]


@pytest.mark.parametrize(
    ("options", "message"),
    [
        ({"by": "desk"}, "by: expected one of account, instrument, month, side, weekday"),
        ({"by": ["month", "month"]}, "by: expected each key at most once, found month twice"),
        ({"over": "fills"}, "over: expected one of round-trips, closed-lots, found 'fills'"),
        ({"zero_pnl": "skip"}, "zero_pnl: expected one of breakeven, win, loss, found 'skip'"),
        ({"timezone": "Mars/Olympus"}, "expected an IANA name"),
    ],
)
def test_bad_options_name_what_was_expected(options: dict[str, Any], message: str) -> None:
    book = reconcile.match(trips([1]))
    with pytest.raises(ConfigError, match=message):
        reconcile.stats(book, **options)


def test_a_book_with_no_round_trips_gives_empty_tables() -> None:
    result = reconcile.stats(reconcile.match(fills([("b", "buy", 1, "100", "2026-10-05")])))
    assert [len(t) for t in result.tables().values()] == [0, 0, 0]
    assert list(result.summary.columns[:3]) == ["currency", "trades", "wins"]
