"""Time the reference engine on synthetic fills and print fills per second.

    python benchmarks/run.py [N]

A figure, not a test: speed targets live here, never in the test suite.
"""

from __future__ import annotations

import random
import sys
import time
from datetime import UTC, datetime, timedelta

import pandas as pd

import reconcile


def synthetic_fills(count: int, seed: int = 7) -> pd.DataFrame:
    """Seeded fills over 200 instruments and 10 accounts, as text, in time order."""
    rng = random.Random(seed)
    start = datetime(2026, 11, 2, tzinfo=UTC)
    rows = []
    for n in range(count):
        rows.append(
            {
                "fill_id": f"F{n}",
                "account": f"ACC{rng.randrange(10)}",
                "instrument": f"INS{rng.randrange(200)}",
                "side": rng.choice(("buy", "sell")),
                "quantity": str(rng.randint(1, 20) * 100),
                "price": f"{rng.randint(1000, 20000) / 100:.2f}",
                "time": (start + timedelta(milliseconds=250 * n)).isoformat(),
                "commission": f"{rng.randint(0, 500) / 100:.2f}",
                "currency": "USD",
            }
        )
    return pd.DataFrame(rows, dtype="str")


def main() -> None:
    count = int(sys.argv[1]) if len(sys.argv) > 1 else 20_000
    fills = synthetic_fills(count)
    started = time.perf_counter()
    book = reconcile.match(fills)
    elapsed = time.perf_counter() - started
    print(
        f"reference engine: {count:,} fills in {elapsed:.2f} s "
        f"({count / elapsed:,.0f} fills/s), {len(book.closed_lots):,} closed lots"
    )


if __name__ == "__main__":
    main()
