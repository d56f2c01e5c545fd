"""Builders for test inputs: fills and financing as raw text frames, as a reader gives them."""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from typing import Any

import pandas as pd

FILL_FIELDS = (
    "fill_id",
    "account",
    "instrument",
    "side",
    "quantity",
    "price",
    "time",
    "commission",
    "currency",
    "multiplier",
)


def fills(
    rows: Iterable[Sequence[Any]],
    *,
    account: str = "A",
    instrument: str = "X",
    currency: str = "USD",
    multiplier: str = "1",
) -> pd.DataFrame:
    """Fills from (fill_id, side, quantity, price, time[, commission]) tuples, all as text."""
    records = []
    for row in rows:
        fill_id, side, quantity, price, time, *rest = row
        records.append(
            {
                "fill_id": str(fill_id),
                "account": account,
                "instrument": instrument,
                "side": side,
                "quantity": str(quantity),
                "price": str(price),
                "time": _time(time),
                "commission": str(rest[0]) if rest else "0",
                "currency": currency,
                "multiplier": multiplier,
            }
        )
    return pd.DataFrame(records, columns=list(FILL_FIELDS), dtype="str")


def financing(
    rows: Iterable[Sequence[Any]],
    *,
    account: str = "A",
    instrument: str = "X",
    currency: str = "USD",
) -> pd.DataFrame:
    """Financing from (event_id, time, amount[, kind]) tuples, all as text."""
    records = [
        {
            "event_id": str(r[0]),
            "account": account,
            "instrument": instrument,
            "time": _time(r[1]),
            "amount": str(r[2]),
            "currency": currency,
            "kind": r[3] if len(r) > 3 else "swap",
        }
        for r in rows
    ]
    return pd.DataFrame(records, dtype="str")


def _time(value: Any) -> str:
    text = str(value)
    if len(text) == 10:  # a bare date: noon UTC
        return text + "T12:00:00Z"
    return text


def concat(*frames: pd.DataFrame) -> pd.DataFrame:
    return pd.concat(frames, ignore_index=True)


def rows_of(frame: pd.DataFrame, drop: Sequence[str] = ()) -> list[tuple[Any, ...]]:
    """A table's rows as Python values, so equal decimals compare equal whatever their scale."""
    kept = frame.drop(columns=list(drop)).reset_index(drop=True)
    columns = [kept[c].astype(object).where(kept[c].notna(), None).tolist() for c in kept.columns]
    return list(zip(*columns, strict=True))
