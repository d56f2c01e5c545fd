"""Expected commission of every fill and order under the schedule, against what was charged.

A *charge unit* is what the schedule prices in one go: an order's fills under one rule (the rule
charges per order) or a single fill (per fill, or a fill without an order id). Each unit's charge
is computed exactly, rounded once to the currency's minor unit, and an order's charge is split
over its fills by largest remainder. A unit that is off beyond the tolerance is a finding, and
the known ways a schedule gets misapplied are tried to name its likely cause.
"""

from __future__ import annotations

from collections.abc import Iterator, Sequence
from dataclasses import dataclass, field, replace
from decimal import Decimal
from typing import Any

from reconcile.core.fees.facts import FillFacts
from reconcile.core.fees.findings import (
    NO_RULE,
    OK,
    OVERCHARGE,
    SPLIT_DIFFERS,
    UNDERCHARGE,
    UNEXPLAINED,
    WITHIN_TOLERANCE,
    Finding,
    classify,
    over_and_under,
)
from reconcile.core.fees.period import Period
from reconcile.core.fees.rules import CommissionRule, Schedule, Terms
from reconcile.money import ZERO, Rounding, allocate, currency_places, round_money

Row = dict[str, Any]


def expected_charge(
    rule: CommissionRule,
    terms: Terms,
    fills: Sequence[FillFacts],
    opens_order: bool,
    rounding: Rounding,
) -> Decimal:
    """The schedule's charge for ``fills`` priced together, rounded to the minor unit."""
    quantity = sum((fill.quantity for fill in fills), ZERO)
    notional = sum((fill.notional for fill in fills), ZERO)
    raw = (
        terms.per_unit * quantity
        + (terms.bps * notional).scaleb(-4)
        + rule.per_fill * len(fills)
        + (rule.per_order if opens_order else ZERO)
    )
    if rule.minimum is not None:
        raw = max(raw, rule.minimum)
    if rule.maximum is not None:
        raw = min(raw, rule.maximum)
    if rule.maximum_bps is not None:
        raw = min(raw, (rule.maximum_bps * notional).scaleb(-4))
    return round_money(raw, fills[0].currency, rounding)


@dataclass
class _Unit:
    rule_index: int
    rule: CommissionRule
    fills: list[FillFacts]
    opens_order: bool
    tier: int | None = None
    tier_volume: Decimal | None = None
    expected: Decimal = ZERO
    shares: list[Decimal] = field(default_factory=list)
    status: str = OK
    cause: str = ""

    @property
    def first(self) -> FillFacts:
        return self.fills[0]

    @property
    def charged(self) -> Decimal:
        return sum((fill.charged for fill in self.fills), ZERO)

    @property
    def difference(self) -> Decimal:
        return self.charged - self.expected

    def volume(self) -> Decimal:
        assert self.rule.tiering is not None
        if self.rule.tiering.measure == "quantity":
            return sum((fill.quantity for fill in self.fills), ZERO)
        return sum((fill.notional for fill in self.fills), ZERO)


@dataclass
class CommissionAudit:
    fills: list[Row]
    orders: list[Row]
    findings: list[Finding]
    unmatched: list[Row]


def audit_commissions(
    facts: list[FillFacts], schedule: Schedule, period: Period | None, tolerance: Decimal
) -> CommissionAudit:
    """Price every fill under the schedule; rows only for charge units that start in ``period``.

    Fills outside the period still count towards the month's tier volume.
    """
    matched, unmatched = _match_rules(facts, schedule.commission)
    units = _units(matched, schedule.commission)
    _assign_tiers(units)
    for unit in units:
        terms = unit.rule.terms(unit.tier)
        unit.expected = expected_charge(
            unit.rule, terms, unit.fills, unit.opens_order, schedule.rounding
        )
        places = currency_places(unit.first.currency)
        unit.shares = allocate(unit.expected, [fill.quantity for fill in unit.fills], places)
        unit.status = classify(unit.difference, tolerance)
        if unit.status in (OVERCHARGE, UNDERCHARGE):
            unit.cause = _cause(unit, schedule.rounding)
    kept = [unit for unit in units if period is None or unit.first.day in period]
    lonely = [fill for fill in unmatched if period is None or fill.day in period]
    return CommissionAudit(
        fills=_fill_rows(kept, lonely),
        orders=_order_rows(kept),
        findings=[_finding(unit) for unit in kept if unit.status in (OVERCHARGE, UNDERCHARGE)],
        unmatched=[_unmatched_row(fill) for fill in lonely],
    )


def _match_rules(
    facts: list[FillFacts], rules: Sequence[CommissionRule]
) -> tuple[list[tuple[FillFacts, int]], list[FillFacts]]:
    """The first rule that covers each fill; fills no rule covers are set aside, never guessed."""
    matched, unmatched = [], []
    memo: dict[tuple[Any, ...], int | None] = {}
    for fill in facts:
        key = (fill.account, fill.instrument, fill.currency, fill.venue, fill.side, fill.day)
        if key not in memo:
            memo[key] = next(
                (
                    index
                    for index, rule in enumerate(rules)
                    if rule.selector.valid_on(fill.day)
                    and rule.selector.covers(*key[:3], venue=fill.venue, side=fill.side)
                ),
                None,
            )
        found = memo[key]
        if found is None:
            unmatched.append(fill)
        else:
            matched.append((fill, found))
    return matched, unmatched


def _units(matched: list[tuple[FillFacts, int]], rules: Sequence[CommissionRule]) -> list[_Unit]:
    units: list[_Unit] = []
    orders: dict[tuple[str, str, int], _Unit] = {}
    seen: set[tuple[str, str]] = set()
    for fill, index in sorted(matched, key=lambda pair: (pair[0].time, pair[0].index)):
        rule = rules[index]
        order = (fill.account, fill.order_id) if fill.order_id else None
        if rule.charged_per == "order" and order is not None:
            unit = orders.get((*order, index))
            if unit is None:
                unit = orders[(*order, index)] = _Unit(index, rule, [], opens_order=True)
                units.append(unit)
            unit.fills.append(fill)
        else:
            units.append(_Unit(index, rule, [fill], opens_order=order is None or order not in seen))
        if order is not None:
            seen.add(order)
    return units


def _assign_tiers(units: list[_Unit]) -> None:
    """Set each unit's tier from its month's volume under its rule (units are in time order)."""
    groups: dict[tuple[int, str, str], list[_Unit]] = {}
    for unit in units:
        tiering = unit.rule.tiering
        if tiering is not None:
            account = unit.first.account if tiering.volume == "account" else ""
            groups.setdefault((unit.rule_index, account, unit.first.month), []).append(unit)
    for members in groups.values():
        tiering = members[0].rule.tiering
        assert tiering is not None
        running = ZERO
        final = sum((unit.volume() for unit in members), ZERO)
        for unit in members:
            unit.tier_volume = final if tiering.basis == "final" else running
            unit.tier = tiering.tier_at(unit.tier_volume)
            running += unit.volume()


def _cause(unit: _Unit, rounding: Rounding) -> str:
    """The first known misapplication of the schedule that reproduces the charge exactly."""
    for label, amount in _misapplications(unit, rounding):
        if amount == unit.charged:
            return label
    return UNEXPLAINED


def _misapplications(unit: _Unit, rounding: Rounding) -> Iterator[tuple[str, Decimal]]:
    rule, terms = unit.rule, unit.rule.terms(unit.tier)
    if rule.charged_per == "order" and len(unit.fills) > 1:
        each = sum(
            (expected_charge(rule, terms, [fill], True, rounding) for fill in unit.fills), ZERO
        )
        yield "every partial fill charged as an order of its own (minimum and fixed fees)", each
    if rule.tiering is not None and unit.tier is not None:
        for other in range(len(rule.tiering.tiers)):
            if other != unit.tier:
                amount = expected_charge(
                    rule, rule.terms(other), unit.fills, unit.opens_order, rounding
                )
                yield f"tier {other + 1} rates charged; tier {unit.tier + 1} applies", amount
    if terms.per_unit:
        as_percent = replace(terms, per_unit=ZERO, bps=terms.bps + terms.per_unit * 100)
        amount = expected_charge(rule, as_percent, unit.fills, unit.opens_order, rounding)
        yield "per-unit rate charged as a percentage of notional", amount
    if unit.expected:
        yield "charged twice", unit.expected * 2
        yield "no commission charged", ZERO


def _fill_rows(units: list[_Unit], unmatched: list[FillFacts]) -> list[Row]:
    rows: list[tuple[int, Row]] = []
    for unit in units:
        for fill, share in zip(unit.fills, unit.shares, strict=True):
            difference = fill.charged - share
            # An order that ties but whose fills carry other shares than ours is not leakage.
            split_only = difference and unit.status in (OK, WITHIN_TOLERANCE)
            status = SPLIT_DIFFERS if split_only and len(unit.fills) > 1 else unit.status
            rows.append(
                (
                    fill.index,
                    _fill_columns(fill)
                    | {
                        "rule": unit.rule.name,
                        "charged_per": unit.rule.charged_per,
                        "tier": _tier_label(unit),
                        "expected": share,
                        "charged": fill.charged,
                        "difference": difference,
                        "status": status,
                    },
                )
            )
    for fill in unmatched:
        rows.append(
            (fill.index, _fill_columns(fill) | {"charged": fill.charged, "status": NO_RULE})
        )
    return [row for _, row in sorted(rows, key=lambda pair: pair[0])]


def _fill_columns(fill: FillFacts) -> Row:
    return {
        "fill_id": fill.fill_id,
        "order_id": fill.order_id,
        "account": fill.account,
        "instrument": fill.instrument,
        "venue": fill.venue,
        "side": fill.side,
        "time": fill.time,
        "quantity": fill.quantity,
        "price": fill.price,
        "multiplier": fill.multiplier,
        "notional": fill.notional,
        "currency": fill.currency,
    }


def _tier_label(unit: _Unit) -> str:
    return "" if unit.tier is None else str(unit.tier + 1)


def _order_rows(units: list[_Unit]) -> list[Row]:
    """One row per order and rule (a fill without an order id is an order of its own)."""
    groups: dict[tuple[str, str, int], list[_Unit]] = {}
    for unit in units:
        reference = unit.first.order_id or unit.first.fill_id
        groups.setdefault((unit.first.account, reference, unit.rule_index), []).append(unit)
    return [_order_row(members) for members in groups.values()]


def _order_row(units: list[_Unit]) -> Row:
    first = units[0]
    fills = [fill for unit in units for fill in unit.fills]
    over = under = ZERO
    for unit in units:
        unit_over, unit_under = over_and_under(unit.difference, unit.status)
        over, under = over + unit_over, under + unit_under
    expected = sum((unit.expected for unit in units), ZERO)
    charged = sum((unit.charged for unit in units), ZERO)
    return {
        "account": first.first.account,
        "order_id": first.first.order_id,
        "first_fill_id": first.first.fill_id,
        "instrument": first.first.instrument,
        "venue": ", ".join(dict.fromkeys(fill.venue for fill in fills)),
        "currency": first.first.currency,
        "rule": first.rule.name,
        "charged_per": first.rule.charged_per,
        "month": first.first.month,
        "time": first.first.time,
        "fills": len(fills),
        "quantity": sum((fill.quantity for fill in fills), ZERO),
        "notional": sum((fill.notional for fill in fills), ZERO),
        "tier": ", ".join(dict.fromkeys(_tier_label(unit) for unit in units)),
        "tier_volume": first.tier_volume,
        "expected": expected,
        "charged": charged,
        "difference": charged - expected,
        "overcharge": over,
        "undercharge": under,
        "status": _worst(unit.status for unit in units),
        "cause": "; ".join(dict.fromkeys(unit.cause for unit in units if unit.cause)),
    }


_SEVERITY = (OK, WITHIN_TOLERANCE, UNDERCHARGE, OVERCHARGE)


def _worst(statuses: Iterator[str]) -> str:
    return max(statuses, key=_SEVERITY.index)


def _finding(unit: _Unit) -> Finding:
    over, under = over_and_under(unit.difference, unit.status)
    first = unit.first
    single = unit.rule.charged_per == "fill" or not first.order_id
    return Finding(
        charge="commission",
        account=first.account,
        instrument=first.instrument,
        venue=first.venue,
        currency=first.currency,
        month=first.month,
        reference=first.fill_id if single else first.order_id,
        time=first.time,
        rule=unit.rule.name,
        expected=unit.expected,
        charged=unit.charged,
        overcharge=over,
        undercharge=under,
        cause=unit.cause,
    )


def _unmatched_row(fill: FillFacts) -> Row:
    return {
        "source": "fills",
        "id": fill.fill_id,
        "account": fill.account,
        "instrument": fill.instrument,
        "venue": fill.venue,
        "time": fill.time,
        "currency": fill.currency,
        "amount": fill.charged,
        "reason": "no commission rule covers this fill",
    }
