"""Terminal output: short rich summaries on stdout, progress on stderr."""

from __future__ import annotations

import os
from collections.abc import Iterator, Mapping, Sequence
from contextlib import contextmanager
from pathlib import Path
from typing import TYPE_CHECKING, Any

import pandas as pd
from rich import box
from rich.console import Console
from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeElapsedColumn
from rich.table import Table

from reconcile.core.book import Book
from reconcile.core.summary import BookTotals
from reconcile.io.render.numbers import grouped
from reconcile.notice import CAUTION

if TYPE_CHECKING:  # the tie-out and statistics load with the commands that use them
    from reconcile.core.tieout import TieOut
    from reconcile.io.render.stats_view import StatsView


def console(stderr: bool = False) -> Console:
    """A console that respects COLUMNS and NO_COLOR, with no colour when not on a terminal."""
    width = int(os.environ["COLUMNS"]) if os.environ.get("COLUMNS", "").isdigit() else None
    return Console(stderr=stderr, width=width, highlight=False, soft_wrap=False)


@contextmanager
def progress_bar(label: str) -> Iterator[Any]:
    """A transient progress bar on stderr; yields a ``(done, total)`` callback."""
    err = console(stderr=True)
    bar = Progress(
        TextColumn(label),
        BarColumn(),
        MofNCompleteColumn(),
        TimeElapsedColumn(),
        console=err,
        transient=True,
        disable=not err.is_terminal,
    )
    task = bar.add_task(label, total=None)
    with bar:
        yield lambda done, total: bar.update(task, completed=done, total=total)


def match_summary(
    out: Console,
    book: Book | BookTotals,
    inputs: Sequence[Mapping[str, Any]],
    written: Sequence[Path],
    rejects: Path | None = None,
) -> None:
    method = book.method.upper() if book.method != "average" else "average cost"
    for n, read in enumerate(inputs):
        prefix = "Matched" if n == 0 else "  with"
        noun = "fills" if n == 0 else read.get("kind", "rows")
        line = f"{prefix} {read['accepted']:,} {noun} from {read['source']}"
        if read.get("duplicates_dropped"):
            line += f" ({read['duplicates_dropped']:,} exact repeats dropped)"
        out.print(line)
        if _has_more_than_accepted(read):
            out.print(f"    {equation(read)}")
    out.print(f"Relief {method}, commission {book.commission}, rounding {book.rounding}")
    totals = book if isinstance(book, BookTotals) else BookTotals.of(book)
    out.print(_counts(totals.counts))
    out.print(_totals(totals.currency_totals()))
    if written:
        folder = written[0].parent
        out.print(f"Results in {folder}{os.sep}: " + ", ".join(p.name for p in written))
    if rejects is not None:
        out.print(f"Rejected rows in {rejects}", markup=False)
    out.print(CAUTION, style="dim")


def _counts(rows: Mapping[str, int]) -> Table:
    table = Table(box=box.SIMPLE_HEAD, show_edge=False, pad_edge=False)
    counts = {name.replace("_", " "): n for name, n in rows.items()}
    for name in counts:
        table.add_column(name, justify="right")
    table.add_row(*(f"{n:,}" for n in counts.values()))
    return table


def _totals(totals: pd.DataFrame) -> Table:
    table = Table(
        title="Realized by currency",
        title_justify="left",
        box=box.SIMPLE_HEAD,
        show_edge=False,
        pad_edge=False,
    )
    table.add_column("currency")
    money = [c for c in totals.columns if c != "currency"]
    for name in money:
        table.add_column(name.replace("_", " "), justify="right")
    for row in totals.to_dict(orient="records"):
        table.add_row(row["currency"], *(_amount(row[c], row["currency"]) for c in money))
    return table


def _amount(value: Any, currency: str) -> str:
    return grouped(value, currency)


#: The terms of the row equation, in the order they are printed, with their labels.
TERMS = (
    ("accepted", "accepted"),
    ("rejected", "rejected"),
    ("duplicates_dropped", "exact repeats dropped"),
    ("superseded", "superseded"),
    ("cancels", "cancel messages"),
    ("resent", "resent"),
    ("skipped", "skipped"),
)


def _has_more_than_accepted(read: Mapping[str, Any]) -> bool:
    return "rejected" in read or "skipped" in read


def equation(read: Mapping[str, Any]) -> str:
    """``10 rows read = 8 accepted + 2 rejected``: every row read lands in one term."""
    always = {"accepted", "rejected"}
    terms = [
        f"{int(read[key]):,} {label}"
        for key, label in TERMS
        if key in read and (key in always or read[key])
    ]
    return f"{int(read['rows_read']):,} rows read = " + " + ".join(terms)


def warnings(err: Console, lines: Sequence[str]) -> None:
    for line in lines:
        err.print(f"warning: {line}", markup=False)


def check_summary(
    out: Console,
    read: Mapping[str, Any],
    problems: Sequence[Any],
    rejects: Path | None,
    listed: int = 20,
) -> None:
    """What ``check`` shows: the row equation, rejections by reason, the first problems."""
    out.print(f"Checked {read['source']}", markup=False, soft_wrap=True)
    out.print(f"  {equation(read)}", markup=False, soft_wrap=True)
    if read.get("skipped_by_kind"):
        skipped = ", ".join(f"{k} {v:,}" for k, v in read["skipped_by_kind"].items())
        out.print(f"  skipped: {skipped}", markup=False)
    if read.get("rejected_by_reason"):
        table = Table(
            title="Rejected by reason",
            title_justify="left",
            box=box.SIMPLE_HEAD,
            show_edge=False,
            pad_edge=False,
        )
        table.add_column("reason")
        table.add_column("rows", justify="right")
        for reason, count in read["rejected_by_reason"].items():
            table.add_row(reason, f"{count:,}")
        out.print(table)
    if problems:
        shown = min(listed, len(problems))
        out.print(
            f"First {shown} of {len(problems):,} problems:"
            if shown < len(problems)
            else "Problems:"
        )
        for problem in problems[:listed]:
            out.print(f"  {problem}", markup=False, soft_wrap=True)
    if rejects is not None:
        out.print(f"Rejected rows in {rejects}", markup=False)
    out.print(CAUTION, style="dim")


def stats_tables(out: Console, heading: str, view: StatsView) -> None:
    """The statistics as rows, the groups as columns: as many columns a table as fit the width."""
    out.print(heading)
    if not view.headers:
        out.print("No round trips closed yet: nothing to describe.")
    label_width = max(len(label) for label, _ in view.rows)
    for chunk in _column_chunks(view, out.width - label_width - 1):
        out.print()
        table = Table(box=box.SIMPLE_HEAD, show_edge=False, pad_edge=False)
        table.add_column("", no_wrap=True)
        for n in chunk:
            table.add_column(view.headers[n], justify="right", no_wrap=True)
        for label, values in view.rows:
            table.add_row(label, *(values[n] for n in chunk))
        out.print(table)
    out.print(CAUTION, style="dim")


def _column_chunks(view: StatsView, room: int) -> list[list[int]]:
    """Group columns into runs whose widths (plus padding) fit ``room`` characters."""
    chunks: list[list[int]] = []
    used = room
    for n, header in enumerate(view.headers):
        width = max([len(header)] + [len(values[n]) for _, values in view.rows]) + 3
        if not chunks or used + width > room:
            chunks.append([])
            used = 0
        chunks[-1].append(n)
        used += width
    return chunks


#: Breaks listed in the terminal; every one is in breaks.json and the other reports.
SHOWN_BREAKS = 20


def tieout_summary(
    out: Console,
    result: TieOut,
    inputs: Sequence[Mapping[str, Any]],
    written: Sequence[Path],
    tz_database: str,
) -> None:
    for n, read in enumerate(inputs):
        prefix = "Tied out" if n == 0 else "  with"
        line = f"{prefix} {read['accepted']:,} {read['kind']} from {read['source']}"
        if read.get("duplicates_dropped"):
            line += f" ({read['duplicates_dropped']:,} exact repeats dropped)"
        out.print(line)
    out.print(f"Period {result.period.describe()}; time-zone database {tz_database}")
    method = result.method.upper() if result.method != "average" else "average cost"
    out.print(f"Relief {method}, commission {result.commission}, rounding {result.rounding}")
    for what, count in result.left_out.items():
        out.print(f"Left out {count:,} {what}")
    out.print(_status_counts(result.counts()))
    breaks = result.breaks
    if len(breaks):
        out.print(_breaks_table(breaks.head(SHOWN_BREAKS)))
        for row in breaks.head(SHOWN_BREAKS).to_dict(orient="records"):
            cause = row["explanation"] or row["note"]
            label = row["top_cause"] or "unexplained"
            out.print(f"#{row['line']} {label}: {cause}")
        if len(breaks) > SHOWN_BREAKS:
            out.print(f"... and {len(breaks) - SHOWN_BREAKS:,} more breaks in the reports")
    else:
        out.print("Every compared line ties within tolerance.")
    if written:
        folder = written[0].parent
        out.print(f"Results in {folder}{os.sep}: " + ", ".join(p.name for p in written))
    out.print(CAUTION, style="dim")


def _status_counts(counts: Mapping[str, int]) -> Table:
    table = Table(box=box.SIMPLE_HEAD, show_edge=False, pad_edge=False)
    for name in counts:
        table.add_column(name, justify="right")
    table.add_row(*(f"{n:,}" for n in counts.values()))
    return table


def _breaks_table(breaks: pd.DataFrame) -> Table:
    from reconcile.core.compare import MONEY

    table = Table(
        title="Breaks", title_justify="left", box=box.SIMPLE_HEAD, show_edge=False, pad_edge=False
    )
    table.add_column("#", justify="right")
    for name in ("account", "instrument", "measure", "ccy"):
        table.add_column(name, overflow="fold")  # a narrow terminal wraps names, never cuts them
    for name in ("ours", "theirs", "difference"):
        table.add_column(name, justify="right")
    for row in breaks.astype(object).where(breaks.notna(), None).to_dict(orient="records"):
        money = row["currency"] if row["measure"] in MONEY else None
        table.add_row(
            str(row["line"]),
            row["account"],
            row["instrument"] or "(account)",
            row["measure"].replace("_", " "),
            row["currency"],
            *(grouped(row[c], money) for c in ("ours", "theirs", "difference")),
        )
    return table
