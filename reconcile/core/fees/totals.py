"""Totals of the findings (by account, venue, instrument and month), top offenders, fee drag."""

from __future__ import annotations

from collections.abc import Callable, Iterable
from dataclasses import dataclass
from decimal import Decimal
from typing import Any

from reconcile.core.engine import EngineRun
from reconcile.core.fees.findings import Finding
from reconcile.core.fees.period import Period
from reconcile.money import ZERO, Rounding, divide, round_money
from reconcile.timezones import zone

Row = dict[str, Any]
DIMENSIONS: tuple[tuple[str, Callable[[Finding], str]], ...] = (
    ("total", lambda f: ""),
    ("account", lambda f: f.account),
    ("venue", lambda f: f.venue),
    ("instrument", lambda f: f.instrument),
    ("month", lambda f: f.month),
)
TOP_OFFENDERS = 10
DRAG_PLACES = 2


@dataclass
class _Sums:
    commission_overcharge: Decimal = ZERO
    commission_undercharge: Decimal = ZERO
    financing_overcharge: Decimal = ZERO
    financing_undercharge: Decimal = ZERO
    findings: int = 0

    def add(self, finding: Finding) -> None:
        if finding.charge == "commission":
            self.commission_overcharge += finding.overcharge
            self.commission_undercharge += finding.undercharge
        else:
            self.financing_overcharge += finding.overcharge
            self.financing_undercharge += finding.undercharge
        self.findings += 1

    def row(self) -> Row:
        return {
            **self.__dict__,
            "leakage": self.commission_overcharge + self.financing_overcharge,
        }


def leakage_totals(findings: list[Finding], currencies: Iterable[str]) -> list[Row]:
    """Over- and undercharge per dimension value and currency; a total row for every currency."""
    rows = []
    for dimension, value_of in DIMENSIONS:
        sums: dict[tuple[str, str], _Sums] = {}
        if dimension == "total":
            sums = {("", code): _Sums() for code in sorted(set(currencies))}
        for finding in findings:
            sums.setdefault((value_of(finding), finding.currency), _Sums()).add(finding)
        for (value, currency), total in sorted(sums.items()):
            rows.append(
                {"dimension": dimension, "value": value, "currency": currency} | total.row()
            )
    return rows


def top_offenders(findings: list[Finding], count: int = TOP_OFFENDERS) -> list[Row]:
    """The ``count`` largest overcharges in each currency, largest first."""
    rows = []
    for currency in sorted({f.currency for f in findings}):
        over = [f for f in findings if f.currency == currency and f.overcharge > 0]
        over.sort(key=lambda f: (-f.overcharge, f.time, f.reference))
        rows += [{"rank": n, **f.row()} for n, f in enumerate(over[:count], start=1)]
    return rows


def realized_gross(
    run: EngineRun, period: Period | None, timezone: str
) -> dict[tuple[str, str], Decimal]:
    """Exact gross realized P&L per account and currency of the lots closed in the period."""
    local = zone(timezone)
    gross: dict[tuple[str, str], Decimal] = {}
    for key in run.keys:
        for piece in key.pieces:
            if period is None or piece.close.time.tz_convert(local).date() in period:
                entry = (key.account, key.currency)
                gross[entry] = gross.get(entry, ZERO) + piece.gross
    return gross


def fee_drag(
    gross: dict[tuple[str, str], Decimal],
    fill_rows: list[Row],
    day_rows: list[Row],
    rounding: Rounding,
) -> list[Row]:
    """Commissions and financing paid as a percentage of gross realized P&L, per account.

    Charged and at the schedule's rates (a fill no rule covers counts as charged). The share is
    blank when gross realized P&L is not positive.
    """
    sums: dict[tuple[str, str], dict[str, Decimal]] = {}

    def add(account: str, currency: str, **amounts: Decimal) -> None:
        entry = sums.setdefault((account, currency), {})
        for name, amount in amounts.items():
            entry[name] = entry.get(name, ZERO) + amount

    for (account, currency), amount in gross.items():
        add(account, currency, gross=amount)
    for fill in fill_rows:
        expected = fill.get("expected")
        add(
            fill["account"],
            fill["currency"],
            commission=fill["charged"],
            commission_expected=fill["charged"] if expected is None else expected,
        )
    for day in day_rows:
        add(day["account"], day["currency"], financing=-day["charged"], expected=-day["expected"])
    return [_drag_row(key, entry, rounding) for key, entry in sorted(sums.items())]


def _drag_row(key: tuple[str, str], entry: dict[str, Decimal], rounding: Rounding) -> Row:
    account, currency = key
    gross = entry.get("gross", ZERO)
    commission, financing = entry.get("commission", ZERO), entry.get("financing", ZERO)
    at_schedule = entry.get("commission_expected", ZERO), entry.get("expected", ZERO)
    return {
        "account": account,
        "currency": currency,
        "gross_realized": round_money(gross, currency, rounding),
        "commission": round_money(commission, currency, rounding),
        "financing_cost": round_money(financing, currency, rounding),
        "fee_drag_pct": _share(commission + financing, gross),
        "commission_expected": round_money(at_schedule[0], currency, rounding),
        "financing_expected": round_money(at_schedule[1], currency, rounding),
        "fee_drag_expected_pct": _share(sum(at_schedule, ZERO), gross),
    }


def _share(cost: Decimal, gross: Decimal) -> Decimal | None:
    return divide(cost * 100, gross, DRAG_PLACES) if gross > 0 else None
