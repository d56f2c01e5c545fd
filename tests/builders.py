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


#: A key whose numbers fit their scales but whose gross P&L leaves 64 bits in the fast path's
#: kernel (12-digit quantities at 10^5 prices: about 1.2e29 at scale), beside two that fit.
OVERFLOWING_FILLS = concat(
    fills(
        [
            ("b1", "buy", "123456789012.345", "98765.4321", "2026-11-02T10:00:00Z", "1.5"),
            ("s1", "sell", "100000000000.001", "98766.4321", "2026-11-03T10:00:00Z", "1.25"),
        ],
        instrument="HUGE",
    ),
    fills(
        [
            ("b2", "buy", 3, "10.00", "2026-11-02T11:00:00Z", "0.10"),
            ("s2", "sell", 1, "11.00", "2026-11-03T11:00:00Z", "0.10"),
            ("s3", "sell", 2, "12.00", "2026-11-04T11:00:00Z", "0.10"),
        ],
        instrument="SMALL",
    ),
    fills(
        [
            ("b3", "buy", 5, "20", "2026-11-02T12:00:00Z"),
            ("s4", "sell", 6, "21", "2026-11-03T12:00:00Z"),
        ],
        instrument="ZED",
    ),
)
