"""The fast path gives the reference engine's tables exactly, on random histories (hypothesis).

The reference engine (reconcile/core/engine.py) is the definition of every number; these checks
are "derived": they compare two implementations of the same documented conventions, on histories
with partial fills, scale-ins, flips, ties in time, financing (at a fill's instant too), carried
lots, every relief method, both commission conventions and both rounding rules.
"""

from __future__ import annotations

from pathlib import Path
from unittest import mock

import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from hypothesis import given
from hypothesis import strategies as st

import reconcile
from reconcile.core.book import Book
from reconcile.core.canon import canonical_fills, canonical_financing, canonical_opening
from reconcile.errors import ValidationError
from reconcile.fast import tables as fast_tables
from reconcile.fast.engine import fast_book
from reconcile.fast.prepare import NeedsReference
from reconcile.io.writers.tables import write_tables
from tests.builders import OVERFLOWING_FILLS as BIG
from tests.builders import fills, financing, rows_of
from tests.strategies import financing_for, histories

METHODS = st.sampled_from(["fifo", "lifo", "hifo", "average"])
CONVENTIONS = st.sampled_from(["at-close", "at-fill"])
ROUNDINGS = st.sampled_from(["half-even", "half-up"])


def assert_same_book(expected: Book, actual: Book) -> None:
    for name, table in expected.tables().items():
        other = actual.tables()[name]
        assert list(other.columns) == list(table.columns), name
        assert rows_of(other) == rows_of(table), name
        for column in table.columns:
            assert str(other[column].dtype).split("(")[0] == str(table[column].dtype).split("(")[0]


def _coarsen(frame: pd.DataFrame, minutes: int) -> pd.DataFrame:
    """Put times on a coarser clock, so fills (and financing) share instants."""
    if frame.empty:
        return frame
    times = pd.to_datetime(frame["time"]).dt.floor(f"{minutes}min")
    return frame.assign(time=times.map(lambda t: t.isoformat()))


@st.composite
def inputs(draw: st.DrawFn) -> tuple[pd.DataFrame, pd.DataFrame]:
    history = draw(histories(max_keys=4, max_fills=30))
    events = draw(financing_for(history))
    minutes = draw(st.sampled_from([1, 4, 30]))
    return _coarsen(history, minutes), _coarsen(events, minutes)


@given(
    data=inputs(),
    method=METHODS,
    convention=CONVENTIONS,
    rounding=ROUNDINGS,
    compiled=st.booleans(),
)
def test_fast_path_equals_the_reference_engine(
    data: tuple[pd.DataFrame, pd.DataFrame],
    method: str,
    convention: str,
    rounding: str,
    compiled: bool,
) -> None:
    history, events = data
    canon, canon_events = canonical_fills(history), canonical_financing(events)
    expected = reconcile.match(
        canon,
        canon_events,
        method=method,  # type: ignore[arg-type]
        commission=convention,  # type: ignore[arg-type]
        rounding=rounding,  # type: ignore[arg-type]
        engine="reference",
    )
    actual = fast_book(canon, canon_events, None, method, convention, rounding, compiled=compiled)  # type: ignore[arg-type]
    assert_same_book(expected, actual)


@given(data=st.data(), method=METHODS, convention=CONVENTIONS, compiled=st.booleans())
def test_fast_path_equals_the_reference_with_carried_lots(
    data: st.DataObject, method: str, convention: str, compiled: bool
) -> None:
    history, events = data.draw(inputs())
    cut = data.draw(st.integers(0, len(history)))
    first = reconcile.match(
        history.iloc[:cut],
        method=method,  # type: ignore[arg-type]
        commission=convention,  # type: ignore[arg-type]
        engine="reference",
    )
    carried = canonical_opening(first.open_lots)
    later, canon_events = canonical_fills(history.iloc[cut:]), canonical_financing(events)
    expected = reconcile.match(
        later,
        canon_events,
        opening=carried,
        method=method,  # type: ignore[arg-type]
        commission=convention,  # type: ignore[arg-type]
        engine="reference",
    )
    actual = fast_book(
        later, canon_events, carried, method, convention, "half-even", compiled=compiled
    )
    assert_same_book(expected, actual)


@pytest.mark.parametrize("method", ["fifo", "average"])
def test_a_key_too_large_for_64_bits_is_replayed_by_the_reference_engine(method: str) -> None:
    # derived: q x price x 10**scale of HUGE is about 1.2e29, far past 2**63; SMALL and ZED fit.
    canon = canonical_fills(BIG)
    expected = reconcile.match(canon, method=method, engine="reference")  # type: ignore[arg-type]
    actual = fast_book(canon, None, None, method, "at-close", "half-even")
    assert_same_book(expected, actual)
    assert actual.round_trips["trip_id"].tolist() == expected.round_trips["trip_id"].tolist()


def _carried_with_multiplier(multiplier: str) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Fills of a key with multiplier 10, and a lot of that key carried in at ``multiplier``."""
    first = fills([("b1", "buy", 2, "10", "2026-11-02T10:00:00Z")], multiplier="10")
    later = fills([("s1", "sell", 1, "11", "2026-11-03T10:00:00Z")], multiplier="10")
    lots = reconcile.match(first, engine="reference").open_lots
    carried = canonical_opening(lots.assign(multiplier=[multiplier] * len(lots)))
    return canonical_fills(later), carried


def test_a_carried_lot_with_another_multiplier_is_left_to_the_reference_engine() -> None:
    later, carried = _carried_with_multiplier("50")
    with pytest.raises(NeedsReference, match="two multipliers"):
        fast_book(later, None, carried, "fifo", "at-close", "half-even")


@pytest.mark.parametrize(("currency", "left_to_reference"), [("EUR", True), ("USD", False)])
def test_financing_in_another_currency_than_its_fills_is_left_to_the_reference_engine(
    currency: str, left_to_reference: bool
) -> None:
    held = canonical_fills(fills([("b1", "buy", 2, "10", "2026-11-02T10:00:00Z")]))
    charge = canonical_financing(
        financing([("e1", "2026-11-02T22:00:00Z", "-1.25")], currency=currency)
    )
    if left_to_reference:
        with pytest.raises(NeedsReference, match="two currencies"):
            fast_book(held, charge, None, "fifo", "at-close", "half-even")
    else:
        expected = reconcile.match(held, charge, engine="reference")
        assert_same_book(expected, fast_book(held, charge, None, "fifo", "at-close", "half-even"))


def test_a_carried_lot_with_the_multiplier_written_otherwise_is_matched() -> None:
    later, carried = _carried_with_multiplier("10.0")
    expected = reconcile.match(later, opening=carried, engine="reference")
    assert_same_book(expected, fast_book(later, None, carried, "fifo", "at-close", "half-even"))


@given(data=inputs(), method=METHODS, convention=CONVENTIONS)
def test_written_csv_files_are_byte_identical(
    tmp_path_factory: pytest.TempPathFactory,
    data: tuple[pd.DataFrame, pd.DataFrame],
    method: str,
    convention: str,
) -> None:
    history, events = data
    books = {
        engine: reconcile.match(
            history,
            events,
            method=method,  # type: ignore[arg-type]
            commission=convention,  # type: ignore[arg-type]
            engine=engine,
        )
        for engine in ("reference", "fast")
    }
    written: dict[str, dict[str, bytes]] = {}
    # The fast book as held (Arrow tables, written without pandas) and as DataFrames.
    kinds = {"reference": books["reference"].tables(), "fast": books["fast"].stored_tables()}
    kinds["fast frames"] = books["fast"].tables()
    for engine, tables in kinds.items():
        out = tmp_path_factory.mktemp(engine.replace(" ", "-"))
        write_tables(tables, out, "csv")
        written[engine] = {p.name: p.read_bytes() for p in sorted(Path(out).iterdir())}
    assert written["fast"] == written["reference"]
    assert written["fast frames"] == written["reference"]


@given(data=inputs(), method=METHODS, slice_rows=st.integers(1, 5))
def test_closed_lots_built_in_slices_are_the_table_built_whole(
    data: tuple[pd.DataFrame, pd.DataFrame], method: str, slice_rows: int
) -> None:
    """Every table, types and all, is the same whatever the slices closed lots are built in
    (a slice's decimal columns are typed by its own values until the slices are joined)."""
    history, events = data
    canon, canon_events = canonical_fills(history), canonical_financing(events)
    whole = fast_book(canon, canon_events, None, method, "at-close", "half-even")
    with mock.patch.object(fast_tables, "CHUNK_ROWS", slice_rows):
        sliced = fast_book(canon, canon_events, None, method, "at-close", "half-even")
    for name, table in whole.stored_tables().items():
        other = sliced.stored_tables()[name]
        assert isinstance(table, pa.Table)
        assert isinstance(other, pa.Table)
        assert other.schema == table.schema, name
        assert other.equals(table), name


@given(data=inputs(), method=METHODS)
def test_written_parquet_tables_hold_the_same_values(
    tmp_path_factory: pytest.TempPathFactory, data: tuple[pd.DataFrame, pd.DataFrame], method: str
) -> None:
    history, events = data
    read: dict[str, dict[str, list[dict[str, object]]]] = {}
    kinds: dict[str, dict[str, list[str]]] = {}
    for engine in ("reference", "fast"):
        book = reconcile.match(history, events, method=method, engine=engine)  # type: ignore[arg-type]
        out = tmp_path_factory.mktemp(engine)
        write_tables(book.stored_tables(), out, "parquet")
        read[engine] = {p.name: pq.read_table(p).to_pylist() for p in sorted(out.iterdir())}
        kinds[engine] = {
            p.name: [str(f.type).split("(")[0] for f in pq.read_schema(p)]
            for p in sorted(out.iterdir())
        }
    assert read["fast"] == read["reference"]
    assert kinds["fast"] == kinds["reference"]  # the same column types (text as large strings)


def test_inputs_only_the_reference_reports_raise_its_errors() -> None:
    # a financing event in a currency the fills of its key do not use (derived)
    history = fills([("b1", "buy", 1, "10", "2026-11-02")])
    events = financing([("E1", "2026-11-03", "-1", "swap")], currency="EUR")
    with pytest.raises(ValidationError) as fast:
        reconcile.match(history, events, engine="fast")
    with pytest.raises(ValidationError) as slow:
        reconcile.match(history, events, engine="reference")
    assert str(fast.value) == str(slow.value)
