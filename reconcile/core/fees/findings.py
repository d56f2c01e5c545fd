"""Statuses of a charge against the schedule, and the finding rows every total is built from."""

from __future__ import annotations

from dataclasses import dataclass
from decimal import Decimal
from typing import Any

import pandas as pd

from reconcile.money import ZERO

OK = "ok"
WITHIN_TOLERANCE = "within tolerance"
OVERCHARGE = "overcharge"
UNDERCHARGE = "undercharge"
SPLIT_DIFFERS = "split differs"
NO_RULE = "no rule"
UNEXPLAINED = "no known pattern"


def classify(excess: Decimal, tolerance: Decimal) -> str:
    """Status of a charge that cost ``excess`` more than the schedule (negative: less)."""
    if excess == 0:
        return OK
    if abs(excess) <= tolerance:
        return WITHIN_TOLERANCE
    return OVERCHARGE if excess > 0 else UNDERCHARGE


def over_and_under(excess: Decimal, status: str) -> tuple[Decimal, Decimal]:
    """(overcharge, undercharge), both >= 0, counting only what lies beyond the tolerance."""
    if status == OVERCHARGE:
        return excess, ZERO
    if status == UNDERCHARGE:
        return ZERO, -excess
    return ZERO, ZERO


@dataclass(frozen=True)
class Finding:
    """One charge unit (an order, a fill or a financing day) that is off beyond the tolerance."""

    charge: str  # "commission" or "financing"
    account: str
    instrument: str
    venue: str
    currency: str
    month: str
    reference: str
    time: pd.Timestamp
    rule: str
    expected: Decimal
    charged: Decimal
    overcharge: Decimal
    undercharge: Decimal
    cause: str

    def row(self) -> dict[str, Any]:
        return dict(self.__dict__)
