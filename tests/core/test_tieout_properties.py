"""Properties of the tie-out over random histories (hypothesis); our own constructions (derived).

A statement generated from our own results always ties; a fill we hold and the statement lacks
is always named by a cause of the break it makes; a fill the statement has and we lack is always
found as a missing fill of its side and size; the input order of rows changes nothing.
"""

from __future__ import annotations

from decimal import Decimal

import pandas as pd
from hypothesis import given
from hypothesis import strategies as st

import reconcile
from reconcile.core.explain import SearchLimits
from reconcile.core.period import Period
from reconcile.core.tieout import derive_statement
from reconcile.schema import CommissionConvention, Method
from tests.builders import rows_of
from tests.strategies import financing_for, histories

D = Decimal
METHODS = st.sampled_from(["fifo", "lifo", "hifo", "average"])
CONVENTIONS = st.sampled_from(["at-close", "at-fill"])
T0 = pd.Timestamp("2026-11-02T09:00Z")
EXHAUSTIVE = SearchLimits(stop_early=False, max_causes=10_000)


@st.composite
def periods(draw: st.DrawFn, history: pd.DataFrame) -> Period:
    """A window of the history's minutes (the strategy's fills sit on odd minutes from T0)."""
    span = 2 * len(history) + 2
    first = draw(st.integers(0, span))
    last = draw(st.integers(first + 1, span + 2))
    start, end = T0 + pd.Timedelta(minutes=first), T0 + pd.Timedelta(minutes=last)
    return Period(start.date(), end.date(), "UTC", None, start, end, "window")


@given(data=st.data(), method=METHODS, convention=CONVENTIONS)
def test_a_statement_of_our_own_results_always_ties(
    data: st.DataObject, method: Method, convention: CommissionConvention
) -> None:
    history = data.draw(histories())
    events = data.draw(financing_for(history))
    span = data.draw(periods(history))
    options = {"financing": events, "method": method, "commission": convention}
    theirs = derive_statement(history, span, **options)  # type: ignore[arg-type]
    if theirs.empty:
        return
    result = reconcile.tie_out(history, theirs, span, **options)  # type: ignore[arg-type]
    assert set(result.lines["status"]) == {"tied"}, result.breaks.to_dict("records")


@given(data=st.data(), method=METHODS)
def test_a_fill_the_statement_lacks_is_named_by_a_cause(
    data: st.DataObject, method: Method
) -> None:
    history = data.draw(histories())
    span = data.draw(periods(history))
    times = pd.to_datetime(history["time"])
    before_end = history[times + pd.Timedelta(minutes=1) < span.end]
    if before_end.empty:
        return
    extra = before_end.iloc[[data.draw(st.integers(0, len(before_end) - 1))]].copy()
    extra["fill_id"] = "EXTRA"
    extra["time"] = (pd.to_datetime(extra["time"]) + pd.Timedelta(minutes=1)).map(
        lambda t: t.isoformat()
    )
    theirs = derive_statement(history, span, method=method)
    ours = pd.concat([history, extra], ignore_index=True)
    result = reconcile.tie_out(ours, theirs, span, method=method, limits=EXHAUSTIVE)
    assert len(result.breaks), "an extra fill always moves the open quantity"
    named = {i for ids in result.causes["fill_ids"] for i in ids.split(";")}
    assert "EXTRA" in named


@given(data=st.data(), method=METHODS)
def test_a_fill_we_lack_is_found_as_a_missing_fill(data: st.DataObject, method: Method) -> None:
    history = data.draw(histories())
    span = data.draw(periods(history))
    times = pd.to_datetime(history["time"])
    inside = history[(times >= span.start) & (times < span.end)]
    if inside.empty:
        return
    key = inside.iloc[data.draw(st.integers(0, len(inside) - 1))][["account", "instrument"]]
    mine = inside[
        (inside["account"] == key["account"]) & (inside["instrument"] == key["instrument"])
    ]
    lacking = mine.iloc[-1]  # the key's last fill of the period
    theirs = derive_statement(history, span, method=method)
    ours = history[history["fill_id"] != lacking["fill_id"]]
    result = reconcile.tie_out(ours, theirs, span, method=method, limits=EXHAUSTIVE)
    side = lacking["side"]
    size = f"{D(lacking['quantity']).normalize():,f}"
    missing = result.causes[result.causes["kind"] == "missing_fill"]["explanation"]
    assert any(f"a {side} of {size} " in text for text in missing), missing.tolist()


@given(data=st.data(), method=METHODS)
def test_row_order_changes_nothing(data: st.DataObject, method: Method) -> None:
    history = data.draw(histories())
    span = data.draw(periods(history))
    theirs = derive_statement(history, span, method=method)
    if theirs.empty:
        return
    realized = theirs["realized_pnl"].tolist()
    realized[0] = str(D(realized[0]) + 1)  # one break, so the cause search runs too
    theirs["realized_pnl"] = realized
    order = data.draw(st.permutations(range(len(history))))
    shuffled = history.iloc[list(order)].reset_index(drop=True)
    one = reconcile.tie_out(history, theirs, span, method=method)
    two = reconcile.tie_out(shuffled, theirs, span, method=method)
    # Explanations name source rows, which are positions in the input: everything else agrees.
    assert rows_of(one.lines, drop=["explanation"]) == rows_of(two.lines, drop=["explanation"])
    assert rows_of(one.causes, drop=["explanation"]) == rows_of(two.causes, drop=["explanation"])
