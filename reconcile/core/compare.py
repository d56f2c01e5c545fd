"""One statement line against our figures: ours, theirs, the difference and its status.

A line sums the figures of the keys it covers: one (account, instrument), or every instrument of
an account in the line's currency (and, with a base currency, every other instrument of the
account converted into it). Money is summed exactly and rounded once to the line currency's minor
unit; a converted amount is rounded to it on its own first (at the rate in force when it was
realized), then the rounded amounts are summed exactly.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from decimal import Decimal
from fractions import Fraction

from reconcile.core.fx import Quote, RateBook, RateChoice, convert
from reconcile.core.keyfigures import Figures, Part
from reconcile.errors import ConfigError
from reconcile.money import ZERO, Rounding, currency_places, quantum, round_fraction, round_money

Key = tuple[str, str]

#: Places our average price is shown with when the statement gives none to compare at.
AVERAGE_SHOWN_PLACES = 10


@dataclass(frozen=True)
class Tolerance:
    """``absolute`` is in minor units for money, in units for quantities, in price for prices;
    ``relative`` is a fraction of the statement's figure. A difference within either is allowed."""

    absolute: Decimal = ZERO
    relative: Decimal = ZERO

    def __post_init__(self) -> None:
        # A relative tolerance of 1 (100%) or more would let a line only the statement has (ours
        # 0) pass as within tolerance, where it is always a break.
        if not 0 <= self.relative < 1:
            raise ConfigError(
                "relative tolerance: expected a fraction of the statement's figure from 0 up to, "
                f"not including, 1 (0.001 is 0.1%), found {self.relative}"
            )
        if self.absolute < 0:
            raise ConfigError(f"tolerance: expected an amount >= 0, found {self.absolute}")


@dataclass(frozen=True)
class Tolerances:
    money: Tolerance = Tolerance()
    by_measure: Mapping[str, Tolerance] = field(default_factory=dict)

    def allowed(self, measure: str, currency: str, theirs: Decimal | None) -> Decimal:
        """The largest difference a line may show and still be within tolerance."""
        default = self.money if measure in MONEY else Tolerance()
        rule = self.by_measure.get(measure, default)
        absolute = rule.absolute
        if measure in MONEY:
            absolute = absolute * quantum(currency_places(currency))
        relative = rule.relative * abs(theirs) if theirs is not None else ZERO
        return max(absolute, relative)


MONEY = ("realized_pnl", "commission", "financing")
STATUSES = ("tied", "within tolerance", "break")


@dataclass(frozen=True)
class LineSpec:
    """A compared line: what the statement says and which of our keys it covers."""

    number: int
    account: str
    instrument: str  # blank for an account-level line
    currency: str
    measure: str
    basis: str  # "gross" or "net" for realized_pnl, else blank
    theirs: Decimal | None  # None: the statement does not have this line
    places: int  # the places the statement wrote an average price with
    keys: tuple[Key, ...]
    rows: tuple[int, ...]
    note: str = ""


@dataclass(frozen=True)
class View:
    """How lines are evaluated; a break trial may ask for another basis, rounding or rates."""

    basis: str | None = None  # "gross", "net" or "net+financing" instead of the line's
    round_each: Rounding | None = None  # round every contributing amount before summing
    rates: RateChoice | None = None  # another way of picking FX rates


@dataclass(frozen=True)
class Conversion:
    key: Key
    part: Part
    currency: str
    quote: Quote
    base: str
    converted: Decimal


@dataclass(frozen=True)
class MissingRate:
    key: Key
    part: Part
    currency: str
    base: str


@dataclass(frozen=True)
class Value:
    ours: Decimal | None
    contributing: int  # amounts summed (for the rounding bound)
    conversions: tuple[Conversion, ...] = ()
    missing: tuple[MissingRate, ...] = ()


@dataclass
class Evaluator:
    rounding: Rounding
    rates: RateBook | None
    _cache: dict[
        tuple[object, ...], tuple[Decimal, int, tuple[Conversion, ...], tuple[MissingRate, ...]]
    ] = field(default_factory=dict)

    def value(self, spec: LineSpec, figures: Mapping[Key, Figures], view: View = View()) -> Value:
        if spec.measure == "open_quantity":
            return Value(sum((figures[k].quantity for k in spec.keys), ZERO), len(spec.keys))
        if spec.measure == "average_price":
            return Value(self._average(spec, figures), 1)
        total, count = ZERO, 0
        conversions: list[Conversion] = []
        missing: list[MissingRate] = []
        for key in spec.keys:
            amount, n, converted, lacking = self._contribution(spec, figures[key], view)
            total += amount
            count += n
            conversions += converted
            missing += lacking
        ours = round_money(total, spec.currency, self.rounding)
        return Value(ours, count, tuple(conversions), tuple(missing))

    def _average(self, spec: LineSpec, figures: Mapping[Key, Figures]) -> Decimal | None:
        if not spec.keys:
            return None
        held = figures[spec.keys[0]]
        average = held.average()
        if average is None or held.currency != spec.currency:
            return None
        places = spec.places if spec.theirs is not None else AVERAGE_SHOWN_PLACES
        return round_fraction(average, places)

    def _contribution(
        self, spec: LineSpec, held: Figures, view: View
    ) -> tuple[Decimal, int, tuple[Conversion, ...], tuple[MissingRate, ...]]:
        cache_key = (spec.measure, spec.basis, spec.currency, id(held), view)
        if cache_key not in self._cache:
            parts = _parts(held, spec.measure, view.basis or spec.basis)
            if held.currency == spec.currency:
                self._cache[cache_key] = (
                    self._native(parts, held.currency, view),
                    len(parts),
                    (),
                    (),
                )
            else:
                self._cache[cache_key] = self._converted(parts, held, spec.currency, view)
        return self._cache[cache_key]

    def _native(self, parts: list[tuple[Part, int]], currency: str, view: View) -> Decimal:
        if view.round_each is None:
            return sum((p.amount * sign for p, sign in parts), ZERO)
        return sum(
            (round_money(p.amount * sign, currency, view.round_each) for p, sign in parts), ZERO
        )

    def _converted(
        self, parts: list[tuple[Part, int]], held: Figures, base: str, view: View
    ) -> tuple[Decimal, int, tuple[Conversion, ...], tuple[MissingRate, ...]]:
        key = (held.account, held.instrument)
        total = ZERO
        conversions: list[Conversion] = []
        missing: list[MissingRate] = []
        for part, sign in parts:
            quote = self._quote(held.currency, base, part, view)
            if quote is None:
                missing.append(MissingRate(key, part, held.currency, base))
                continue
            converted = convert(part.amount * sign, held.currency, base, quote, self.rounding)
            conversions.append(Conversion(key, part, held.currency, quote, base, converted))
            total += converted
        return total, len(parts), tuple(conversions), tuple(missing)

    def _quote(self, currency: str, base: str, part: Part, view: View) -> Quote | None:
        if self.rates is None:
            return None
        if view.rates is not None:
            return view.rates.pick(currency, base, part.time)
        return self.rates.in_force(currency, base, part.time)


def _parts(held: Figures, measure: str, basis: str) -> list[tuple[Part, int]]:
    """The amounts a money measure adds up, each with the sign it enters with."""
    if measure == "commission":
        return [(p, 1) for p in held.commission]
    if measure == "financing":
        return [(p, 1) for p in held.financing]
    parts = [(p, 1) for p in held.gross]
    if basis in ("net", "net+financing"):
        parts += [(p, -1) for p in held.commission]
    if basis == "net+financing":
        parts += [(p, 1) for p in held.financing]
    return parts


def status(ours: Decimal | None, theirs: Decimal | None, allowed: Decimal) -> str:
    if ours is None or theirs is None:
        return "break" if ours != theirs else "tied"
    difference = abs(ours - theirs)
    if difference == 0:
        return "tied"
    return "within tolerance" if difference <= allowed else "break"


def within(ours: Decimal | None, theirs: Decimal | None, allowed: Decimal) -> bool:
    return status(ours, theirs, allowed) != "break"


def difference(ours: Decimal | None, theirs: Decimal | None) -> Decimal | None:
    return None if ours is None or theirs is None else ours - theirs


def as_fraction(value: Decimal | None) -> Fraction | None:
    return None if value is None else Fraction(value)
