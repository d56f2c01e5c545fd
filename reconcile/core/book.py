"""The :class:`Book`: the tables one matching run produces, and how they are shaped."""

from __future__ import annotations

from dataclasses import dataclass
from decimal import Decimal
from typing import Any, TypeAlias

import pandas as pd
import pyarrow as pa

from reconcile import schema
from reconcile.core.engine import AVERAGE_PLACES, EngineRun, KeyRun, Piece, Trip
from reconcile.core.frames import build_frame, frame_from_arrow
from reconcile.money import EXACT, ZERO, Rounding, divide, round_money

TABLES = ("closed_lots", "round_trips", "open_lots", "positions", "unattributed")


#: A table of a book: a DataFrame, or the Arrow table it is built from.
Table: TypeAlias = pd.DataFrame | pa.Table


class Book:
    """Closed lots, round trips, open lots, positions and unattributed financing of one run.

    Every table is a DataFrame in the columns of :mod:`reconcile.schema`. Amounts are exact
    decimals rounded to the currency's minor unit; totals (positions, round trips) are summed
    exactly and rounded once, so they can differ from the sum of rounded lines by rounding.
    ``gross_pnl_unrounded`` keeps each closed lot's exact gross for sums over any period.

    A table may be given as an Arrow table (the fast path builds them so): it becomes a DataFrame
    only when first asked for, so a run that only writes its tables never converts them at all
    (:meth:`stored_tables` hands out what is held). A book does not change once built.
    """

    __slots__ = ("_tables", "commission", "method", "rounding")

    _tables: dict[str, Table]
    method: str
    commission: str
    rounding: Rounding

    def __init__(
        self,
        closed_lots: Table,
        round_trips: Table,
        open_lots: Table,
        positions: Table,
        unattributed: Table,
        method: str,
        commission: str,
        rounding: Rounding = "half-even",
    ) -> None:
        held = (closed_lots, round_trips, open_lots, positions, unattributed)
        setter = object.__setattr__
        setter(self, "_tables", dict(zip(TABLES, held, strict=True)))
        setter(self, "method", method)
        setter(self, "commission", commission)
        setter(self, "rounding", rounding)

    def __setattr__(self, name: str, value: Any) -> None:
        raise AttributeError(f"a Book does not change once built (cannot set {name})")

    def __reduce__(self) -> tuple[Any, ...]:
        held = tuple(self._tables[name] for name in TABLES)
        return (Book, (*held, self.method, self.commission, self.rounding))

    def __repr__(self) -> str:
        counts = ", ".join(f"{name}={self.row_count(name)}" for name in TABLES)
        return f"Book({counts}, method={self.method!r}, commission={self.commission!r})"

    def _frame(self, name: str) -> pd.DataFrame:
        table = self._tables[name]
        if isinstance(table, pa.Table):
            table = frame_from_arrow(table)
            self._tables[name] = table
        return table

    @property
    def closed_lots(self) -> pd.DataFrame:
        return self._frame("closed_lots")

    @property
    def round_trips(self) -> pd.DataFrame:
        return self._frame("round_trips")

    @property
    def open_lots(self) -> pd.DataFrame:
        return self._frame("open_lots")

    @property
    def positions(self) -> pd.DataFrame:
        return self._frame("positions")

    @property
    def unattributed(self) -> pd.DataFrame:
        return self._frame("unattributed")

    def tables(self) -> dict[str, pd.DataFrame]:
        """The tables by name, in the order writers emit them."""
        return {name: self._frame(name) for name in TABLES}

    def stored_tables(self) -> dict[str, Table]:
        """The tables as held (DataFrames or Arrow tables), for writers that take either."""
        return dict(self._tables)

    def arrow_columns(self, name: str, *columns: str) -> list[pa.ChunkedArray]:
        """Columns of one table as Arrow arrays (in the chunks they are held in, not copied into
        one), without making a DataFrame of an Arrow table."""
        table = self._tables[name]
        if isinstance(table, pa.Table):
            return [table.column(c) for c in columns]
        return [pa.chunked_array([_arrow_array(table[c])]) for c in columns]

    def row_count(self, name: str) -> int:
        table = self._tables[name]
        return table.num_rows if isinstance(table, pa.Table) else len(table)


def _arrow_array(series: pd.Series) -> pa.Array:
    values = pa.array(series.array)
    return values.combine_chunks() if isinstance(values, pa.ChunkedArray) else values


def build_book(run: EngineRun, method: str, rounding: Rounding) -> Book:
    _number_trips(run.keys)
    at_close = run.convention == "at-close"
    shaper = _Shaper(at_close, rounding)
    closed, trips, open_lots, positions, unattributed = [], [], [], [], []
    for key in run.keys:
        closed += [shaper.closed_lot(key, piece) for piece in key.pieces]
        trips += [shaper.round_trip(key, trip) for trip in key.trips]
        open_lots += shaper.open_lots(key)
        positions.append(shaper.position(key))
        unattributed += key.unattributed
    return Book(
        closed_lots=build_frame(closed, schema.CLOSED_LOTS),
        round_trips=build_frame(trips, schema.ROUND_TRIPS),
        open_lots=build_frame(open_lots, schema.OPEN_LOTS),
        positions=build_frame(positions, schema.POSITIONS),
        unattributed=build_frame(unattributed, schema.UNATTRIBUTED),
        method=method,
        commission=run.convention,
        rounding=rounding,
    )


def _number_trips(keys: list[KeyRun]) -> None:
    number = 0
    for key in keys:
        for trip in [*key.trips, *([key.trip] if key.trip else [])]:
            number += 1
            trip.number = number


@dataclass(frozen=True)
class _Shaper:
    at_close: bool
    rounding: Rounding

    def money(self, value: Decimal, currency: str) -> Decimal:
        return round_money(value, currency, self.rounding)

    def closed_lot(self, key: KeyRun, piece: Piece) -> dict[str, Any]:
        commission = piece.close_commission
        financing = ZERO
        if self.at_close:
            commission += piece.open_commission
            financing = piece.financing
        return {
            **_key_columns(key),
            "direction": _direction(piece.trip.direction),
            "open_fill_id": piece.lot.fill_id,
            "close_fill_id": piece.close.fill_id,
            "open_time": piece.lot.time,
            "close_time": piece.close.time,
            "quantity": piece.quantity,
            "open_price": piece.open_price,
            "close_price": piece.close.price,
            "gross_pnl": self.money(piece.gross, key.currency),
            "commission": commission,
            "financing": financing,
            "net_pnl": self.money(piece.gross - commission + financing, key.currency),
            "multiplier": key.multiplier,
            "gross_pnl_unrounded": piece.gross,
            "trip_id": piece.trip.number,
        }

    def round_trip(self, key: KeyRun, trip: Trip) -> dict[str, Any]:
        assert trip.close_time is not None
        return {
            **_key_columns(key),
            "trip_id": trip.number,
            "direction": _direction(trip.direction),
            "open_time": trip.open_time,
            "close_time": trip.close_time,
            "max_quantity": trip.max_quantity,
            "entry_price": divide(trip.entry_value, trip.entry_quantity, AVERAGE_PLACES),
            "exit_price": divide(trip.exit_value, trip.exit_quantity, AVERAGE_PLACES),
            "fills": trip.fills,
            "gross_pnl": self.money(trip.gross, key.currency),
            "commission": self.money(trip.commission, key.currency),
            "financing": self.money(trip.financing, key.currency),
            "net_pnl": self.money(trip.gross - trip.commission + trip.financing, key.currency),
            "holding_time": trip.close_time - trip.open_time,
        }

    def open_lots(self, key: KeyRun) -> list[dict[str, Any]]:
        rows = []
        for lot in key.lots:
            rows.append(
                {
                    **_key_columns(key),
                    "direction": _direction(key.direction),
                    "open_fill_id": lot.fill_id,
                    "open_time": lot.time,
                    "quantity": lot.quantity,
                    "open_price": key.average_price(lot) if key.relief.pooled else lot.price,
                    "commission": lot.commission if self.at_close else ZERO,
                    "financing": lot.financing if self.at_close else ZERO,
                    "multiplier": key.multiplier,
                    "cost_basis": lot.cost,
                    "trip_id": key.trip.number if key.trip else 0,
                }
            )
        return rows

    def position(self, key: KeyRun) -> dict[str, Any]:
        gross = sum((p.gross for p in key.pieces), ZERO)
        if self.at_close:
            commission = sum((p.open_commission + p.close_commission for p in key.pieces), ZERO)
            financing = sum((p.financing for p in key.pieces), ZERO) + sum(
                (row["amount"] for row in key.unattributed), ZERO
            )
        else:
            commission, financing = key.commission_paid, key.financing_booked
        quantity = key.position()
        cost = sum((lot.cost for lot in key.lots), ZERO)
        average = None
        if quantity:
            average = divide(cost, EXACT.multiply(abs(quantity), key.multiplier), AVERAGE_PLACES)
        return {
            **_key_columns(key),
            "multiplier": key.multiplier,
            "quantity": quantity,
            "average_price": average,
            "realized_gross": self.money(gross, key.currency),
            "commission": self.money(commission, key.currency),
            "financing": self.money(financing, key.currency),
            "realized_net": self.money(gross - commission + financing, key.currency),
            "open_lots": len(key.lots),
        }


def _key_columns(key: KeyRun) -> dict[str, Any]:
    return {"account": key.account, "instrument": key.instrument, "currency": key.currency}


def _direction(sign: int) -> str:
    return "long" if sign > 0 else "short"
