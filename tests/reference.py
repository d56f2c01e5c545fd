"""A slow, obviously correct matcher that the engine is compared against.

Every fill is cut into units of one quantity step, and each unit is matched on its own: FIFO takes
the oldest open unit, LIFO the newest, HIFO the one with the least gain (ties oldest), and
``average`` keeps an exact rational pool with no rounding at all. Nothing here is shared with the
package's engine.
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass, field
from decimal import Decimal
from fractions import Fraction
from typing import Any


@dataclass
class Unit:
    fill_id: str
    seq: int
    price: Decimal


@dataclass
class KeyResult:
    gross: Fraction = Fraction(0)
    pairs: Counter[tuple[str, str]] = field(default_factory=Counter)
    open_units: Counter[str] = field(default_factory=Counter)
    position: Fraction = Fraction(0)
    reductions: int = 0


def replay(
    rows: list[dict[str, Any]], method: str, unit: Decimal
) -> dict[tuple[str, str], KeyResult]:
    """Rows (canonical values) in processing order; returns results per (account, instrument)."""
    results: dict[tuple[str, str], KeyResult] = {}
    books: dict[tuple[str, str], list[Unit]] = {}
    pools: dict[tuple[str, str], tuple[Fraction, Fraction]] = {}
    for seq, row in enumerate(rows):
        key = (row["account"], row["instrument"])
        result = results.setdefault(key, KeyResult())
        sign = 1 if row["side"] == "buy" else -1
        count = int(row["quantity"] / unit)
        multiplier = Fraction(row["multiplier"])
        if method == "average":
            _average(
                result,
                pools,
                key,
                sign,
                Fraction(row["quantity"]),
                Fraction(row["price"]),
                multiplier,
            )
            continue
        units = books.setdefault(key, [])
        for _ in range(count):
            direction = 0 if not units else (1 if result.position > 0 else -1)
            if direction and direction != sign:
                chosen = _choose(units, method, direction)
                units.remove(chosen)
                gain = (Fraction(row["price"]) - Fraction(chosen.price)) * direction
                result.gross += gain * Fraction(unit) * multiplier
                result.pairs[(chosen.fill_id, row["fill_id"])] += 1
            else:
                units.append(Unit(row["fill_id"], seq, row["price"]))
            result.position += sign * Fraction(unit)
    for key, units in books.items():
        for u in units:
            results[key].open_units[u.fill_id] += 1
    return results


def _choose(units: list[Unit], method: str, direction: int) -> Unit:
    if method == "fifo":
        return min(units, key=lambda u: u.seq)
    if method == "lifo":
        return max(units, key=lambda u: u.seq)
    if direction > 0:
        return min(units, key=lambda u: (-u.price, u.seq))
    return min(units, key=lambda u: (u.price, u.seq))


def _average(
    result: KeyResult,
    pools: dict[tuple[str, str], tuple[Fraction, Fraction]],
    key: tuple[str, str],
    sign: int,
    quantity: Fraction,
    price: Fraction,
    multiplier: Fraction,
) -> None:
    held, basis = pools.get(key, (Fraction(0), Fraction(0)))  # held is signed
    if held == 0 or (held > 0) == (sign > 0):
        pools[key] = (held + sign * quantity, basis + quantity * price * multiplier)
        result.position = held + sign * quantity
        return
    closing = min(quantity, abs(held))
    relieved = basis * closing / abs(held)
    direction = 1 if held > 0 else -1
    result.gross += (closing * price * multiplier - relieved) * direction
    result.reductions += 1
    held += sign * closing
    basis -= relieved
    left = quantity - closing
    if left:
        held, basis = sign * left, left * price * multiplier
    pools[key] = (held, basis)
    result.position = held
