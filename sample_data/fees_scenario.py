"""Write the fee-audit demo: marks for the sample positions, and a copy with planted overcharges.

The sample fills and financing (``generate.py``) were charged exactly by the invented schedule in
``larkmoor-schedule.toml``, except one borrow fee that ``generate.py`` books after a short was
covered. This script

- writes ``marks.csv``: the generator's closing price of each instrument and day, stamped 16:30
  New York, so the audit prices financing on the notional the generator used;
- writes ``fees-planted/``: the same fills and financing with one overcharge of each kind the fee
  audit looks for, and ``planted.csv``, the answer key (what was planted, and by how much).

Every number is made up. Run ``python sample_data/fees_scenario.py`` after ``generate.py``
(``make sample-data`` runs both); the output is identical on every run.
"""

from __future__ import annotations

import csv
from collections.abc import Callable
from datetime import date, datetime, timedelta
from decimal import ROUND_HALF_EVEN, Decimal
from pathlib import Path

from generate import CFD_SWAP, Desk, _positions_by_night, _trading_days

from reconcile.timezones import zone

HERE = Path(__file__).parent
PLANTED = HERE / "fees-planted"
NEW_YORK = zone("America/New_York")
MARK_TIME = (16, 30)
CFD = "SILVR-CFD"
Row = dict[str, str]


def _csv(path: Path) -> list[Row]:
    with path.open(newline="", encoding="utf-8") as handle:
        return list(csv.DictReader(handle))


def _write(path: Path, rows: list[Row]) -> None:
    with path.open("w", newline="", encoding="utf-8") as handle:
        writer = csv.DictWriter(handle, fieldnames=list(rows[0]), lineterminator="\n")
        writer.writeheader()
        writer.writerows(rows)


def _at(day: date, hour: int, minute: int = 0) -> datetime:
    return datetime(day.year, day.month, day.day, hour, minute, tzinfo=NEW_YORK)


def _stamp(moment: datetime) -> str:
    return moment.astimezone(NEW_YORK).isoformat(timespec="milliseconds")


def _cents(value: Decimal) -> Decimal:
    return value.quantize(Decimal("0.01"), rounding=ROUND_HALF_EVEN)


class Scenario:
    def __init__(self) -> None:
        self.desk = Desk()
        self.desk.run()
        self.fills = _csv(HERE / "fills.csv")
        self.financing = _csv(HERE / "financing.csv")
        if self.fills != self.desk.fills:
            raise SystemExit("sample_data/fills.csv differs from generate.py: run it first")
        self.held = _positions_by_night(self.fills)
        self.answers: list[Row] = []

    def marks(self) -> list[Row]:
        ordered = sorted(self.desk.closing.items(), key=lambda item: (item[0][1], item[0][0]))
        return [
            {"time": _stamp(_at(day, *MARK_TIME)), "instrument": symbol, "price": str(price)}
            for (symbol, day), price in ordered
        ]

    def plant(
        self,
        charge: str,
        reference: str,
        instrument: str,
        amount: Decimal,
        what: str,
        cause: str,
        *,
        under: bool = False,
        currency: str = "USD",
    ) -> None:
        """Record a planted finding in the answer key (``under``: money the broker did not take)."""
        zero = "0" if currency == "JPY" else "0.00"
        self.answers.append(
            {
                "charge": charge,
                "reference": reference,
                "instrument": instrument,
                "currency": currency,
                "overcharge": zero if under else str(amount),
                "undercharge": str(amount) if under else zero,
                "cause": cause,
                "planted": what,
            }
        )

    # --- commissions ---

    def minimum_on_every_fill(self) -> None:
        """A small order whose minimum the broker charged on each partial fill."""
        order = self._first_order(
            "CRVN",
            "2026-11",
            lambda rows: len(rows) == 2 and all(r["quantity"] == "100" for r in rows),
        )
        for row in order:
            row["commission"] = "1.00"
        self.plant(
            "commission",
            order[0]["order_id"],
            "CRVN",
            Decimal("1.00"),
            "the 1.00 minimum charged on both partial fills of a 200-share order",
            "every partial fill charged as an order of its own (minimum and fixed fees)",
        )

    def rate_as_percentage(self) -> None:
        """A Tokyo order charged 0.4% of its value instead of 0.4 yen a share."""
        (row,) = self._first_order("MZKR", "2026-10", lambda rows: len(rows) == 1)
        value = Decimal(row["quantity"]) * Decimal(row["price"])
        charged = (value * Decimal("0.004")).quantize(Decimal(1), rounding=ROUND_HALF_EVEN)
        expected = max(Decimal(100), Decimal("0.4") * Decimal(row["quantity"]))
        row["commission"] = str(charged)
        self.plant(
            "commission",
            row["order_id"],
            "MZKR",
            charged - expected,
            f"0.4% of {value} JPY charged instead of 0.4 JPY a share",
            "per-unit rate charged as a percentage of notional",
            currency="JPY",
        )

    def tier_not_applied(self) -> None:
        """Orders that take November past 400 contracts, then one still charged at 1.10."""
        futures = [r for r in self.fills if r["instrument"] == "VLT50-Z26"]
        november = [r for r in futures if self._local(r["time"]).strftime("%Y-%m") == "2026-11"]
        volume = sum(int(r["quantity"]) for r in november)
        last = max(datetime.fromisoformat(r["time"]) for r in november)
        template = november[-1]
        block = [("buy", 60, "66.00"), ("sell", 60, "66.00"), ("buy", 5, "5.50")]
        if not volume < 400 <= volume + 120:
            raise SystemExit(f"VLT50 November volume {volume} no longer straddles the tier")
        for n, (side, quantity, commission) in enumerate(block, start=1):
            when = last + timedelta(minutes=5 * n)
            if self._local(when.isoformat()).month != 11:
                raise SystemExit("the planted futures orders would fall in December")
            self.fills.append(
                template
                | {
                    "fill_id": f"ORD-P000{n}-1",
                    "order_id": f"ORD-P000{n}",
                    "side": side,
                    "quantity": str(quantity),
                    "time": when.isoformat(timespec="milliseconds"),
                    "commission": commission,
                    "desk_note": "block",
                }
            )
        self.plant(
            "commission",
            "ORD-P0003",
            "VLT50-Z26",
            Decimal("0.75"),
            f"5 contracts at 1.10 after November reached {volume + 120} (tier 2 from 400: 0.95)",
            "tier 1 rates charged; tier 2 applies",
        )

    def fills_no_rule_covers(self) -> None:
        """A round trip in an instrument the schedule does not list: listed, never priced."""
        day = date(2026, 11, 18)
        for n, (side, price) in enumerate((("buy", "9.50"), ("sell", "9.60")), start=1):
            self.fills.append(
                {
                    "fill_id": f"ORD-P001{n}-1",
                    "account": "LMC-EQ",
                    "instrument": "KELP",
                    "side": side,
                    "quantity": "100",
                    "price": price,
                    "time": _stamp(_at(day, 11 + n)),
                    "commission": "1.00",
                    "currency": "USD",
                    "multiplier": "1",
                    "order_id": f"ORD-P001{n}",
                    "venue": "XNMS",
                    "desk_note": "manual",
                }
            )

    # --- financing (the CFD swap: a long pays 6.5%, a short receives 1.2%, ACT/360) ---

    def flat_day_charge(self) -> None:
        day = next(
            d
            for d in self._cfd_days("2026-11")
            if self._position(d) == 0 and d.weekday() in (1, 2, 3) and not self._swap(d)
        )
        self._add_swap(day, Decimal("-4.12"), "P0001")
        self.plant(
            "financing",
            day.isoformat(),
            CFD,
            Decimal("4.12"),
            "a swap charged on a day the position was flat at the cut-off",
            "charged while the position was flat",
        )

    def wednesday_triple(self) -> None:
        day = next(
            d
            for d in self._cfd_days("2026-10")
            if d.weekday() == 2 and self._position(d) > 0 and self._swap(d)
        )
        event = self._swap(day)
        assert event is not None
        tripled = self._night(day, 3)
        extra = Decimal(event["amount"]) - tripled
        event["amount"] = str(tripled)
        self.plant(
            "financing",
            day.isoformat(),
            CFD,
            extra,
            "a long's swap charged three nights on a Wednesday (Friday carries the weekend)",
            "3 nights charged, 1 expected",
        )

    def missing_credit(self) -> None:
        day = next(d for d in self._cfd_days("2026-11") if self._position(d) < 0 and self._swap(d))
        event = self._swap(day)
        assert event is not None
        self.financing.remove(event)
        self.plant(
            "financing",
            day.isoformat(),
            CFD,
            Decimal(event["amount"]),
            "a short's credit never booked",
            "no charge booked",
        )

    def missing_debit(self) -> None:
        day = next(
            d
            for d in reversed(self._cfd_days("2026-11"))
            if self._position(d) > 0 and self._swap(d) and d.weekday() != 4
        )
        event = self._swap(day)
        assert event is not None
        self.financing.remove(event)
        self.plant(
            "financing",
            day.isoformat(),
            CFD,
            -Decimal(event["amount"]),
            "a long's charge never booked (the broker's loss, not leakage)",
            "no charge booked",
            under=True,
        )

    def weekend_charge(self) -> None:
        friday = next(
            d for d in self._cfd_days("2026-10") if d.weekday() == 4 and self._position(d) > 0
        )
        saturday = friday + timedelta(days=1)
        amount = self._night(friday, 1)
        self._add_swap(saturday, amount, "P0002")
        self.plant(
            "financing",
            saturday.isoformat(),
            CFD,
            -amount,
            "a swap charged on a Saturday besides Friday's three nights",
            "charged on a day that carries no nights (weekend or holiday)",
        )

    def generator_borrow_fee(self) -> None:
        """The one charge generate.py itself books off the schedule (see its _finance)."""
        event = next(e for e in self.financing if e["amount"] == "-3.17")
        local = self._local(event["time"])
        day = (local - timedelta(days=1) if local.hour < 17 else local).date()
        self.plant(
            "financing",
            day.isoformat(),
            event["instrument"],
            Decimal("3.17"),
            "generate.py: a borrow fee booked after the short was covered, on top of "
            "the night's own",
            "2 charges booked for one day",
        )

    # --- helpers ---

    def _first_order(
        self, symbol: str, month: str, accept: Callable[[list[Row]], bool]
    ) -> list[Row]:
        orders: dict[str, list[Row]] = {}
        for row in self.fills:
            if row["instrument"] == symbol and self._local(row["time"]).strftime("%Y-%m") == month:
                orders.setdefault(row["order_id"], []).append(row)
        return next(rows for rows in orders.values() if accept(rows))

    def _local(self, text: str) -> datetime:
        return datetime.fromisoformat(text).astimezone(NEW_YORK)

    def _cfd_days(self, month: str) -> list[date]:
        return [d for d in _trading_days() if d.strftime("%Y-%m") == month]

    def _position(self, day: date) -> int:
        return self.held.get((CFD, day), 0)

    def _swap(self, day: date) -> Row | None:
        stamp = _stamp(_at(day, 17))
        return next(
            (e for e in self.financing if e["instrument"] == CFD and e["time"] == stamp), None
        )

    def _price(self, day: date) -> Decimal:
        known = [d for (symbol, d) in self.desk.closing if symbol == CFD and d <= day]
        return self.desk.closing[(CFD, max(known))]

    def _night(self, day: date, nights: int) -> Decimal:
        """The swap of ``nights`` nights on the position at ``day``'s cut-off, as generated."""
        quantity = self._position(day)
        rate = CFD_SWAP[0] if quantity > 0 else CFD_SWAP[1]
        return _cents(abs(quantity) * self._price(day) * rate * nights / 360)

    def _add_swap(self, day: date, amount: Decimal, number: str) -> None:
        self.financing.append(
            {
                "event_id": f"FIN-{number}",
                "account": "LMC-CFD",
                "instrument": CFD,
                "time": _stamp(_at(day, 17)),
                "amount": str(amount),
                "currency": "USD",
                "kind": "swap",
            }
        )

    def write(self) -> None:
        _write(HERE / "marks.csv", self.marks())
        PLANTED.mkdir(exist_ok=True)
        self.fills.sort(key=lambda row: (datetime.fromisoformat(row["time"]), row["fill_id"]))
        self.financing.sort(key=lambda e: (datetime.fromisoformat(e["time"]), e["event_id"]))
        _write(PLANTED / "fills.csv", self.fills)
        _write(PLANTED / "financing.csv", self.financing)
        _write(PLANTED / "planted.csv", self.answers)


def main() -> None:
    scenario = Scenario()
    scenario.generator_borrow_fee()
    for plant in (
        scenario.minimum_on_every_fill,
        scenario.rate_as_percentage,
        scenario.tier_not_applied,
        scenario.fills_no_rule_covers,
        scenario.flat_day_charge,
        scenario.wednesday_triple,
        scenario.missing_credit,
        scenario.missing_debit,
        scenario.weekend_charge,
    ):
        plant()
    scenario.write()
    print(f"wrote marks.csv and {len(scenario.answers)} planted findings to {PLANTED}")


if __name__ == "__main__":
    main()
