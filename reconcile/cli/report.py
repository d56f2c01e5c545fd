"""``reconcile report``: fills in, one folder with the page, the workbook and the tables out."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer

from reconcile.cli._app import (
    Commission,
    Cutoff,
    Dedupe,
    FinancingFile,
    FixLenient,
    InputFile,
    InputFormat,
    Method,
    OpeningFile,
    ProfileFile,
    Rounding,
    StatementPeriod,
    TieOutConfig,
    Tolerance,
    app,
    reports_errors,
)
from reconcile.cli.stats import CalendarZone, Over, ZeroPnl
from reconcile.errors import EXIT_FOUND


@app.command("report")
@reports_errors
def report_command(
    fills: InputFile,
    financing: FinancingFile = None,
    opening: OpeningFile = None,
    method: Method = "fifo",
    commission: Commission = "at-close",
    rounding: Rounding = "half-even",
    timezone: CalendarZone = None,
    dedupe: Dedupe = False,
    profile: ProfileFile = None,
    input_format: InputFormat = None,
    fix_lenient: FixLenient = False,
    over: Over = "round-trips",
    zero_pnl: ZeroPnl = "breakeven",
    statement: Annotated[
        Path | None,
        typer.Option("--statement", metavar="FILE", help="Statement: add its tie-out (--period)."),
    ] = None,
    period: StatementPeriod = None,
    cutoff: Cutoff = None,
    tolerance: Tolerance = None,
    config: TieOutConfig = None,
    schedule: Annotated[
        Path | None,
        typer.Option("--schedule", metavar="FILE", help="Fee schedule: add the fee audit."),
    ] = None,
    marks: Annotated[
        Path | None,
        typer.Option("--marks", metavar="FILE", help="Prices for financing notional (fees)."),
    ] = None,
    title: Annotated[
        str, typer.Option("--title", metavar="TEXT", help="Heading of the page and workbook.")
    ] = "Trading report",
    out: Annotated[
        Path, typer.Option("--out", metavar="DIR", help="Folder for the report.")
    ] = Path("reconcile-report"),
    fmt: Annotated[
        str,
        typer.Option("--format", metavar="csv|parquet|json", help="Format of the tables written."),
    ] = "csv",
) -> None:
    """One folder to open and send: report.html with charts, report.xlsx and every table.

    With --statement and --period the tie-out is in it, with --schedule the fee audit; then the
    exit code is 1 when breaks or fee leakage remain, as for tie-out and fees.
    """
    from reconcile.io import reporting, session

    request = reporting.report_request(
        over=over, zero_pnl=zero_pnl, timezone=timezone, title=title, fmt=fmt
    )
    inputs = session.read_inputs(
        fills,
        financing,
        opening,
        timezone=timezone,
        dedupe=dedupe,
        profile=profile,
        input_format=input_format,
        fix_lenient=fix_lenient,
    )
    parts = reporting.report_parts(
        inputs,
        statement=statement,
        period=period,
        schedule=schedule,
        marks=marks,
        method=method,
        commission=commission,
        rounding=rounding,
        cutoff=cutoff,
        tolerance=tolerance,
        config=config,
    )
    book = session.match_inputs(inputs, method=method, commission=commission, rounding=rounding)
    report = reporting.make_report(book, inputs, request, parts)
    written = reporting.write_report_folder(report, book, inputs, request, out)
    reporting.show_report(report, inputs, written)
    if any(part.found for part in parts):
        raise typer.Exit(EXIT_FOUND)  # breaks or fee leakage, as tie-out and fees exit
