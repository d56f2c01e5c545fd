"""The reference matching engine: fills in, closed lots, round trips and open lots out.

This is the readable definition of every number the package reports; the fast path is checked
against it. Each (account, instrument) is replayed on its own, events in time order with ties in
input order (a financing event at the same instant as a fill is applied first: it pays for the
position held up to that instant).

Arithmetic is exact (``money.EXACT`` traps any rounding). The only rounding steps are named ones:
a charge split over lots (largest remainder), the share of a lot's unrealized charges that leaves
with a partial close, the basis an ``average`` reduction removes, and the final rounding of each
reported amount to its currency's minor unit.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from dataclasses import dataclass, field
from decimal import Decimal
from typing import Any

import pandas as pd

from reconcile.core.relief import RELIEF, Lot, Relief
from reconcile.errors import Problem, raise_if_problems
from reconcile.money import (
    EXACT,
    ZERO,
    allocate,
    charge_places,
    currency_places,
    divide,
    prorata,
)

Progress = Callable[[int, int], None]
Row = dict[str, Any]


@dataclass(frozen=True)
class Fill:
    fill_id: str
    time: pd.Timestamp
    sign: int
    quantity: Decimal
    price: Decimal
    commission: Decimal


@dataclass(frozen=True)
class Financing:
    event_id: str
    time: pd.Timestamp
    amount: Decimal
    kind: str
    row: Row


@dataclass
class Trip:
    """One position episode, from flat back to flat (a flip ends one and starts the next)."""

    direction: int
    open_time: pd.Timestamp
    fills: int = 0
    max_quantity: Decimal = ZERO
    entry_quantity: Decimal = ZERO
    entry_value: Decimal = ZERO
    exit_quantity: Decimal = ZERO
    exit_value: Decimal = ZERO
    gross: Decimal = ZERO
    commission: Decimal = ZERO
    financing: Decimal = ZERO
    close_time: pd.Timestamp | None = None
    number: int = 0


@dataclass
class Piece:
    """Part of a lot closed by one fill, with every charge share that leaves with it."""

    lot: Lot
    close: Fill
    quantity: Decimal
    open_price: Decimal
    gross: Decimal
    open_commission: Decimal
    close_commission: Decimal
    financing: Decimal
    trip: Trip


@dataclass
class KeyRun:
    """Replays one account and instrument."""

    account: str
    instrument: str
    currency: str
    multiplier: Decimal
    relief: Relief
    lots: list[Lot] = field(default_factory=list)
    direction: int = 0
    trip: Trip | None = None
    pieces: list[Piece] = field(default_factory=list)
    trips: list[Trip] = field(default_factory=list)
    unattributed: list[Row] = field(default_factory=list)
    commission_paid: Decimal = ZERO
    financing_booked: Decimal = ZERO
    seq: int = 0

    @property
    def minor(self) -> int:
        return currency_places(self.currency)

    def position(self) -> Decimal:
        return sum((lot.quantity for lot in self.lots), ZERO) * self.direction

    def carry_in(self, lot: Lot, direction: int) -> None:
        """Start from an open lot of an earlier period."""
        if self.direction == 0:
            self.direction = direction
            self.trip = Trip(direction, lot.time)
        trip = self._current_trip()
        trip.entry_quantity += lot.quantity
        trip.entry_value += EXACT.multiply(lot.quantity, lot.price)
        trip.commission += lot.commission
        trip.financing += lot.financing
        self._add_lot(lot)
        trip.max_quantity = max(trip.max_quantity, abs(self.position()))

    def apply_fill(self, fill: Fill) -> None:
        closing: list[tuple[Lot, Decimal]] = []
        left = fill.quantity
        if self.direction and fill.sign != self.direction:
            for lot in self.relief.closing_order(self.lots, self.direction):
                take = min(lot.quantity, left)
                closing.append((lot, take))
                left -= take
                if left == 0:
                    break
        weights = [take for _, take in closing] + ([left] if left else [])
        shares = allocate(fill.commission, weights, charge_places(fill.commission, self.currency))
        self.commission_paid += fill.commission
        if closing:
            self._current_trip().fills += 1
        for (lot, take), share in zip(closing, shares, strict=False):
            self._close(lot, take, fill, share)
        if closing and not self.lots:
            self._finish_trip(fill.time)
        if left:
            self._open(fill, left, shares[-1])

    def apply_financing(self, event: Financing) -> None:
        self.financing_booked += event.amount
        if not self.lots:
            self.unattributed.append({**event.row, "reason": "no open position at the event time"})
            return
        places = charge_places(event.amount, self.currency)
        shares = allocate(event.amount, [lot.quantity for lot in self.lots], places)
        for lot, share in zip(self.lots, shares, strict=True):
            lot.financing += share
        self._current_trip().financing += event.amount

    def _open(self, fill: Fill, quantity: Decimal, commission: Decimal) -> None:
        if self.direction == 0:
            self.direction = fill.sign
            self.trip = Trip(fill.sign, fill.time)
        trip = self._current_trip()
        trip.fills += 1
        trip.entry_quantity += quantity
        trip.entry_value += EXACT.multiply(quantity, fill.price)
        trip.commission += commission
        cost = EXACT.multiply(EXACT.multiply(quantity, fill.price), self.multiplier)
        self._add_lot(
            Lot(fill.fill_id, fill.time, self.seq, quantity, fill.price, cost, commission, ZERO)
        )
        trip.max_quantity = max(trip.max_quantity, abs(self.position()))

    def _add_lot(self, lot: Lot) -> None:
        self.seq += 1
        lot.seq = self.seq
        if self.relief.pooled and self.lots:
            pool = self.lots[0]
            pool.quantity += lot.quantity
            pool.cost += lot.cost
            pool.commission += lot.commission
            pool.financing += lot.financing
        else:
            self.lots.append(lot)

    def _close(self, lot: Lot, quantity: Decimal, fill: Fill, close_commission: Decimal) -> None:
        trip = self._current_trip()
        open_price = self.average_price(lot) if self.relief.pooled else lot.price
        relieved = self.relief.relieved_cost(lot, quantity, self.multiplier, self.minor)
        proceeds = EXACT.multiply(EXACT.multiply(quantity, fill.price), self.multiplier)
        gross = (proceeds - relieved) * self.direction
        open_commission = prorata(
            lot.commission, quantity, lot.quantity, charge_places(lot.commission, self.currency)
        )
        financing = prorata(
            lot.financing, quantity, lot.quantity, charge_places(lot.financing, self.currency)
        )
        self.pieces.append(
            Piece(
                lot,
                fill,
                quantity,
                open_price,
                gross,
                open_commission,
                close_commission,
                financing,
                trip,
            )
        )
        trip.exit_quantity += quantity
        trip.exit_value += EXACT.multiply(quantity, fill.price)
        trip.gross += gross
        trip.commission += close_commission
        lot.quantity -= quantity
        lot.cost -= relieved
        lot.commission -= open_commission
        lot.financing -= financing
        if lot.quantity == 0:
            self.lots.remove(lot)

    def average_price(self, lot: Lot) -> Decimal:
        """Average open price of a lot or pool, rounded to :data:`AVERAGE_PLACES`."""
        return divide(lot.cost, EXACT.multiply(lot.quantity, self.multiplier), AVERAGE_PLACES)

    def _finish_trip(self, time: pd.Timestamp) -> None:
        trip = self._current_trip()
        trip.close_time = time
        self.trips.append(trip)
        self.trip = None
        self.direction = 0

    def _current_trip(self) -> Trip:
        assert self.trip is not None, "a fill reduced a position that has no episode"
        return self.trip


#: Decimal places of averaged prices (the ``average`` pool price, round-trip entry and exit prices).
AVERAGE_PLACES = 10


@dataclass
class EngineRun:
    """Everything the replay of every key produced, before it is shaped into tables."""

    keys: list[KeyRun]
    convention: str


def replay(
    fills: pd.DataFrame,
    financing: pd.DataFrame | None,
    opening: pd.DataFrame | None,
    method: str,
    convention: str,
    progress: Progress | None = None,
) -> EngineRun:
    """Replay every (account, instrument) of canonical inputs; raise on events that cannot apply."""
    relief = RELIEF[method]
    events = _events_by_key(fills, financing, opening)
    problems: list[Problem] = []
    runs: list[KeyRun] = []
    total = len(events)
    for done, ((account, instrument), keyed) in enumerate(sorted(events.items()), start=1):
        run = _run_key(account, instrument, keyed, relief, problems)
        if run is not None:
            runs.append(run)
        if progress is not None and (done % 200 == 0 or done == total):
            progress(done, total)
    raise_replay_problems(problems)
    return EngineRun(runs, convention)


@dataclass
class _Keyed:
    fills: list[Row] = field(default_factory=list)
    financing: list[Row] = field(default_factory=list)
    opening: list[Row] = field(default_factory=list)


def _records(frame: pd.DataFrame | None) -> Iterator[Row]:
    if frame is None or frame.empty:
        return iter(())
    columns = list(frame.columns)
    data = [frame[c].tolist() for c in columns]
    return (dict(zip(columns, values, strict=True)) for values in zip(*data, strict=True))


def _events_by_key(
    fills: pd.DataFrame, financing: pd.DataFrame | None, opening: pd.DataFrame | None
) -> dict[tuple[str, str], _Keyed]:
    keyed: dict[tuple[str, str], _Keyed] = {}
    for name, frame in (("fills", fills), ("financing", financing), ("opening", opening)):
        label = _label(frame, name)
        for position, row in enumerate(_records(frame)):
            row["_order"] = position
            row["_source"] = label
            bucket = keyed.setdefault((row["account"], row["instrument"]), _Keyed())
            getattr(bucket, name).append(row)
    return keyed


def _label(frame: pd.DataFrame | None, default: str) -> str:
    """The file a canonical frame was read from (its read summary), else what it holds."""
    summary = None if frame is None else frame.attrs.get("read_summary")
    return str(summary["source"]) if isinstance(summary, dict) else default


def raise_replay_problems(problems: list[Problem]) -> None:
    """Raise the problems of a replay under their one source's name, or "inputs" for several."""
    sources = {p.source for p in problems}
    raise_if_problems(sources.pop() if len(sources) == 1 else "inputs", problems)


def _run_key(
    account: str, instrument: str, keyed: _Keyed, relief: Relief, problems: list[Problem]
) -> KeyRun | None:
    currency, multiplier = _key_terms(keyed, problems)
    if currency is None or multiplier is None:
        return None
    run = KeyRun(account, instrument, currency, multiplier, relief)
    if not _carry_in(run, keyed.opening, problems):
        return None
    for _, _, _, event in sorted(_timeline(keyed)):
        if isinstance(event, Fill):
            run.apply_fill(event)
        else:
            run.apply_financing(event)
    return run


def _key_terms(keyed: _Keyed, problems: list[Problem]) -> tuple[str | None, Decimal | None]:
    """Currency and multiplier of a key, which every input that names the key must share; each
    row that differs is a problem naming the row that set them."""
    first = (keyed.fills or keyed.opening or keyed.financing)[0]
    currency: str = first["currency"]
    multiplier: Decimal = first.get("multiplier") or Decimal(1)
    where = f"{first.get('_source', 'the inputs')} row {first.get('source_row')}"
    found = len(problems)
    for row in (*keyed.fills, *keyed.opening, *keyed.financing):
        key = f"{row['account']} {row['instrument']}"
        if row["currency"] != currency:
            problems.append(
                Problem(
                    row.get("_source", "inputs"),
                    f"currency {currency}, the currency of {key} in {where}",
                    row["currency"],
                    row.get("source_row"),
                    "currency",
                    "currency mismatch",
                )
            )
        elif "multiplier" in row and row["multiplier"] != multiplier:
            problems.append(
                Problem(
                    row.get("_source", "inputs"),
                    f"multiplier {multiplier}, the multiplier of {key} in {where}",
                    str(row["multiplier"]),
                    row.get("source_row"),
                    "multiplier",
                    "multiplier mismatch",
                )
            )
    if len(problems) > found:
        return None, None
    return currency, multiplier


def _carry_in(run: KeyRun, rows: list[Row], problems: list[Problem]) -> bool:
    directions = {row["direction"] for row in rows}
    if len(directions) > 1:
        row = rows[-1]
        problems.append(
            Problem(
                row.get("_source", "inputs"),
                f"every open lot of {run.account} {run.instrument} on one side",
                row["direction"],
                row.get("source_row"),
                "direction",
                "long and short lots together",
            )
        )
        return False
    for row in sorted(rows, key=lambda r: (r["open_time"], r["_order"])):
        expected = EXACT.multiply(
            EXACT.multiply(row["quantity"], row["open_price"]), run.multiplier
        )
        basis = row.get("cost_basis")
        if basis is None or basis is pd.NA:  # the column is optional, and a cell may be blank
            basis = expected
        elif not run.relief.pooled and basis != expected:
            problems.append(
                Problem(
                    row.get("_source", "inputs"),
                    f"cost_basis = quantity x open_price x multiplier = {expected} under "
                    f"{run.relief.name}",
                    str(basis),
                    row.get("source_row"),
                    "cost_basis",
                    "basis does not match the lot",
                )
            )
            return False
        lot = Lot(
            row["open_fill_id"],
            row["open_time"],
            0,
            row["quantity"],
            row["open_price"],
            basis,
            row["commission"],
            row["financing"],
        )
        run.carry_in(lot, 1 if row["direction"] == "long" else -1)
    return True


def _timeline(keyed: _Keyed) -> Iterator[tuple[pd.Timestamp, int, int, Fill | Financing]]:
    for row in keyed.financing:
        yield (
            row["time"],
            0,
            row["_order"],
            Financing(
                row["event_id"],
                row["time"],
                row["amount"],
                row["kind"],
                {k: v for k, v in row.items() if not k.startswith("_")},
            ),
        )
    for row in keyed.fills:
        yield (
            row["time"],
            1,
            row["_order"],
            Fill(
                row["fill_id"],
                row["time"],
                1 if row["side"] == "buy" else -1,
                row["quantity"],
                row["price"],
                row["commission"],
            ),
        )


#: The canonical rows of one (account, instrument): what :func:`replay_key` replays.
KeyEvents = _Keyed


def events_by_key(
    fills: pd.DataFrame, financing: pd.DataFrame | None, opening: pd.DataFrame | None
) -> dict[tuple[str, str], KeyEvents]:
    """Canonical inputs split by (account, instrument), each row keeping its input order."""
    return _events_by_key(fills, financing, opening)


def replay_key(account: str, instrument: str, events: KeyEvents, method: str) -> KeyRun:
    """Replay one key's rows on their own (the tie-out replays one key many times this way)."""
    problems: list[Problem] = []
    run = _run_key(account, instrument, events, RELIEF[method], problems)
    raise_replay_problems(problems)
    assert run is not None, "a key that cannot be replayed reports a problem"
    return run
