"""Relief methods: which open lot a reducing fill closes first, and what basis leaves with it.

``fifo`` closes the oldest lot, ``lifo`` the newest, ``hifo`` the one that realizes the smallest
gain (highest open price for a long, lowest for a short; ties go to the oldest). ``average`` keeps
one pool per account and instrument; a reduction of q out of Q removes basis x q/Q, rounded to the
currency's minor unit, and the remainder stays in the pool so it always empties exactly.
"""

from __future__ import annotations

from dataclasses import dataclass
from decimal import Decimal

import pandas as pd

from reconcile.money import EXACT, prorata


@dataclass
class Lot:
    """An open lot (or, under ``average``, the pool) of one account and instrument."""

    fill_id: str
    time: pd.Timestamp
    seq: int
    quantity: Decimal
    price: Decimal
    cost: Decimal
    commission: Decimal
    financing: Decimal


class Relief:
    """The lot-by-lot methods share everything but the closing order."""

    name = "fifo"
    pooled = False

    def closing_order(self, lots: list[Lot], direction: int) -> list[Lot]:
        return list(lots)

    def relieved_cost(
        self, lot: Lot, quantity: Decimal, multiplier: Decimal, places: int
    ) -> Decimal:
        if quantity == lot.quantity:
            return lot.cost
        return EXACT.multiply(EXACT.multiply(quantity, lot.price), multiplier)


class Lifo(Relief):
    name = "lifo"

    def closing_order(self, lots: list[Lot], direction: int) -> list[Lot]:
        return sorted(lots, key=lambda lot: -lot.seq)


class Hifo(Relief):
    name = "hifo"

    def closing_order(self, lots: list[Lot], direction: int) -> list[Lot]:
        if direction > 0:
            return sorted(lots, key=lambda lot: (-lot.price, lot.seq))
        return sorted(lots, key=lambda lot: (lot.price, lot.seq))


class Average(Relief):
    name = "average"
    pooled = True

    def relieved_cost(
        self, lot: Lot, quantity: Decimal, multiplier: Decimal, places: int
    ) -> Decimal:
        return prorata(lot.cost, quantity, lot.quantity, places)


RELIEF: dict[str, Relief] = {r.name: r for r in (Relief(), Lifo(), Hifo(), Average())}
