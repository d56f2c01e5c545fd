"""Time the fee audit on synthetic fills and nightly financing; print fills per second.

    python benchmarks/fees.py [N]

The book is made clean first (each fill charged and each open position financed exactly as the
schedule says, taken from a first run), so the timed run measures a month-end audit that finds
little, as most do.

A figure, not a test: speed targets live here, never in the test suite.
"""

from __future__ import annotations

import random
import sys
import time
import tomllib
from datetime import UTC, datetime, timedelta

import pandas as pd

import reconcile
from reconcile.core.fees.rules import Schedule
from reconcile.io.readers.schedule import parse_schedule
from reconcile.schema import FINANCING_COLUMNS as EVENT_COLUMNS

SCHEDULE = """
[schedule]
timezone = "America/New_York"
[[commission]]
name = "equities"
currency = "USD"
per_unit = "0.0035"
minimum = "1.00"
tier_measure = "quantity"
[[commission.tiers]]
from = "0"
[[commission.tiers]]
from = "2000000"
per_unit = "0.0020"
[[financing]]
long_rate = "6.5%"
short_rate = "1.2%"
"""
DAYS = 60
KEYS = 2000


def synthetic(count: int, seed: int = 11) -> pd.DataFrame:
    """Seeded fills in orders of 1-4 partial fills over 2,000 keys and 60 days."""
    rng = random.Random(seed)
    start = datetime(2026, 10, 1, 13, 30, tzinfo=UTC)
    step = timedelta(days=DAYS) / count
    fills, n = [], 0
    while n < count:
        key = rng.randrange(KEYS)
        side = rng.choice(("buy", "sell"))
        order = f"O{n}"
        for _ in range(rng.randint(1, 4)):
            fills.append(
                {
                    "fill_id": f"F{n}",
                    "account": f"ACC{key % 10}",
                    "instrument": f"INS{key}",
                    "side": side,
                    "quantity": str(rng.randint(1, 20) * 100),
                    "price": f"{rng.randint(1000, 20000) / 100:.2f}",
                    "time": (start + step * n).isoformat(),
                    "currency": "USD",
                    "order_id": order,
                    "venue": "XNMS",
                }
            )
            n += 1
    return pd.DataFrame(fills, dtype="str")


def charged_as_scheduled(
    fills: pd.DataFrame, schedule: Schedule
) -> tuple[pd.DataFrame, pd.DataFrame]:
    """The fills with their scheduled commission, and a financing event for every expected one."""
    empty = pd.DataFrame(columns=list(EVENT_COLUMNS), dtype="str")
    first = reconcile.audit_fees(fills, schedule, empty)
    fills = fills.assign(commission=[str(v) for v in first.commission_fills["expected"]])
    days = first.financing_days
    events = pd.DataFrame(
        {
            "event_id": [f"E{n}" for n in range(len(days))],
            "account": days["account"].astype(str),
            "instrument": days["instrument"].astype(str),
            "time": [t.isoformat() for t in days["cutoff"]],
            "amount": [str(v) for v in days["expected"]],
            "currency": days["currency"].astype(str),
            "kind": "swap",
        }
    )
    return fills, events


def main() -> None:
    count = int(sys.argv[1]) if len(sys.argv) > 1 else 20_000
    schedule = parse_schedule(tomllib.loads(SCHEDULE), source="benchmark")
    fills, financing = charged_as_scheduled(synthetic(count), schedule)
    began = time.perf_counter()
    audit = reconcile.audit_fees(fills, schedule, financing)
    seconds = time.perf_counter() - began
    days = len(audit.financing_days)
    print(
        f"{len(fills):,} fills in {len(audit.commission_orders):,} orders, {days:,} financing "
        f"days: {seconds:.2f} s ({len(fills) / seconds:,.0f} fills/s, {days / seconds:,.0f} "
        f"financing days/s); {len(audit.findings):,} findings"
    )


if __name__ == "__main__":
    main()
