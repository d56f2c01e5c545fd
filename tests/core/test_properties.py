"""Properties of the engine over random histories (hypothesis)."""

from __future__ import annotations

from collections import Counter
from decimal import Decimal
from fractions import Fraction

import pandas as pd
from hypothesis import given
from hypothesis import strategies as st

import reconcile
from reconcile.core.canon import canonical_fills
from reconcile.money import minor_unit
from reconcile.schema import CommissionConvention, Method
from tests import reference
from tests.builders import rows_of
from tests.strategies import financing_for, histories

D = Decimal
METHODS = st.sampled_from(["fifo", "lifo", "hifo", "average"])
CONVENTIONS = st.sampled_from(["at-close", "at-fill"])


def _signed(frame: pd.DataFrame) -> pd.Series:
    return frame["quantity"].map(D) * frame["side"].map({"buy": 1, "sell": -1})


@given(history=histories(), method=METHODS)
def test_quantity_is_conserved(history: pd.DataFrame, method: Method) -> None:
    book = reconcile.match(history, method=method)
    opened = book.closed_lots["quantity"].sum() + book.open_lots["quantity"].sum()
    flips_and_opens = sum(_opening_quantities(history))
    assert opened == flips_and_opens
    positions = {
        (a, i): q
        for a, i, q in book.positions[["account", "instrument", "quantity"]].itertuples(index=False)
    }
    for (account, instrument), frame in history.groupby(["account", "instrument"]):
        assert positions[(str(account), str(instrument))] == _signed(frame).sum()


def _opening_quantities(history: pd.DataFrame) -> list[Decimal]:
    """Quantity each fill opens, followed naively: whatever does not reduce the position opens."""
    opened = []
    for _, frame in history.groupby(["account", "instrument"], sort=False):
        position = D(0)
        for signed in _signed(frame):
            if position == 0 or (position > 0) == (signed > 0):
                opened.append(abs(signed))
            else:
                opened.append(max(D(0), abs(signed) - abs(position)))
            position += signed
    return opened


@given(history=histories(), method=METHODS)
def test_flat_positions_realize_proceeds_minus_cost_exactly(
    history: pd.DataFrame, method: Method
) -> None:
    book = reconcile.match(history, method=method)
    canon = canonical_fills(history)
    for (account, instrument), frame in canon.groupby(["account", "instrument"]):
        if _signed(frame).sum() != 0:
            continue
        cash = (-_signed(frame) * frame["price"].map(D) * frame["multiplier"].map(D)).sum()
        lots = book.closed_lots
        mine = lots[(lots["account"] == account) & (lots["instrument"] == instrument)]
        assert mine["gross_pnl_unrounded"].map(D).sum() == cash


@given(data=st.data(), method=METHODS, convention=CONVENTIONS)
def test_commissions_and_financing_are_conserved(
    data: st.DataObject, method: Method, convention: CommissionConvention
) -> None:
    history = data.draw(histories())
    events = data.draw(financing_for(history))
    book = reconcile.match(history, events, method=method, commission=convention)
    paid = history["commission"].map(D).sum()
    booked = events["amount"].map(D).sum() if len(events) else D(0)
    if convention == "at-close":
        unrealized = book.open_lots["commission"].sum()
        assert book.positions["commission"].sum() + unrealized == paid
        assert book.closed_lots["commission"].sum() == book.positions["commission"].sum()
        realized_financing = book.positions["financing"].sum()
        assert realized_financing + book.open_lots["financing"].sum() == booked
    else:
        assert book.positions["commission"].sum() == paid
        assert book.positions["financing"].sum() == booked


@given(history=histories(), method=st.sampled_from(["fifo", "lifo", "hifo"]))
def test_lot_methods_agree_with_the_unit_by_unit_reference(
    history: pd.DataFrame, method: Method
) -> None:
    book = reconcile.match(history, method=method)
    unit = D("0.5")
    expected = reference.replay(_reference_rows(history), method, unit)
    lots = book.closed_lots
    for key, result in expected.items():
        mine = lots[(lots["account"] == key[0]) & (lots["instrument"] == key[1])]
        assert Fraction(mine["gross_pnl_unrounded"].map(D).sum()) == result.gross
        pairs = Counter(
            {
                (o, c): int(q / unit)
                for o, c, q in zip(
                    mine["open_fill_id"], mine["close_fill_id"], mine["quantity"], strict=True
                )
            }
        )
        assert +pairs == +result.pairs
    open_units = Counter(
        {
            f: int(q / unit)
            for f, q in zip(book.open_lots["open_fill_id"], book.open_lots["quantity"], strict=True)
        }
    )
    assert open_units == sum((r.open_units for r in expected.values()), Counter())


@given(history=histories())
def test_average_agrees_with_exact_rational_pools_to_the_rounding_of_each_reduction(
    history: pd.DataFrame,
) -> None:
    book = reconcile.match(history, method="average")
    expected = reference.replay(_reference_rows(history), "average", D("0.5"))
    lots = book.closed_lots
    for key, result in expected.items():
        mine = lots[(lots["account"] == key[0]) & (lots["instrument"] == key[1])]
        ours = Fraction(mine["gross_pnl_unrounded"].map(D).sum())
        currency = history[(history["account"] == key[0]) & (history["instrument"] == key[1])][
            "currency"
        ].iloc[0]
        half_unit = Fraction(1, 2 * 10 ** (minor_unit(currency) or 0))
        if result.position == 0:
            assert ours == result.gross
        else:
            assert abs(ours - result.gross) <= half_unit * result.reductions


def _reference_rows(history: pd.DataFrame) -> list[dict[str, object]]:
    canon = canonical_fills(history).sort_values("time", kind="stable")
    return [
        {
            **{str(k): v for k, v in row.items()},
            "quantity": D(row["quantity"]),
            "price": D(row["price"]),
            "multiplier": D(row["multiplier"]),
        }
        for row in canon.to_dict("records")
    ]


@given(data=st.data(), method=METHODS)
def test_the_order_of_unrelated_keys_changes_nothing(data: st.DataObject, method: Method) -> None:
    history = data.draw(histories())
    shuffled = history.sample(frac=1, random_state=data.draw(st.integers(0, 2**31)))
    # the time order within a key is kept by the distinct times; input order is only a tie-break
    first = reconcile.match(history, method=method)
    second = reconcile.match(shuffled, method=method)
    for name, table in first.tables().items():
        assert rows_of(table) == rows_of(second.tables()[name]), name


@given(data=st.data(), method=METHODS, convention=CONVENTIONS)
def test_cutting_history_and_carrying_open_lots_changes_nothing(
    data: st.DataObject, method: Method, convention: CommissionConvention
) -> None:
    history = data.draw(histories())
    events = data.draw(financing_for(history))
    cut = data.draw(st.integers(0, len(history)))
    whole = reconcile.match(history, events, method=method, commission=convention)
    cut_time = history["time"].iloc[cut] if cut < len(history) else "9999-12-31T00:00:00+00:00"
    early = events[events["time"] < cut_time]
    late = events[events["time"] >= cut_time]
    part1 = reconcile.match(history.iloc[:cut], early, method=method, commission=convention)
    part2 = reconcile.match(
        history.iloc[cut:],
        late,
        opening=part1.open_lots,
        method=method,
        commission=convention,
    )
    order = ["account", "instrument", "close_time"]
    joined = pd.concat([part1.closed_lots, part2.closed_lots]).sort_values(order, kind="stable")
    expected = whole.closed_lots.sort_values(order, kind="stable")
    assert rows_of(joined, drop=["trip_id"]) == rows_of(expected, drop=["trip_id"])
    assert rows_of(part2.open_lots, drop=["trip_id"]) == rows_of(whole.open_lots, drop=["trip_id"])
    for column in ("commission", "financing"):
        assert (
            part1.positions[column].sum() + part2.positions[column].sum()
            == whole.positions[column].sum()
        )
