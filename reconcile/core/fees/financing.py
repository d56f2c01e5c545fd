"""Expected overnight financing of every position and day, against what was booked.

Positions come from the fills: the open quantity at a day's cut-off is the signed sum of the fills
before that instant, which is the engine's position (a fill at the cut-off itself counts from the
next day, as the engine applies financing before a fill at the same instant). Notional needs a
price: the latest mark at or before the cut-off (the account's own, or one for every account;
the account's own at an equal time), or else the price of the last fill at or before it.

A booked event belongs to the financing day of the latest cut-off at or before its time, under
the first rule that covers its account, instrument and kind.
"""

from __future__ import annotations

import bisect
from collections.abc import Iterator
from dataclasses import dataclass, field
from datetime import date, datetime, time, timedelta
from decimal import Decimal
from fractions import Fraction
from typing import Any

import pandas as pd

from reconcile.core.fees.daycount import WEEKDAYS, nights_charged, year_fraction
from reconcile.core.fees.facts import FillFacts
from reconcile.core.fees.findings import (
    OVERCHARGE,
    UNDERCHARGE,
    UNEXPLAINED,
    Finding,
    classify,
    over_and_under,
)
from reconcile.core.fees.period import Period
from reconcile.core.fees.rules import FinancingRule, Schedule
from reconcile.errors import Problem, ScheduleError, raise_if_problems
from reconcile.money import ZERO, Rounding, currency_places, round_fraction
from reconcile.schema import SOURCE_ROW
from reconcile.timezones import zone

Row = dict[str, Any]
Key = tuple[str, str]
ONE_DAY = timedelta(days=1)


@dataclass
class _Book:
    """One account and instrument: its fills in time order, running positions and marks."""

    currency: str
    multiplier: Decimal = Decimal(1)
    times: list[int] = field(default_factory=list)
    positions: list[Decimal] = field(default_factory=list)
    prices: list[Decimal] = field(default_factory=list)
    marks: list[tuple[list[int], list[Decimal]]] = field(default_factory=list)

    def position(self, cutoff: int) -> Decimal:
        count = bisect.bisect_left(self.times, cutoff)
        return self.positions[count - 1] if count else ZERO

    def price(self, cutoff: int) -> tuple[Decimal | None, str]:
        """The latest mark at or before the cut-off (the account's own at an equal time: its
        series comes first), else the last fill's price."""
        latest: tuple[int, Decimal] | None = None
        for times, prices in self.marks:
            index = bisect.bisect_right(times, cutoff) - 1
            if index >= 0 and (latest is None or times[index] > latest[0]):
                latest = times[index], prices[index]
        if latest is not None:
            return latest[1], "mark"
        index = bisect.bisect_right(self.times, cutoff) - 1
        return (self.prices[index], "last fill") if index >= 0 else (None, "")


@dataclass(frozen=True)
class _Event:
    event_id: str
    account: str
    instrument: str
    time: pd.Timestamp
    amount: Decimal
    currency: str
    kind: str


@dataclass
class FinancingAudit:
    days: list[Row]
    findings: list[Finding]
    unmatched: list[Row]


def audit_financing(
    facts: list[FillFacts],
    financing: pd.DataFrame,
    marks: pd.DataFrame | None,
    schedule: Schedule,
    period: Period | None,
    tolerance: Decimal,
) -> FinancingAudit:
    """Every (position, rule, day) the schedule finances or an event was booked for, in period."""
    books = _books(facts, marks)
    events = _events(financing)
    _check_currencies(financing, events, books)
    for event in events:
        books.setdefault((event.account, event.instrument), _Book(event.currency))
    candidates = {
        key: [r for r in schedule.financing if r.selector.covers(*key, book.currency)]
        for key, book in books.items()
    }
    audit = FinancingAudit([], [], [])
    booked = _bucket_events(financing, events, candidates, schedule, period, audit.unmatched)
    nightly = _Nightly(schedule, booked, tolerance, audit)
    days = _days(facts, booked, period)
    for key in sorted(books):
        nightly.audit_position(key, books[key], candidates[key], days)
    if nightly.missing:
        raise ScheduleError(schedule.source, list(nightly.missing.values()))
    for (_key, kind, day), left in sorted(booked.items(), key=lambda item: str(item[0])):
        for event in left:
            reason = f"no financing rule valid on {day.isoformat()} covers kind {kind}"
            audit.unmatched.append(_unmatched_row(event, reason))
    return audit


@dataclass
class _Nightly:
    """Prices one position's days rule by rule, taking the booked events each rule audits."""

    schedule: Schedule
    booked: dict[tuple[Key, str, date], list[_Event]]
    tolerance: Decimal
    audit: FinancingAudit
    missing: dict[str, Problem] = field(default_factory=dict)

    def __post_init__(self) -> None:
        self.slots = _Slots(self.schedule.rounding)

    def audit_position(
        self, key: Key, book: _Book, rules: list[FinancingRule], days: list[date]
    ) -> None:
        for day in days:
            claimed: set[str] = set()
            for rule in rules:
                kinds = (
                    [k for k in rule.kinds if k not in claimed]
                    if rule.selector.valid_on(day)
                    else []
                )
                if not kinds:
                    continue
                claimed.update(kinds)
                charged = [e for kind in kinds for e in self.booked.pop((key, kind, day), [])]
                try:
                    priced = _price_day(key, book, self.slots.get(rule, day), charged)
                except LookupError:
                    self.missing.setdefault(rule.name, _missing_fixing(self.schedule, rule, day))
                    continue
                if priced is not None:
                    _settle(priced, self.tolerance, self.audit)


def _books(facts: list[FillFacts], marks: pd.DataFrame | None) -> dict[Key, _Book]:
    books: dict[Key, _Book] = {}
    for fill in sorted(facts, key=lambda f: (f.time, f.index)):
        book = books.setdefault((fill.account, fill.instrument), _Book(fill.currency))
        book.multiplier = fill.multiplier
        running = book.positions[-1] if book.positions else ZERO
        book.times.append(fill.time.value)
        book.positions.append(running + fill.signed_quantity)
        book.prices.append(fill.price)
    if marks is not None and len(marks):
        _attach_marks(books, marks)
    return books


def _attach_marks(books: dict[Key, _Book], marks: pd.DataFrame) -> None:
    ordered = marks.sort_values("time", kind="stable")
    series: dict[Key, tuple[list[int], list[Decimal]]] = {}
    for account, instrument, stamp, price in zip(
        ordered["account"].tolist(),
        ordered["instrument"].tolist(),
        ordered["time"].tolist(),
        ordered["price"].tolist(),
        strict=True,
    ):
        times, prices = series.setdefault((account, instrument), ([], []))
        times.append(stamp.value)
        prices.append(price)
    for (account, instrument), book in books.items():
        book.marks = [series[k] for k in ((account, instrument), ("", instrument)) if k in series]


def _events(financing: pd.DataFrame) -> list[_Event]:
    columns = ["event_id", "account", "instrument", "time", "amount", "currency", "kind"]
    values = [financing[c].tolist() for c in columns]
    return [_Event(*row) for row in zip(*values, strict=True)]


def _check_currencies(
    financing: pd.DataFrame, events: list[_Event], books: dict[Key, _Book]
) -> None:
    """A financing event must be in its position's currency, or it cannot be compared."""
    rows = (
        financing[SOURCE_ROW].tolist() if SOURCE_ROW in financing.columns else [None] * len(events)
    )
    source = str((financing.attrs.get("read_summary") or {}).get("source", "financing"))
    problems = [
        Problem(
            source,
            f"currency {book.currency}, the currency of {event.account} {event.instrument} in "
            "the fills",
            event.currency,
            row,
            "currency",
            "currency mismatch",
        )
        for event, row in zip(events, rows, strict=True)
        if (book := books.get((event.account, event.instrument)))
        and event.currency != book.currency
    ]
    raise_if_problems(source, problems)


def _bucket_events(
    financing: pd.DataFrame,
    events: list[_Event],
    candidates: dict[Key, list[FinancingRule]],
    schedule: Schedule,
    period: Period | None,
    unmatched: list[Row],
) -> dict[tuple[Key, str, date], list[_Event]]:
    """Events by position, kind and financing day; those no rule covers go to ``unmatched``."""
    local = _LocalTimes(financing["time"])
    booked: dict[tuple[Key, str, date], list[_Event]] = {}
    for n in sorted(range(len(events)), key=lambda i: (events[i].time.value, i)):
        event = events[n]
        key = (event.account, event.instrument)
        rule = next((r for r in candidates[key] if event.kind in r.kinds), None)
        if rule is None:
            reason = f"no financing rule covers kind {event.kind} for this account and instrument"
            if period is None or local.at(n, schedule.timezone)[0] in period:
                unmatched.append(_unmatched_row(event, reason))
            continue
        day, clock = local.at(n, rule.cutoff_timezone)
        if clock < rule.cutoff:
            day -= ONE_DAY  # before the day's cut-off: it pays for the previous one
        if period is None or day in period:
            booked.setdefault((key, event.kind, day), []).append(event)
    return booked


class _LocalTimes:
    """Local dates and clock times of every event, converted once per time zone."""

    def __init__(self, times: pd.Series) -> None:
        self.times = times
        self.zones: dict[str, tuple[list[date], list[time]]] = {}

    def at(self, n: int, timezone: str) -> tuple[date, time]:
        if timezone not in self.zones:
            local = self.times.dt.tz_convert(zone(timezone))
            self.zones[timezone] = (local.dt.date.tolist(), local.dt.time.tolist())
        days, clocks = self.zones[timezone]
        return days[n], clocks[n]


def cutoff_instant(day: date, rule: FinancingRule) -> pd.Timestamp:
    local = datetime.combine(day, rule.cutoff, tzinfo=zone(rule.cutoff_timezone))
    return pd.Timestamp(local).tz_convert("UTC")


def _days(
    facts: list[FillFacts],
    booked: dict[tuple[Key, str, date], list[_Event]],
    period: Period | None,
) -> list[date]:
    """Every calendar day of the period, or from the first to the last day the inputs touch."""
    if period is not None:
        start, end = period.start, period.end
    else:
        touched = [fill.day for fill in facts] + [day for (_, _, day) in booked]
        if not touched:
            return []
        start, end = min(touched), max(touched)
    return [start + ONE_DAY * n for n in range((end - start).days + 1)]


@dataclass(frozen=True)
class _Slot:
    """One rule's financing day: the same cut-off, nights and weight for every position."""

    rule: FinancingRule
    day: date
    cutoff: pd.Timestamp
    nights: int
    weight: Fraction  # day-count fraction of the nights (rates) or their number (swap points)
    rounding: Rounding


class _Slots:
    def __init__(self, rounding: Rounding) -> None:
        self.rounding = rounding
        self.known: dict[tuple[str, date], _Slot] = {}

    def get(self, rule: FinancingRule, day: date) -> _Slot:
        slot = self.known.get((rule.name, day))
        if slot is None:
            nights = nights_charged(day, rule.triple_weekday, rule.holidays)
            weight = _nights_fraction(rule, day, nights)
            slot = _Slot(rule, day, cutoff_instant(day, rule), nights, weight, self.rounding)
            self.known[(rule.name, day)] = slot
        return slot


@dataclass(frozen=True)
class _Priced:
    """A financing day's row, with what is needed to name the cause of a finding."""

    row: Row
    slot: _Slot
    per_night: Decimal


def _price_day(key: Key, book: _Book, slot: _Slot, charged: list[_Event]) -> _Priced | None:
    """The day's expected and booked amounts; None when neither is there."""
    position = book.position(slot.cutoff.value)
    if not position and not charged:
        return None
    terms = _Terms(slot.rule, position, slot.day)
    price, source = book.price(slot.cutoff.value) if position and slot.nights else (None, "")
    per_night = terms.per_night(price, book.multiplier)
    expected = _amount(slot, per_night, slot.nights, book.currency)
    if not expected and not charged:
        return None
    paid = sum((event.amount for event in charged), ZERO)
    row = {
        "account": key[0],
        "instrument": key[1],
        "currency": book.currency,
        "rule": slot.rule.name,
        "date": slot.day.isoformat(),
        "weekday": WEEKDAYS[slot.day.weekday()][:3].title(),
        "cutoff": slot.cutoff,
        "position": position,
        "price": price,
        "price_source": source,
        "notional": None if price is None else abs(position * price * book.multiplier),
        "annual_rate": terms.rate,
        "swap_points": terms.points,
        "nights": slot.nights,
        "expected": expected,
        "charged": paid,
        "difference": paid - expected,
        "events": len(charged),
        "event_ids": ", ".join(event.event_id for event in charged),
    }
    return _Priced(row, slot, per_night)


def _amount(slot: _Slot, per_night: Decimal, nights: int, currency: str) -> Decimal:
    """``per_night`` over ``nights`` nights from the slot's day, rounded to the minor unit."""
    if not per_night or not nights:
        return ZERO
    weight = slot.weight
    if nights != slot.nights:
        weight = _nights_fraction(slot.rule, slot.day, nights)
    return round_fraction(Fraction(per_night) * weight, currency_places(currency), slot.rounding)


class _Terms:
    """The rate or swap points that apply to a position on one day."""

    def __init__(self, rule: FinancingRule, position: Decimal, day: date) -> None:
        self.rule = rule
        self.position = position
        long = position > 0
        self.rate: Decimal | None = None
        self.points: Decimal | None = None
        if position and rule.uses_points:
            self.points = rule.points(long)
        elif position:
            self.rate = rule.annual_rate(long, day)

    def per_night(self, price: Decimal | None, multiplier: Decimal) -> Decimal:
        """The exact signed amount of one night before the day count (credit positive)."""
        units = abs(self.position) * multiplier
        if self.points is not None:
            return units * self.points * self.rule.point_size
        if self.rate is None or price is None:
            return ZERO
        sign = -1 if self.position > 0 else 1  # a long pays its rate, a short receives its rate
        return sign * abs(units * price) * self.rate


def _nights_fraction(rule: FinancingRule, day: date, nights: int) -> Fraction:
    """What ``nights`` nights weigh: a day-count fraction for rates, a count for swap points."""
    if rule.uses_points:
        return Fraction(nights)
    return year_fraction(rule.day_count, day, nights)


def _settle(priced: _Priced, tolerance: Decimal, audit: FinancingAudit) -> None:
    """Classify a day, name the likely cause of a finding, and keep the row."""
    row = priced.row
    excess = row["expected"] - row["charged"]  # a charge is negative: paying more lowers it
    status = classify(excess, tolerance)
    over, under = over_and_under(excess, status)
    finding = status in (OVERCHARGE, UNDERCHARGE)
    row.update(
        overcharge=over, undercharge=under, status=status, cause=_cause(priced) if finding else ""
    )
    audit.days.append(row)
    if finding:
        audit.findings.append(_finding(row))


def _cause(priced: _Priced) -> str:
    row = priced.row
    if not row["events"]:
        return "no charge booked"
    if not row["position"]:
        return "charged while the position was flat"
    if not row["nights"]:
        return "charged on a day that carries no nights (weekend or holiday)"
    if row["events"] > 1:
        return f"{row['events']} charges booked for one day"
    if row["annual_rate"] is None and row["swap_points"] is None:
        side = "long" if row["position"] > 0 else "short"
        return f"charged, but the rule does not finance a {side} position"
    if row["expected"] and row["charged"] == -row["expected"]:
        return "booked with the opposite sign"
    for nights in _other_nights(row["nights"]):
        if _amount(priced.slot, priced.per_night, nights, row["currency"]) == row["charged"]:
            return f"{nights} nights charged, {row['nights']} expected"
    return UNEXPLAINED


def _other_nights(expected: int) -> Iterator[int]:
    return (n for n in range(1, 8) if n != expected)


def _finding(row: Row) -> Finding:
    return Finding(
        charge="financing",
        account=row["account"],
        instrument=row["instrument"],
        venue="",
        currency=row["currency"],
        month=row["date"][:7],
        reference=row["date"],
        time=row["cutoff"],
        rule=row["rule"],
        expected=row["expected"],
        charged=row["charged"],
        overcharge=row["overcharge"],
        undercharge=row["undercharge"],
        cause=row["cause"],
    )


def _missing_fixing(schedule: Schedule, rule: FinancingRule, day: date) -> Problem:
    assert rule.benchmark is not None
    return Problem(
        schedule.source,
        f"a fixing on or before {day.isoformat()} (financing rule {rule.name!r} needs one)",
        None,
        key=f"benchmark {rule.benchmark.name!r}",
        reason="missing fixing",
    )


def _unmatched_row(event: _Event, reason: str) -> Row:
    return {
        "source": "financing",
        "id": event.event_id,
        "account": event.account,
        "instrument": event.instrument,
        "venue": "",
        "time": event.time,
        "currency": event.currency,
        "amount": event.amount,
        "reason": reason,
    }
