"""Exact money: the decimal context, ISO 4217 minor units, rounding and allocation.

Arithmetic on quantities, prices and money runs in :data:`EXACT`, a decimal context that traps
``Inexact``: a product or sum that would need rounding raises instead of silently losing digits.
Rounding happens only where a rule asks for it, through :func:`round_to`, and a charge split over
several lots is cut by :func:`allocate` (largest remainder) so the pieces add up exactly.
"""

from __future__ import annotations

import decimal
import functools
from collections.abc import Callable, Sequence
from decimal import ROUND_HALF_EVEN, ROUND_HALF_UP, Decimal
from fractions import Fraction
from typing import Literal, ParamSpec, TypeVar

from iso4217 import Currency

from reconcile.errors import ConfigError

#: Working context of every engine calculation: wide enough for any decimal128 product, and any
#: result that would need rounding raises ``decimal.Inexact`` instead.
EXACT = decimal.Context(
    prec=120,
    rounding=ROUND_HALF_EVEN,
    traps=[
        decimal.Inexact,
        decimal.FloatOperation,
        decimal.InvalidOperation,
        decimal.Overflow,
        decimal.DivisionByZero,
    ],
)

Rounding = Literal["half-even", "half-up"]
ROUNDING_MODES: dict[str, str] = {"half-even": ROUND_HALF_EVEN, "half-up": ROUND_HALF_UP}

#: Codes in common trading use that ISO 4217 does not list, with the minor unit we use for them.
#: GBX (pence sterling) and CNH (offshore renminbi) are market conventions, not ISO codes.
NON_ISO_MINOR_UNITS: dict[str, int] = {"GBX": 2, "CNH": 2}

P = ParamSpec("P")
T = TypeVar("T")

ZERO = Decimal(0)
ONE = Decimal(1)


@functools.cache
def minor_unit(code: str) -> int | None:
    """Decimal places of the currency's minor unit (ISO 4217), or None when the code is unknown.

    Codes ISO lists without a minor unit (gold, SDR, ...) also return None: money in them cannot be
    rounded to a unit.
    """
    if code in NON_ISO_MINOR_UNITS:
        return NON_ISO_MINOR_UNITS[code]
    try:
        exponent = Currency(code).exponent
    except ValueError:
        return None
    return None if exponent is None else int(exponent)


def is_known_currency(code: str) -> bool:
    return code in NON_ISO_MINOR_UNITS or _iso_listed(code)


@functools.cache
def _iso_listed(code: str) -> bool:
    try:
        Currency(code)
    except ValueError:
        return False
    return True


def quantum(places: int) -> Decimal:
    """The decimal ``10 ** -places`` (``Decimal('0.01')`` for 2)."""
    return Decimal(1).scaleb(-places, EXACT)


def places_of(value: Decimal) -> int:
    """Decimal places a value is written with (never negative)."""
    exponent = value.as_tuple().exponent
    assert isinstance(exponent, int), f"not a finite decimal: {value!r}"
    return max(0, -exponent)


def significant_places(value: Decimal) -> int:
    """Decimal places a value needs: ``Decimal('1.500')`` needs 1, ``Decimal('100')`` none."""
    _sign, digits, exponent = value.as_tuple()
    assert isinstance(exponent, int), f"not a finite decimal: {value!r}"
    trailing = len(digits) - len("".join(map(str, digits)).rstrip("0"))
    return max(0, -(exponent + trailing)) if any(digits) else 0


def currency_places(code: str) -> int:
    places = minor_unit(code)
    if places is None:
        raise ConfigError(f"currency {code!r} has no ISO 4217 minor unit; money cannot be rounded")
    return places


def round_to(value: Decimal, places: int, rounding: Rounding = "half-even") -> Decimal:
    """Round to ``places`` decimals by the named rule; the result has exactly that many places."""
    with decimal.localcontext() as context:
        context.prec = 120
        context.traps[decimal.Inexact] = False
        context.traps[decimal.Rounded] = False
        return value.quantize(quantum(places), rounding=ROUNDING_MODES[rounding])


def round_money(value: Decimal, code: str, rounding: Rounding = "half-even") -> Decimal:
    """Round an amount to its currency's minor unit."""
    return round_to(value, currency_places(code), rounding)


def charge_places(amount: Decimal, code: str) -> int:
    """Places in which a charge is split: the minor unit, or the charge's own places if finer.

    Only significant places count: a column read at three places because some rows are in BHD
    must not make a JPY charge of ``1.000`` split in thousandths.
    """
    return max(currency_places(code), significant_places(amount))


def allocate(amount: Decimal, weights: Sequence[Decimal], places: int) -> list[Decimal]:
    """Split ``amount`` in proportion to ``weights`` by the largest-remainder method.

    Every piece is a multiple of ``10 ** -places`` and the pieces sum exactly to ``amount``. Units
    left after flooring go to the largest remainders; equal remainders go to the earlier weight.
    A negative amount is split as its absolute value and the sign put back, so charges and credits
    are cut the same way.
    """
    if not weights:
        raise ValueError("allocate needs at least one weight")
    if len(weights) == 1 and weights[0] > 0:
        return [_whole_units(amount, places)]  # the common case, without rational arithmetic
    total_weight = sum((Fraction(w) for w in weights), Fraction(0))
    if total_weight <= 0 or any(w < 0 for w in weights):
        raise ValueError(f"allocate needs non-negative weights with a positive sum, got {weights}")
    units = Fraction(amount) * 10**places
    if units.denominator != 1:
        raise ValueError(f"{amount} is not a multiple of 10**-{places}")
    sign = -1 if units < 0 else 1
    whole = abs(units.numerator)
    quotas = [whole * Fraction(w) / total_weight for w in weights]
    floors = [q.numerator // q.denominator for q in quotas]
    left = whole - sum(floors)
    by_remainder = sorted(range(len(quotas)), key=lambda i: (floors[i] - quotas[i], i))
    for index in by_remainder[:left]:
        floors[index] += 1
    return [Decimal(sign * f).scaleb(-places, EXACT) for f in floors]


def _whole_units(amount: Decimal, places: int) -> Decimal:
    """``amount`` written with exactly ``places`` decimals; raise if it is not a whole number of
    ``10 ** -places`` (as :func:`allocate` does for any split)."""
    units = amount.scaleb(places, EXACT)
    if units != units.to_integral_value(rounding=ROUND_HALF_EVEN, context=EXACT):
        raise ValueError(f"{amount} is not a multiple of 10**-{places}")
    return Decimal(int(units)).scaleb(-places, EXACT)


def prorata(
    balance: Decimal, part: Decimal, whole: Decimal, places: int, rounding: Rounding = "half-even"
) -> Decimal:
    """The share of ``balance`` that goes with ``part`` of ``whole``, rounded to ``places``.

    Taking the whole returns the balance itself, so successive partial shares of one balance always
    add up to it exactly.
    """
    if part == whole:
        return balance
    if not 0 < part < whole:
        raise ValueError(f"part {part} must lie in (0, {whole}]")
    exact = Fraction(balance) * Fraction(part) / Fraction(whole)
    return round_fraction(exact, places, rounding)


def round_fraction(value: Fraction, places: int, rounding: Rounding = "half-even") -> Decimal:
    """Round an exact rational to ``places`` decimals."""
    scaled = value * 10**places
    floor = scaled.numerator // scaled.denominator
    remainder = scaled - floor
    if remainder > Fraction(1, 2) or (
        remainder == Fraction(1, 2) and (rounding == "half-up" or floor % 2 == 1)
    ):
        floor += 1
    if rounding == "half-up" and remainder == Fraction(1, 2) and scaled < 0:
        floor -= 1  # half-up rounds away from zero on both sides
    return Decimal(floor).scaleb(-places, EXACT)


def divide(numerator: Decimal, denominator: Decimal, places: int) -> Decimal:
    """``numerator / denominator`` rounded half-even to ``places`` (for displayed averages)."""
    return round_fraction(Fraction(numerator) / Fraction(denominator), places)


def exact_arithmetic(function: Callable[P, T]) -> Callable[P, T]:
    """Run ``function`` with :data:`EXACT` as the decimal context, so every operator is exact."""

    @functools.wraps(function)
    def wrapper(*args: P.args, **kwargs: P.kwargs) -> T:
        with decimal.localcontext(EXACT):
            return function(*args, **kwargs)

    return wrapper
