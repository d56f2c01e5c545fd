"""Time the tie-out on the sample scenario and print how long each kind of month-end takes.

    python benchmarks/tieout.py

A figure, not a test: it ties November 2026 out against statements derived from the sample
scenario, unchanged, with the demo's planted break, with every key broken (a LIFO statement) and
with a break nothing explains (so the bounded pair search runs to its bound).
"""

from __future__ import annotations

import time
from collections.abc import Callable
from pathlib import Path

import pandas as pd

import reconcile
from reconcile.core.tieout import derive_statement

SAMPLE = Path(__file__).parents[1] / "sample_data"
ZONE, CUTOFF = "America/New_York", "17:00"


def _timed(label: str, run: Callable[[], reconcile.TieOut]) -> None:
    started = time.perf_counter()
    result = run()
    seconds = time.perf_counter() - started
    counts = result.counts()
    print(
        f"{label:<46} {seconds:7.2f} s   {counts['break']:>3} breaks of {len(result.lines)} lines"
    )


def main() -> None:
    fills = reconcile.read_fills(SAMPLE / "fills.csv")
    financing = reconcile.read_financing(SAMPLE / "financing.csv")
    demo = reconcile.read_statement(SAMPLE / "statement.csv")
    own = derive_statement(fills, "2026-11", financing=financing, timezone=ZONE, cutoff=CUTOFF)
    lifo = derive_statement(
        fills, "2026-11", financing=financing, method="lifo", timezone=ZONE, cutoff=CUTOFF
    )
    odd = own.copy()
    odd.loc[odd["instrument"] == "CRVN", "realized_pnl"] = "-9000.00"

    def tie(statement: pd.DataFrame) -> Callable[[], reconcile.TieOut]:
        return lambda: reconcile.tie_out(
            fills, statement, "2026-11", financing=financing, timezone=ZONE, cutoff=CUTOFF
        )

    print(f"{len(fills):,} fills, {len(financing):,} financing events, 7 keys")
    _timed("statement derived from our own results", tie(own))
    _timed("the demo statement (one planted break)", tie(demo))
    _timed("a LIFO statement (every key breaks)", tie(lifo))
    _timed("an unexplained break (pair search to its bound)", tie(odd))


if __name__ == "__main__":
    main()
