"""Behaviour of the engine on small hand-worked histories (arithmetic done by hand beside each)."""

from __future__ import annotations

from datetime import timedelta
from decimal import Decimal

import pandas as pd
import pytest

import reconcile
from reconcile.errors import ValidationError
from reconcile.schema import Method
from tests.builders import concat, fills, financing

D = Decimal


def test_flip_through_zero_closes_then_opens_the_rest() -> None:
    book = reconcile.match(
        fills(
            [
                ("b1", "buy", 10, "100", "2026-11-02", "1.00"),
                ("s1", "sell", 15, "104", "2026-11-03", "1.50"),  # closes 10, opens a 5 short
                ("b2", "buy", 5, "101", "2026-11-04", "0.50"),
            ]
        )
    )
    closed = book.closed_lots
    assert closed[["open_fill_id", "close_fill_id", "direction", "quantity"]].values.tolist() == [
        ["b1", "s1", "long", D(10)],
        ["s1", "b2", "short", D(5)],
    ]
    # (104 - 100) x 10 = 40; (104 - 101) x 5 = 15 on the short
    assert closed["gross_pnl"].tolist() == [D("40.00"), D("15.00")]
    # s1's 1.50 splits 10:5 -> 1.00 to the closed piece, 0.50 to the new short lot
    assert closed["commission"].tolist() == [D("2.00"), D("1.00")]
    trips = book.round_trips
    assert trips["direction"].tolist() == ["long", "short"]
    assert trips["fills"].tolist() == [2, 2]  # the flip fill belongs to both episodes
    assert trips["commission"].tolist() == [D("2.00"), D("1.00")]
    assert book.positions["quantity"].tolist() == [D(0)]


def test_partial_exits_and_scale_in_make_one_round_trip() -> None:
    book = reconcile.match(
        fills(
            [
                ("b1", "buy", 100, "10.00", "2026-11-02T14:00:00Z"),
                ("b2", "buy", 50, "10.30", "2026-11-02T15:00:00Z"),
                ("s1", "sell", 60, "10.50", "2026-11-03T14:00:00Z"),
                ("s2", "sell", 90, "10.10", "2026-11-04T14:00:00Z"),
            ]
        )
    )
    trip = book.round_trips.iloc[0]
    assert len(book.round_trips) == 1
    assert trip["max_quantity"] == D(150)
    assert trip["entry_price"] == D("10.1")  # (100 x 10.00 + 50 x 10.30) / 150
    assert trip["exit_price"] == D("10.26")  # (60 x 10.50 + 90 x 10.10) / 150
    # proceeds 630 + 909 = 1539; cost 1000 + 515 = 1515
    assert trip["gross_pnl"] == D("24.00")
    assert trip["holding_time"] == timedelta(days=2)
    assert trip["fills"] == 4


def test_multiplier_scales_pnl_and_basis() -> None:
    book = reconcile.match(
        fills(
            [("b", "buy", 2, "5120.25", "2026-11-02"), ("s", "sell", 2, "5131.75", "2026-11-03")],
            multiplier="20",
        )
    )
    assert book.closed_lots["gross_pnl"].tolist() == [D("460.00")]  # 11.50 x 2 x 20


def test_zero_and_negative_prices_are_allowed() -> None:
    book = reconcile.match(
        fills(
            [("b", "buy", 1, "-37.63", "2026-11-02"), ("s", "sell", 1, "0", "2026-11-03")],
            multiplier="1000",
        )
    )
    assert book.closed_lots["gross_pnl"].tolist() == [D("37630.00")]


def test_hifo_on_a_short_closes_the_lowest_price_first_ties_oldest() -> None:
    book = reconcile.match(
        fills(
            [
                ("s1", "sell", 1, "50", "2026-11-02"),
                ("s2", "sell", 1, "48", "2026-11-03"),
                ("s3", "sell", 1, "48", "2026-11-04"),
                ("b1", "buy", 2, "47", "2026-11-05"),
            ]
        ),
        method="hifo",
    )
    assert book.closed_lots["open_fill_id"].tolist() == ["s2", "s3"]


def test_average_pool_restarts_at_the_fill_price_after_a_flip() -> None:
    book = reconcile.match(
        fills(
            [
                ("b1", "buy", 10, "10", "2026-11-02"),
                ("b2", "buy", 10, "12", "2026-11-03"),
                ("s1", "sell", 30, "13", "2026-11-04"),
            ]
        ),
        method="average",
    )
    assert book.closed_lots["open_price"].tolist() == [D(11)]
    pool = book.open_lots.iloc[0]
    assert (pool["direction"], pool["quantity"], pool["open_price"]) == ("short", D(10), D(13))


def test_average_basis_relief_is_booked_in_minor_units_and_the_pool_empties_exactly() -> None:
    # 3 @ 10.00 + 0 = 30.00 over 3 units; selling 1 of 3 removes 10.00; a 1.00 pool split in 3
    book = reconcile.match(
        fills(
            [
                ("b1", "buy", 2, "10.00", "2026-11-02"),
                ("b2", "buy", 1, "10.01", "2026-11-03"),
                ("s1", "sell", 1, "11", "2026-11-04"),
                ("s2", "sell", 2, "11", "2026-11-05"),
            ]
        ),
        method="average",
    )
    # basis 30.01; 1/3 of it is 10.0033... -> 10.00 booked, 20.01 left for the last 2
    assert book.closed_lots["gross_pnl"].tolist() == [D("1.00"), D("1.99")]
    assert book.positions["realized_gross"].tolist() == [D("2.99")]  # 33 - 30.01 exactly


def test_times_that_tie_keep_input_order() -> None:
    same = "2026-11-02T10:00:00Z"
    book = reconcile.match(
        fills(
            [
                ("b1", "buy", 1, "10", same),
                ("b2", "buy", 1, "11", same),
                ("s1", "sell", 1, "12", same),
            ]
        )
    )
    assert book.closed_lots["open_fill_id"].tolist() == ["b1"]


def test_input_order_of_rows_does_not_matter_when_times_differ() -> None:
    rows = [("b1", "buy", 1, "10", "2026-11-02"), ("s1", "sell", 1, "12", "2026-11-03")]
    assert reconcile.match(fills(rows[::-1])).closed_lots.equals(
        reconcile.match(fills(rows)).closed_lots
    )


def test_commission_conventions() -> None:
    history = fills(
        [
            ("b1", "buy", 10, "10", "2026-11-02", "3.00"),
            ("s1", "sell", 4, "11", "2026-11-03", "1.00"),
        ]
    )
    at_close = reconcile.match(history, commission="at-close")
    at_fill = reconcile.match(history, commission="at-fill")
    # at-close: 4/10 of the 3.00 opening charge leaves with the closed piece (1.20), 1.80 stays
    assert at_close.closed_lots["commission"].tolist() == [D("2.20")]
    assert at_close.open_lots["commission"].tolist() == [D("1.80")]
    assert at_close.positions["commission"].tolist() == [D("2.20")]
    assert at_close.positions["realized_net"].tolist() == [D("1.80")]  # 4.00 - 2.20
    # at-fill: every commission is realized when paid
    assert at_fill.closed_lots["commission"].tolist() == [D("1.00")]
    assert at_fill.open_lots["commission"].tolist() == [D("0")]
    assert at_fill.positions["commission"].tolist() == [D("4.00")]
    assert at_fill.positions["realized_net"].tolist() == [D("0.00")]


def test_financing_goes_pro_rata_to_open_lots_and_leaves_with_them() -> None:
    history = fills(
        [
            ("b1", "buy", 1, "10", "2026-11-02T10:00:00Z"),
            ("b2", "buy", 2, "10", "2026-11-02T11:00:00Z"),
            ("s1", "sell", 3, "10", "2026-11-04T10:00:00Z"),
        ]
    )
    events = financing([("e1", "2026-11-03T22:00:00Z", "-1.00")])
    book = reconcile.match(history, events)
    # -1.00 over 1:2 -> -0.33 and -0.67 (largest remainder gives the odd cent to the 2)
    assert book.closed_lots["financing"].tolist() == [D("-0.33"), D("-0.67")]
    assert book.round_trips["financing"].tolist() == [D("-1.00")]
    assert book.positions["realized_net"].tolist() == [D("-1.00")]
    at_fill = reconcile.match(history, events, commission="at-fill")
    assert at_fill.closed_lots["financing"].tolist() == [D(0), D(0)]
    assert at_fill.positions["financing"].tolist() == [D("-1.00")]


def test_financing_on_a_flat_position_is_listed_never_dropped() -> None:
    history = fills([("b1", "buy", 1, "10", "2026-11-02"), ("s1", "sell", 1, "10", "2026-11-03")])
    events = financing([("late", "2026-11-04", "-2.50", "borrow")])
    book = reconcile.match(history, events)
    assert book.unattributed["event_id"].tolist() == ["late"]
    assert book.unattributed["reason"].tolist() == ["no open position at the event time"]
    assert book.positions["financing"].tolist() == [D("-2.50")]


def test_financing_at_the_same_instant_as_a_fill_is_applied_first() -> None:
    when = "2026-11-03T22:00:00Z"
    history = fills([("b1", "buy", 1, "10", "2026-11-02"), ("s1", "sell", 1, "10", when)])
    book = reconcile.match(history, financing([("e1", when, "-0.40")]))
    assert book.closed_lots["financing"].tolist() == [D("-0.40")]
    assert book.unattributed.empty


def test_financing_in_another_currency_than_the_instrument_is_an_error() -> None:
    history = fills([("b1", "buy", 1, "10", "2026-11-02")])
    with pytest.raises(ValidationError, match="currency USD"):
        reconcile.match(history, financing([("e1", "2026-11-03", "-1", "swap")], currency="EUR"))


def test_amounts_round_per_currency_and_totals_round_once() -> None:
    # Three lots each gaining 0.005 USD: each line rounds half-even to 0.00 or 0.01, the total of
    # the exact amounts (0.015) rounds once to 0.02.
    rows = []
    for n in range(3):
        rows += [
            (f"b{n}", "buy", 1, "10.000", f"2026-11-0{2 + n}T10:00:00Z"),
            (f"s{n}", "sell", 1, "10.005", f"2026-11-0{2 + n}T11:00:00Z"),
        ]
    book = reconcile.match(fills(rows))
    assert book.closed_lots["gross_pnl"].tolist() == [D("0.00")] * 3
    assert book.positions["realized_gross"].tolist() == [D("0.02")]
    yen = reconcile.match(
        fills(
            [("b", "buy", 3, "101.5", "2026-11-02"), ("s", "sell", 3, "102", "2026-11-03")],
            currency="JPY",
        )
    )
    assert yen.closed_lots["gross_pnl"].tolist() == [D(2)]  # 1.5 rounds half-even to 2


def test_positions_list_every_key_with_its_average_price() -> None:
    book = reconcile.match(
        concat(
            fills([("b1", "buy", 2, "10", "2026-11-02"), ("b2", "buy", 1, "13", "2026-11-03")]),
            fills(
                [("x1", "sell", 5, "7", "2026-11-02"), ("x2", "buy", 5, "6", "2026-11-03")],
                instrument="Y",
            ),
        )
    )
    positions = book.positions.set_index("instrument")
    assert positions.loc["X", "quantity"] == D(3)
    assert positions.loc["X", "average_price"] == D(11)
    assert positions.loc["Y", "quantity"] == D(0)
    assert positions["average_price"].isna().tolist() == [False, True]


def test_opening_lots_carry_history_forward() -> None:
    first = fills(
        [
            ("b1", "buy", 10, "10", "2026-10-20", "1.00"),
            ("s1", "sell", 4, "12", "2026-10-25", "0.40"),
        ]
    )
    second = fills([("s2", "sell", 6, "13", "2026-11-03", "0.60")])
    whole = reconcile.match(concat(first, second))
    carried = reconcile.match(second, opening=reconcile.match(first).open_lots)
    assert carried.closed_lots["net_pnl"].tolist() == whole.closed_lots["net_pnl"].tolist()[1:]


def test_opening_lots_under_lot_methods_must_match_their_basis() -> None:
    opening = reconcile.match(fills([("b1", "buy", 10, "10", "2026-10-20")])).open_lots.copy()
    opening["cost_basis"] = opening["cost_basis"].astype(str).replace({"100": "99"})
    with pytest.raises(ValidationError, match="cost_basis"):
        reconcile.match(fills([("s1", "sell", 1, "10", "2026-11-03")]), opening=opening)


@pytest.mark.parametrize("method", ["fifo", "average"])
@pytest.mark.parametrize("blank", [True, False], ids=["blank cell", "no column"])
def test_an_opening_lot_without_a_cost_basis_takes_quantity_times_price(
    method: Method, blank: bool
) -> None:
    # The columns a position typed from a broker statement has (docs/formats.md: cost_basis is
    # optional); both engines must take quantity x open_price x multiplier as its basis.
    opening = pd.DataFrame(
        {
            "account": ["A"],
            "instrument": ["X"],
            "currency": ["USD"],
            "direction": ["long"],
            "open_fill_id": ["O1"],
            "open_time": ["2026-10-30T10:00:00Z"],
            "quantity": ["50"],
            "open_price": ["9"],
        }
    )
    if blank:
        opening["cost_basis"] = [""]
    sale = fills([("s1", "sell", 20, "10", "2026-11-03")])
    books = [
        reconcile.match(sale, opening=opening, method=method, engine=engine)
        for engine in ("reference", "fast")
    ]
    for book in books:
        assert book.closed_lots["gross_pnl"].tolist() == [Decimal("20.00")]  # 20 x (10 - 9)
        assert book.open_lots["cost_basis"].tolist() == [Decimal(270)]  # 30 x 9
    for name, table in books[0].tables().items():
        pd.testing.assert_frame_equal(table, books[1].tables()[name], check_dtype=False, obj=name)
