"""Write the demo scenario: an invented fund's fills and financing for October-November 2026.

Larkmoor Capital (fictional) runs three accounts: LMC-FUT trades two invented index futures
(contract multipliers), LMC-EQ trades invented equities in USD, EUR and JPY (long and short, with
borrow fees and dividends charged on shorts), and LMC-CFD holds an invented metal CFD with nightly
swaps. Orders execute as bursts of partial fills; positions scale in, scale out and flip.

Every number is made up. Run ``python sample_data/generate.py`` (or ``make sample-data``) to
rebuild the files; the output is identical on every run.
"""

from __future__ import annotations

import csv
import itertools
import random
from dataclasses import dataclass
from datetime import UTC, date, datetime, timedelta
from decimal import ROUND_HALF_EVEN, Decimal
from pathlib import Path
from zoneinfo import ZoneInfo

from reconcile.timezones import zone as pinned_zone

HERE = Path(__file__).parent
SEED = 20261130
START = date(2026, 10, 1)
END = date(2026, 11, 30)


@dataclass(frozen=True)
class Instrument:
    account: str
    symbol: str
    currency: str
    multiplier: Decimal
    price: Decimal
    tick: Decimal
    lot: int
    zone: str
    venue: str
    per_unit_fee: Decimal
    minimum_fee: Decimal
    decisions: int


INSTRUMENTS = [
    Instrument(
        "LMC-FUT",
        "VLT50-Z26",
        "USD",
        Decimal(20),
        Decimal("5120.00"),
        Decimal("0.25"),
        1,
        "America/Chicago",
        "XFUT",
        Decimal("1.10"),
        Decimal("0"),
        150,
    ),
    Instrument(
        "LMC-FUT",
        "BRQ-F27",
        "EUR",
        Decimal(10),
        Decimal("1830.5"),
        Decimal("0.5"),
        1,
        "Europe/Berlin",
        "XEUF",
        Decimal("0.85"),
        Decimal("0"),
        120,
    ),
    Instrument(
        "LMC-EQ",
        "CRVN",
        "USD",
        Decimal(1),
        Decimal("48.20"),
        Decimal("0.01"),
        100,
        "America/New_York",
        "XNMS",
        Decimal("0.0035"),
        Decimal("1.00"),
        160,
    ),
    Instrument(
        "LMC-EQ",
        "HLVD",
        "USD",
        Decimal(1),
        Decimal("12.415"),
        Decimal("0.005"),
        100,
        "America/New_York",
        "XNMS",
        Decimal("0.0035"),
        Decimal("1.00"),
        140,
    ),
    Instrument(
        "LMC-EQ",
        "OSTB",
        "EUR",
        Decimal(1),
        Decimal("23.46"),
        Decimal("0.02"),
        50,
        "Europe/Paris",
        "XPAR",
        Decimal("0.005"),
        Decimal("2.50"),
        110,
    ),
    Instrument(
        "LMC-EQ",
        "MZKR",
        "JPY",
        Decimal(1),
        Decimal("3415"),
        Decimal("1"),
        100,
        "Asia/Tokyo",
        "XTKS",
        Decimal("0.4"),
        Decimal("100"),
        110,
    ),
    Instrument(
        "LMC-CFD",
        "SILVR-CFD",
        "USD",
        Decimal(1),
        Decimal("31.842"),
        Decimal("0.001"),
        500,
        "America/New_York",
        "OTC",
        Decimal("0"),
        Decimal("0"),
        90,
    ),
]

#: Daily financing: (annual rate on long notional, on short notional) - a swap on the CFD.
CFD_SWAP = (Decimal("-0.065"), Decimal("0.012"))
BORROW_RATE = Decimal("-0.03")
DIVIDENDS = {
    "CRVN": (date(2026, 11, 13), Decimal("0.22")),
    "OSTB": (date(2026, 10, 21), Decimal("0.35")),
}


def _q(value: Decimal, places: str) -> Decimal:
    return value.quantize(Decimal(places), rounding=ROUND_HALF_EVEN)


def _minor(currency: str) -> str:
    return "1" if currency == "JPY" else "0.01"


def _trading_days() -> list[date]:
    days, day = [], START
    while day <= END:
        if day.weekday() < 5:
            days.append(day)
        day += timedelta(days=1)
    return days


def _stamp(moment: datetime, zone: ZoneInfo) -> str:
    local = moment.astimezone(zone)
    return local.isoformat(timespec="milliseconds")


class Desk:
    def __init__(self) -> None:
        self.rng = random.Random(SEED)
        self.fills: list[dict[str, str]] = []
        self.financing: list[dict[str, str]] = []
        self.positions: dict[str, int] = {}
        self.closing: dict[tuple[str, date], Decimal] = {}
        self.order_number = 0

    def run(self) -> None:
        days = _trading_days()
        for instrument in INSTRUMENTS:
            self._trade(instrument, days)
        self._finance(days)
        self.fills.sort(key=lambda row: (datetime.fromisoformat(row["time"]), row["fill_id"]))

    def _trade(self, inst: Instrument, days: list[date]) -> None:
        zone = pinned_zone(inst.zone)
        price = inst.price
        decisions = sorted(self.rng.sample(range(len(days) * 6), inst.decisions))
        position = 0
        for slot in decisions:
            day = days[slot // 6]
            local = datetime(day.year, day.month, day.day, 9, 30, tzinfo=zone)
            moment = local + timedelta(
                minutes=55 * (slot % 6) + self.rng.randint(0, 50), seconds=self.rng.randint(0, 59)
            )
            price = self._walk(price, inst)
            change = self._decide(position, inst)
            if change:
                self._order(inst, moment, price, change)
                position += change
            self.closing[(inst.symbol, day)] = price
        self.positions[inst.symbol] = position

    def _walk(self, price: Decimal, inst: Instrument) -> Decimal:
        """A random walk in whole ticks, about 1.2% a step."""
        spread = int(price / inst.tick * Decimal("0.012")) or 1
        ticks = round(self.rng.gauss(0, spread))
        return max(inst.tick, price + inst.tick * ticks)

    def _decide(self, position: int, inst: Instrument) -> int:
        size = self.rng.randint(1, 6) * inst.lot
        roll = self.rng.random()
        if position == 0:
            return size if roll < 0.6 else -size
        direction = 1 if position > 0 else -1
        if roll < 0.35:
            return direction * size  # scale in
        if roll < 0.75:
            return -direction * min(abs(position), size)  # scale out or exit
        return -direction * (abs(position) + size)  # flip through zero

    def _order(self, inst: Instrument, moment: datetime, price: Decimal, change: int) -> None:
        self.order_number += 1
        order_id = f"ORD-{self.order_number:05d}"
        remaining = abs(change)
        parts = []
        while remaining:
            piece = (
                min(remaining, inst.lot * self.rng.randint(1, 3))
                if inst.lot > 1
                else min(remaining, self.rng.randint(1, 3))
            )
            parts.append(piece)
            remaining -= piece
        order_fee = max(
            inst.minimum_fee, _q(inst.per_unit_fee * abs(change), _minor(inst.currency))
        )
        fees = _split(order_fee, parts, _minor(inst.currency))
        for n, (quantity, fee) in enumerate(zip(parts, fees, strict=True)):
            fill_price = price + inst.tick * self.rng.randint(-1, 1)
            when = moment + timedelta(milliseconds=self.rng.randint(50, 900) * (n + 1))
            self.fills.append(
                {
                    "fill_id": f"{order_id}-{n + 1}",
                    "account": inst.account,
                    "instrument": inst.symbol,
                    "side": "buy" if change > 0 else "sell",
                    "quantity": str(quantity),
                    "price": str(fill_price),
                    "time": _stamp(when, pinned_zone(inst.zone)),
                    "commission": str(fee),
                    "currency": inst.currency,
                    "multiplier": str(inst.multiplier),
                    "order_id": order_id,
                    "venue": inst.venue,
                    "desk_note": self.rng.choice(["", "", "algo", "manual", "rebalance"]),
                }
            )

    def _finance(self, days: list[date]) -> None:
        """Nightly swap on the CFD, borrow fees and dividends on short equity positions."""
        held = _positions_by_night(self.fills)
        number = 0
        for inst in INSTRUMENTS:
            if inst.account == "LMC-FUT":
                continue
            zone = pinned_zone(inst.zone)
            last_price = inst.price
            for day in days:
                last_price = self.closing.get((inst.symbol, day), last_price)
                quantity = held.get((inst.symbol, day), 0)
                at = datetime(
                    day.year, day.month, day.day, 17, 0, tzinfo=pinned_zone("America/New_York")
                ).astimezone(UTC)
                notional = abs(quantity) * last_price * inst.multiplier
                nights = 3 if day.weekday() == 4 else 1
                for kind, rate in self._rates(inst, quantity):
                    amount = _q(notional * rate * nights / 360, _minor(inst.currency))
                    if amount:
                        number += 1
                        self._event(number, inst, at, amount, kind, zone)
                dividend = DIVIDENDS.get(inst.symbol)
                if dividend and dividend[0] == day and quantity < 0:
                    number += 1
                    amount = _q(quantity * dividend[1], _minor(inst.currency))
                    self._event(number, inst, at, amount, "dividend", zone)
        # A borrow fee booked after a short was covered: no open position to attribute it to.
        symbol, late = _flat_gap(self.fills, "HLVD")
        self._event(
            number + 1,
            next(i for i in INSTRUMENTS if i.symbol == symbol),
            late,
            Decimal("-3.17"),
            "borrow",
            pinned_zone("America/New_York"),
        )

    def _rates(self, inst: Instrument, quantity: int) -> list[tuple[str, Decimal]]:
        if quantity == 0:
            return []
        if inst.account == "LMC-CFD":
            return [("swap", CFD_SWAP[0] if quantity > 0 else CFD_SWAP[1])]
        return [("borrow", BORROW_RATE)] if quantity < 0 else []

    def _event(
        self,
        number: int,
        inst: Instrument,
        at: datetime,
        amount: Decimal,
        kind: str,
        zone: ZoneInfo,
    ) -> None:
        self.financing.append(
            {
                "event_id": f"FIN-{number:05d}",
                "account": inst.account,
                "instrument": inst.symbol,
                "time": _stamp(at, zone),
                "amount": str(amount),
                "currency": inst.currency,
                "kind": kind,
            }
        )


def _split(total: Decimal, parts: list[int], minor: str) -> list[Decimal]:
    """A broker's split of one order's fee over its fills: pro rata, remainder on the last."""
    whole = sum(parts)
    pieces = [_q(total * part / whole, minor) for part in parts[:-1]]
    return [*pieces, total - sum(pieces, Decimal(0))]


def _positions_by_night(fills: list[dict[str, str]]) -> dict[tuple[str, date], int]:
    """Signed position held at 17:00 New York each trading day."""
    cutoff_zone = pinned_zone("America/New_York")
    events = sorted((datetime.fromisoformat(f["time"]), f) for f in fills)
    held: dict[tuple[str, date], int] = {}
    running: dict[str, int] = {}
    index = 0
    for day in _trading_days():
        cutoff = datetime(day.year, day.month, day.day, 17, 0, tzinfo=cutoff_zone)
        while index < len(events) and events[index][0] < cutoff:
            fill = events[index][1]
            sign = 1 if fill["side"] == "buy" else -1
            running[fill["instrument"]] = running.get(fill["instrument"], 0) + sign * int(
                fill["quantity"]
            )
            index += 1
        for symbol, quantity in running.items():
            held[(symbol, day)] = quantity
    return held


def _flat_gap(fills: list[dict[str, str]], symbol: str) -> tuple[str, datetime]:
    """A moment, an hour after a short was covered, when the position is still flat."""
    running = 0
    rows = sorted(
        (datetime.fromisoformat(f["time"]), f) for f in fills if f["instrument"] == symbol
    )
    for (when, fill), (after, _) in itertools.pairwise(rows):
        was_short = running < 0
        running += (1 if fill["side"] == "buy" else -1) * int(fill["quantity"])
        if was_short and running == 0 and after - when > timedelta(hours=2):
            return symbol, (when + timedelta(hours=1)).astimezone(UTC)
    raise RuntimeError(f"no flat gap after a short in {symbol}")


def _write(path: Path, rows: list[dict[str, str]]) -> None:
    with path.open("w", newline="", encoding="utf-8") as handle:
        writer = csv.DictWriter(handle, fieldnames=list(rows[0]), lineterminator="\n")
        writer.writeheader()
        writer.writerows(rows)


def main() -> None:
    desk = Desk()
    desk.run()
    _write(HERE / "fills.csv", desk.fills)
    _write(HERE / "financing.csv", desk.financing)
    print(f"wrote {len(desk.fills)} fills and {len(desk.financing)} financing events to {HERE}")


if __name__ == "__main__":
    main()
