"""Time the statistics and the report on synthetic fills and print the figures.

    python benchmarks/report.py [N]

A figure, not a test: speed targets live here, never in the test suite.
"""

from __future__ import annotations

import sys
import tempfile
import time
from pathlib import Path

import pandas as pd
from synthetic import synthetic_table  # benchmarks/synthetic.py, beside this script

import reconcile
from reconcile.io import reporting
from reconcile.io.session import Inputs
from reconcile.io.writers.report import write_report


def main() -> None:
    count = int(sys.argv[1]) if len(sys.argv) > 1 else 20_000
    fills = synthetic_table(count).to_pandas()
    book = reconcile.match(fills)
    trips = len(book.round_trips)
    started = time.perf_counter()
    reconcile.stats(book)
    overall = time.perf_counter() - started
    started = time.perf_counter()
    reconcile.stats(book, ["account", "instrument", "month"])
    grouped = time.perf_counter() - started
    request = reporting.report_request()
    started = time.perf_counter()
    report = reporting.make_report(book, Inputs(fills=pd.DataFrame(fills)), request)
    built = time.perf_counter() - started
    with tempfile.TemporaryDirectory() as folder:
        started = time.perf_counter()
        written = write_report(report, Path(folder), "csv")
        wrote = time.perf_counter() - started
        page = (Path(folder) / "report.html").stat().st_size
    print(
        f"{count:,} fills, {trips:,} round trips: stats {overall:.2f} s "
        f"({trips / overall:,.0f} trips/s), by account+instrument+month {grouped:.2f} s; "
        f"report built in {built:.2f} s, {len(written)} files written in {wrote:.2f} s, "
        f"page {page / 1024:,.0f} KiB"
    )


if __name__ == "__main__":
    main()
