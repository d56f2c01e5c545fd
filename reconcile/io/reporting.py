"""The steps of ``reconcile stats`` and ``reconcile report`` between options and output.

Reading and matching are the shared steps of :mod:`reconcile.io.session`; what follows them
(statistics, their formats, the report folder) lives here, for the CLI and for scripts.
"""

from __future__ import annotations

import io
import json
import sys
from collections.abc import Sequence
from dataclasses import asdict, dataclass, replace
from importlib.metadata import version
from pathlib import Path
from typing import TYPE_CHECKING, Any

from rich.console import Console

from reconcile.core.book import Book
from reconcile.core.matching import check_choice
from reconcile.core.stats import OVER, ZERO_PNL, Stats, check_by, stats
from reconcile.errors import ConfigError, OutputError
from reconcile.io.render import terminal
from reconcile.io.render.html import Fact
from reconcile.io.render.report import Report, ReportPart, ReportStats, build_report
from reconcile.io.render.stats_view import view
from reconcile.io.session import FeeInputs, Inputs, TieOutInputs, fee_manifest, run_manifest
from reconcile.io.writers.atomic import file_set
from reconcile.io.writers.report import write_report
from reconcile.io.writers.tables import TABLE_FORMATS, csv_bytes, decimal_text, json_records
from reconcile.notice import CAUTION
from reconcile.timezones import tz_database_version, zone

if TYPE_CHECKING:
    from reconcile.core.fees.audit import FeeAudit
    from reconcile.core.tieout import TieOut

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


REPORT_FORMATS = TABLE_FORMATS
#: The breakdowns a report carries, each a ``by`` key of :func:`reconcile.stats`.
REPORT_BREAKDOWNS = ("month", "instrument", "account", "side", "weekday")


@dataclass(frozen=True)
class ReportRequest:
    """The options of ``reconcile report`` that shape the statistics and the folder."""

    statistics: StatsRequest
    title: str = "Trading report"
    fmt: str = "csv"


def report_request(
    *,
    over: str = "round-trips",
    zero_pnl: str = "breakeven",
    timezone: str | None = None,
    title: str = "Trading report",
    fmt: str = "csv",
) -> ReportRequest:
    check_choice("format", fmt, REPORT_FORMATS)
    if not title.strip():
        raise ConfigError("title: expected some text, found an empty title")
    statistics = stats_request(over=over, zero_pnl=zero_pnl, timezone=timezone)
    return ReportRequest(statistics, title.strip(), fmt)


def report_statistics(book: Book, request: StatsRequest) -> ReportStats:
    """The book's statistics overall and by each breakdown of the report."""
    breakdowns = {
        key: compute_stats(book, replace(request, by=(key,))) for key in REPORT_BREAKDOWNS
    }
    return ReportStats(compute_stats(book, request), breakdowns)


def make_report(
    book: Book, inputs: Inputs, request: ReportRequest, parts: Sequence[ReportPart] = ()
) -> Report:
    """Statistics, charts and the page for ``book``; ``parts`` are sections handed in by others."""
    statistics = report_statistics(book, request.statistics)
    return build_report(
        book, statistics, parts=parts, title=request.title, provenance=_provenance(inputs)
    )


def write_report_folder(
    report: Report, book: Book, inputs: Inputs, request: ReportRequest, out: Path
) -> list[Path]:
    manifest = run_manifest("report", book, inputs)
    manifest["statistics"] = {
        k: v for k, v in asdict(request.statistics).items() if k not in ("fmt", "by")
    }
    manifest["tables"] = {name: len(frame) for name, frame in report.tables.items()}
    manifest.update(report.manifest)
    return write_report(report, out, request.fmt, manifest)


def show_report(report: Report, inputs: Inputs, written: Sequence[Path]) -> None:
    out = terminal.console()
    trips = len(report.tables["round_trips"])
    read = inputs.summaries()[0]
    out.print(
        f"Report of {trips:,} round trips from {read['accepted']:,} fills in {read['source']}"
    )
    page, workbook, *tables = written
    out.print(f"Open {page}")
    for line in report.summaries:
        out.print(line)
    out.print(f"Workbook {workbook}; {len(tables) - 1} tables and run.json beside them")
    out.print(CAUTION, style="dim")


def _provenance(inputs: Inputs) -> list[str]:
    read = ", ".join(
        f"{summary['source']} ({summary['accepted']:,} {summary['kind']})"
        for summary in inputs.summaries()
    )
    return [
        f"Made by reconcile {version('reconcile')} from {read}; time-zone database "
        f"{tz_database_version()}."
    ]


def fee_part(audit: FeeAudit, inputs: FeeInputs) -> ReportPart:
    """The fee audit as part of the report: its sections, tables and leakage facts."""
    from reconcile.io.render.fees import fee_page

    page = fee_page(audit, inputs.summaries(), str(inputs.schedule_path), ())
    sections = [
        replace(section, heading=f"Fees: {section.heading}", anchor=f"fees-{section.anchor}")
        for section in page.sections
    ]
    tables = {f"fees_{name}": frame for name, frame in audit.tables().items()}
    facts = [fact for fact in page.sections[0].facts if fact.label.startswith("Leakage")]
    manifest = {"fees": _part_manifest(fee_manifest(audit, inputs))}
    leakage = [f"{decimal_text(v, code)} {code}" for code, v in audit.leakage().items() if v]
    summary = "Fee audit: " + (f"leakage {', '.join(leakage)}" if leakage else "no leakage")
    return ReportPart(sections, tables, facts, audit.has_leakage, manifest, summary)


def fee_parts(
    inputs: Inputs,
    schedule: Path | None,
    marks: Path | None,
    *,
    method: str,
    period: str | None = None,
) -> list[ReportPart]:
    """The fee audit's part of the report when a schedule is given (none otherwise); with a
    ``period`` (the report's) the audit covers that period only, as ``reconcile fees --period``."""
    if schedule is None:
        if marks is not None:
            raise ConfigError("--marks: prices financing for the fee audit, which needs --schedule")
        return []
    from reconcile.io.session import audit_fee_inputs, fee_inputs_for

    fee_inputs = fee_inputs_for(inputs, schedule, marks)
    audit = audit_fee_inputs(fee_inputs, method=method, period=period)
    return [fee_part(audit, fee_inputs)]


def _part_manifest(manifest: dict[str, Any]) -> dict[str, Any]:
    """A command's manifest as an entry of the report's: without what the report says once."""
    shared = ("command", "reconcile_version", "tz_database", "caution")
    return {name: value for name, value in manifest.items() if name not in shared}


def report_parts(
    inputs: Inputs,
    *,
    statement: Path | None = None,
    period: str | None = None,
    schedule: Path | None = None,
    marks: Path | None = None,
    method: str = "fifo",
    **tieout_options: Any,
) -> list[ReportPart]:
    """The tie-out (with a statement) and the fee audit (with a schedule) for the report; the
    ``period`` bounds both."""
    if period is not None and statement is None and schedule is None:
        raise ConfigError(
            "--period: bounds the tie-out (--statement) and the fee audit (--schedule); give one"
        )
    parts = tieout_parts(inputs, statement, period, method=method, **tieout_options)
    return parts + fee_parts(inputs, schedule, marks, method=method, period=period)


def tieout_part(result: TieOut, read: TieOutInputs) -> ReportPart:
    """The tie-out as part of the report: its sections, tables and the count of breaks."""
    from reconcile.io.render.tieout_page import tieout_sections
    from reconcile.io.session import tieout_manifest

    manifest = tieout_manifest(result, read, "report")
    sections = [
        replace(section, heading=f"Tie-out: {section.heading}", anchor=f"tieout-{section.anchor}")
        for section in tieout_sections(result, manifest)
    ]
    tables = {f"tieout_{name}": frame for name, frame in result.tables().items()}
    breaks = len(result.breaks)
    facts = [Fact("Breaks", f"{breaks:,}", "bad" if breaks else "good")]
    summary = f"Tie-out of {result.period.label}: {breaks:,} break{'' if breaks == 1 else 's'}"
    entry = {"tie_out": _part_manifest(manifest)}
    return ReportPart(sections, tables, facts, bool(breaks), entry, summary)


def tieout_parts(
    inputs: Inputs,
    statement: Path | None,
    period: str | None,
    *,
    cutoff: str | None = None,
    tolerance: str | None = None,
    config: Path | None = None,
    **options: Any,
) -> list[ReportPart]:
    """The tie-out's part of the report when a statement is given (none otherwise)."""
    if statement is None:
        if cutoff is not None or config is not None:
            raise ConfigError("--cutoff and --config tie out a statement: give --statement")
        return []
    if period is None:
        raise ConfigError("--statement: the tie-out needs --period (e.g. 2026-11)")
    from reconcile.io import readers
    from reconcile.io.config import read_config
    from reconcile.io.session import run_tieout

    read = TieOutInputs(inputs, readers.read_statement(statement), None, read_config(config))
    result = run_tieout(read, period, cutoff=cutoff, tolerance=tolerance, **options)
    return [tieout_part(result, read)]
