"""``reconcile stats``: fills in, statistics of the round trips out."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer

from reconcile.cli._app import (
    Commission,
    Dedupe,
    FinancingFile,
    FixLenient,
    InputFile,
    InputFormat,
    Method,
    OpeningFile,
    ProfileFile,
    Rounding,
    app,
    reports_errors,
)

CalendarZone = Annotated[
    str | None,
    typer.Option(
        "--timezone",
        metavar="ZONE",
        help="IANA zone of months and weekdays (default UTC) and of times written without a "
        "UTC offset, e.g. America/New_York.",
    ),
]
Over = Annotated[
    str,
    typer.Option(
        "--over",
        metavar="round-trips|closed-lots",
        help="What a trade is: a round trip (flat to flat) or one closed lot.",
    ),
]
ZeroPnl = Annotated[
    str,
    typer.Option(
        "--zero-pnl",
        metavar="breakeven|win|loss",
        help="How a trade with zero net P&L counts.",
    ),
]


@app.command("stats")
@reports_errors
def stats_command(
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
    by: Annotated[
        list[str] | None,
        typer.Option(
            "--by",
            metavar="account|instrument|month|side|weekday",
            help="Group by this key (repeat, or separate with commas); always by currency too.",
        ),
    ] = None,
    over: Over = "round-trips",
    zero_pnl: ZeroPnl = "breakeven",
    fmt: Annotated[
        str, typer.Option("--format", metavar="table|csv|json", help="How to show the statistics.")
    ] = "table",
    out: Annotated[
        Path | None, typer.Option("--out", metavar="FILE", help="Write to FILE, not stdout.")
    ] = None,
) -> None:
    """Statistics of the round trips: win rate, profit factor, drawdown, fee drag..."""
    from reconcile.io import reporting, session

    request = reporting.stats_request(
        by or (), over=over, zero_pnl=zero_pnl, timezone=timezone, fmt=fmt
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
    book = session.match_inputs(inputs, method=method, commission=commission, rounding=rounding)
    reporting.show_stats(reporting.compute_stats(book, request), request, out)
