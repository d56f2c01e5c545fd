"""The steps of ``reconcile stats`` and ``reconcile report`` between options and output.

Reading and matching are the shared steps of :mod:`reconcile.io.session`; what follows them
(statistics, their formats, the report folder) lives here, for the CLI and for scripts.
"""

from __future__ import annotations

import io
import json
import sys
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

from rich.console import Console

from reconcile.core.book import Book
from reconcile.core.matching import check_choice
from reconcile.core.stats import OVER, ZERO_PNL, Stats, check_by, stats
from reconcile.errors import OutputError
from reconcile.io.render import terminal
from reconcile.io.render.stats_view import view
from reconcile.io.writers.atomic import file_set
from reconcile.io.writers.tables import csv_bytes, json_records
from reconcile.notice import CAUTION
from reconcile.timezones import zone

STATS_FORMATS = ("table", "csv", "json")
#: Width of the statistics table when it is written to a file rather than a terminal.
STATS_FILE_WIDTH = 120


@dataclass(frozen=True)
class StatsRequest:
    """The options of ``reconcile stats``, checked before any input is read."""

    by: tuple[str, ...] = ()
    over: str = "round-trips"
    zero_pnl: str = "breakeven"
    timezone: str = "UTC"
    fmt: str = "table"


def stats_request(
    by: Sequence[str] = (),
    *,
    over: str = "round-trips",
    zero_pnl: str = "breakeven",
    timezone: str | None = None,
    fmt: str = "table",
) -> StatsRequest:
    """Check the options (``by`` may also be comma-separated) so a bad one stops the run early."""
    keys = tuple(key.strip() for item in by for key in item.split(",") if key.strip())
    check_choice("format", fmt, STATS_FORMATS)
    check_choice("over", over, OVER)
    check_choice("zero-pnl", zero_pnl, ZERO_PNL)
    check_by(keys)
    zone(timezone or "UTC")
    return StatsRequest(keys, over, zero_pnl, timezone or "UTC", fmt)


def compute_stats(book: Book, request: StatsRequest) -> Stats:
    return stats(
        book,
        request.by,
        over=request.over,
        zero_pnl=request.zero_pnl,
        timezone=request.timezone,
    )


def show_stats(result: Stats, request: StatsRequest, out: Path | None) -> Path | None:
    """Print the statistics in the requested format, or write them to ``out`` (atomically)."""
    if out is None:
        if request.fmt == "table":
            terminal.stats_tables(terminal.console(), stats_heading(result), view(result))
        else:
            sys.stdout.write(stats_text(result, request.fmt))
        return None
    if out.is_dir():
        raise OutputError(f"--out {out}: expected a file name, found a directory")
    text = stats_text(result, request.fmt)
    with file_set(out.parent) as files:
        files.add(out.name, lambda path: _write_text(path, text))
    return out


def _write_text(path: Path, text: str) -> None:
    path.write_text(text, encoding="utf-8")


def stats_heading(result: Stats) -> str:
    count = int(result.summary["trades"].sum()) if len(result.summary) else 0
    unit = "closed lots" if result.over == "closed-lots" else "round trips"
    groups = ", ".join(result.by) + " and currency" if result.by else "currency"
    return (
        f"Statistics of {count:,} {unit} by {groups}\n"
        f"Times in UTC; months and weekdays in {result.timezone}; a zero-P&L trade counts as "
        f"{'a breakeven' if result.zero_pnl == 'breakeven' else 'a ' + result.zero_pnl}."
    )


def stats_text(result: Stats, fmt: str) -> str:
    """The statistics as a table (plain text), CSV or a JSON document."""
    if fmt == "csv":
        return csv_bytes(result.summary).decode("utf-8")
    if fmt == "json":
        document = {
            "settings": result.settings(),
            "statistics": json_records(result.summary),
            "extremes": json_records(result.extremes),
            "caution": CAUTION,
        }
        return json.dumps(document, indent=1, default=str, allow_nan=False) + "\n"
    buffer = io.StringIO()
    console = Console(file=buffer, width=STATS_FILE_WIDTH, color_system=None, soft_wrap=False)
    terminal.stats_tables(console, stats_heading(result), view(result))
    return buffer.getvalue()
