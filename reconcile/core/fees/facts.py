"""Canonical fills as plain records with their local date and month, for the fee rules."""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date
from decimal import Decimal

import pandas as pd

from reconcile.timezones import zone


@dataclass(frozen=True)
class FillFacts:
    """One fill as the fee audit sees it; ``index`` is its position in the input."""

    index: int
    fill_id: str
    order_id: str
    account: str
    instrument: str
    venue: str
    side: str
    time: pd.Timestamp
    day: date
    month: str
    quantity: Decimal
    price: Decimal
    multiplier: Decimal
    currency: str
    charged: Decimal

    @property
    def notional(self) -> Decimal:
        """Quantity x price x multiplier, unsigned."""
        return abs(self.quantity * self.price * self.multiplier)

    @property
    def signed_quantity(self) -> Decimal:
        return self.quantity if self.side == "buy" else -self.quantity


def fill_facts(fills: pd.DataFrame, timezone: str) -> list[FillFacts]:
    """Every canonical fill, in input order, dated in ``timezone``."""
    local = fills["time"].dt.tz_convert(zone(timezone))
    columns = [
        fills[name].tolist()
        for name in (
            "fill_id",
            "order_id",
            "account",
            "instrument",
            "venue",
            "side",
            "time",
            "quantity",
            "price",
            "multiplier",
            "currency",
            "commission",
        )
    ]
    days = local.dt.date.tolist()
    months = local.dt.strftime("%Y-%m").tolist()
    facts = []
    for index, values in enumerate(zip(*columns, strict=True)):
        fill_id, order_id, account, instrument, venue, side, time, *rest = values
        quantity, price, multiplier, currency, charged = rest
        facts.append(
            FillFacts(
                index,
                fill_id,
                order_id,
                account,
                instrument,
                venue,
                side,
                time,
                days[index],
                months[index],
                quantity,
                price,
                multiplier,
                currency,
                charged,
            )
        )
    return facts
