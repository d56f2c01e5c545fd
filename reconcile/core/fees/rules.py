"""The fee schedule as values: which fills and positions a rule covers, and what it charges.

The reader (:mod:`reconcile.io.readers.schedule`) builds these from TOML and has already checked
every value; here they only answer questions. Amounts are exact decimals in the rule's currency.
"""

from __future__ import annotations

import bisect
from collections.abc import Sequence
from dataclasses import dataclass, field
from datetime import date, time
from decimal import Decimal
from fnmatch import fnmatchcase
from typing import Literal

from reconcile.money import ZERO, Rounding

ChargedPer = Literal["order", "fill"]
TierMeasure = Literal["quantity", "notional"]
TierBasis = Literal["reached", "final"]
TierVolume = Literal["account", "all"]
DayCount = Literal["ACT/360", "ACT/365F", "ACT/ACT-ISDA"]

#: Kinds of financing event a financing rule audits when the schedule does not say.
DEFAULT_FINANCING_KINDS = ("swap", "financing")
FRIDAY = 4


@dataclass(frozen=True)
class Selector:
    """What a rule covers: every listed criterion must match; an empty one matches anything.

    Accounts, instruments and venues are exact names or shell-style globs (``VLT50-*``). The
    validity dates are local dates in the schedule's time zone, both ends included.
    """

    accounts: tuple[str, ...] = ()
    instruments: tuple[str, ...] = ()
    venues: tuple[str, ...] = ()
    currency: str | None = None
    side: str | None = None
    valid_from: date | None = None
    valid_until: date | None = None

    def covers(
        self,
        account: str,
        instrument: str,
        currency: str,
        venue: str | None = None,
        side: str | None = None,
    ) -> bool:
        """Whether the rule covers this account, instrument and currency (and venue and side)."""
        return (
            _any_match(self.accounts, account)
            and _any_match(self.instruments, instrument)
            and (venue is None or _any_match(self.venues, venue))
            and (self.currency is None or self.currency == currency)
            and (side is None or self.side is None or self.side == side)
        )

    def valid_on(self, day: date) -> bool:
        return (self.valid_from is None or day >= self.valid_from) and (
            self.valid_until is None or day <= self.valid_until
        )


def _any_match(patterns: Sequence[str], value: str) -> bool:
    return not patterns or any(fnmatchcase(value, pattern) for pattern in patterns)


@dataclass(frozen=True)
class Terms:
    """The variable part of a commission: a rate per unit and a rate in basis points of notional."""

    per_unit: Decimal = ZERO
    bps: Decimal = ZERO


@dataclass(frozen=True)
class Tier:
    """Rates from a monthly volume on (``start``); a rate left out keeps the rule's own."""

    start: Decimal
    per_unit: Decimal | None = None
    bps: Decimal | None = None


@dataclass(frozen=True)
class Tiering:
    """Monthly volume tiers: by quantity or notional, the tier reached so far or the final one."""

    tiers: tuple[Tier, ...]
    measure: TierMeasure = "quantity"
    basis: TierBasis = "reached"
    volume: TierVolume = "account"

    def tier_at(self, volume: Decimal) -> int:
        """Index of the tier a monthly volume falls in (the first tier starts at 0)."""
        starts = [tier.start for tier in self.tiers]
        return max(0, bisect.bisect_right(starts, volume) - 1)


@dataclass(frozen=True)
class CommissionRule:
    """What one kind of fill is charged.

    The charge is ``per_unit`` x quantity + ``bps`` x notional / 10,000 + ``per_fill`` x fills +
    ``per_order``, then at least ``minimum`` and at most ``maximum`` and ``maximum_bps`` of
    notional, rounded to the currency's minor unit. With ``charged_per = "order"`` all of it is
    computed once over the fills of an order and split over them by largest remainder; with
    ``"fill"`` every fill is charged on its own (``per_order`` then goes on an order's first fill).
    """

    name: str
    selector: Selector
    per_unit: Decimal = ZERO
    bps: Decimal = ZERO
    per_fill: Decimal = ZERO
    per_order: Decimal = ZERO
    minimum: Decimal | None = None
    maximum: Decimal | None = None
    maximum_bps: Decimal | None = None
    charged_per: ChargedPer = "order"
    tiering: Tiering | None = None

    def terms(self, tier: int | None = None) -> Terms:
        """The rates in force in a tier (or the rule's own, without tiers)."""
        if tier is None or self.tiering is None:
            return Terms(self.per_unit, self.bps)
        chosen = self.tiering.tiers[tier]
        return Terms(
            self.per_unit if chosen.per_unit is None else chosen.per_unit,
            self.bps if chosen.bps is None else chosen.bps,
        )


@dataclass(frozen=True)
class Benchmark:
    """A published overnight rate: each fixing holds from its date until the next one."""

    name: str
    fixings: tuple[tuple[date, Decimal], ...]

    def rate_on(self, day: date) -> Decimal | None:
        dates = [fixed for fixed, _ in self.fixings]
        index = bisect.bisect_right(dates, day) - 1
        return self.fixings[index][1] if index >= 0 else None


@dataclass(frozen=True)
class FinancingRule:
    """How an open position is financed each night, and which booked events this rule audits.

    Either an annual rate on notional (``long_rate`` a long pays, ``short_rate`` a short receives;
    or ``benchmark`` + ``long_spread`` for a long and ``benchmark`` - ``short_spread`` for a
    short) with a day count, or swap points per unit per night (``long_points`` and
    ``short_points``, credited to the holder, times ``point_size``). A side with no rate or points
    is not financed. The position is taken at ``cutoff`` local time in ``cutoff_timezone``.
    """

    name: str
    selector: Selector
    cutoff: time
    cutoff_timezone: str
    kinds: tuple[str, ...] = DEFAULT_FINANCING_KINDS
    day_count: DayCount = "ACT/360"
    triple_weekday: int = FRIDAY
    holidays: frozenset[date] = field(default_factory=frozenset)
    long_rate: Decimal | None = None
    short_rate: Decimal | None = None
    benchmark: Benchmark | None = None
    long_spread: Decimal | None = None
    short_spread: Decimal | None = None
    long_points: Decimal | None = None
    short_points: Decimal | None = None
    point_size: Decimal = Decimal(1)

    @property
    def uses_points(self) -> bool:
        return self.long_points is not None or self.short_points is not None

    def annual_rate(self, long: bool, day: date) -> Decimal | None:
        """The rate a long pays, or a short receives, on ``day`` (None: that side is not financed).

        Raises ``LookupError`` when the benchmark has no fixing on or before ``day``.
        """
        if self.benchmark is None:
            return self.long_rate if long else self.short_rate
        spread = self.long_spread if long else self.short_spread
        if spread is None:
            return None
        base = self.benchmark.rate_on(day)
        if base is None:
            raise LookupError(day)
        return base + spread if long else base - spread

    def points(self, long: bool) -> Decimal | None:
        return self.long_points if long else self.short_points


@dataclass(frozen=True)
class Schedule:
    """A whole fee schedule: commission rules and financing rules, each list tried in order.

    ``timezone`` places local dates: months for tiers, validity dates, the audit period, and the
    financing cut-off when a rule names none.
    """

    name: str = ""
    timezone: str = "UTC"
    rounding: Rounding = "half-even"
    commission: tuple[CommissionRule, ...] = ()
    financing: tuple[FinancingRule, ...] = ()
    source: str = "schedule"
