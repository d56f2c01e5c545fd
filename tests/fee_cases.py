"""Small builders for fee-audit tests: a schedule from TOML text, fills with orders and venues."""

from __future__ import annotations

import tomllib
from collections.abc import Iterable, Sequence
from typing import Any

import pandas as pd

from reconcile.core.fees.rules import Schedule
from reconcile.io.readers.schedule import parse_schedule
from tests import builders


def schedule(text: str) -> Schedule:
    return parse_schedule(tomllib.loads(text), source="schedule.toml")


def order_fills(
    rows: Iterable[Sequence[Any]],
    *,
    account: str = "A",
    instrument: str = "X",
    currency: str = "USD",
    multiplier: str = "1",
    venue: str = "XNYS",
) -> pd.DataFrame:
    """Fills from (fill_id, order_id, side, quantity, price, time, commission) tuples."""
    rows = list(rows)
    frame = builders.fills(
        [(r[0], *r[2:]) for r in rows],
        account=account,
        instrument=instrument,
        currency=currency,
        multiplier=multiplier,
    )
    return frame.assign(order_id=[str(r[1]) for r in rows], venue=venue)
