"""``reconcile tie-out``: our figures for a period against a statement, breaks explained."""

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
    OutDir,
    ProfileFile,
    Rounding,
    StatementPeriod,
    TieOutConfig,
    Tolerance,
    app,
    reports_errors,
)
from reconcile.errors import EXIT_FOUND


@app.command("tie-out")
@reports_errors
def tie_out_command(
    fills: InputFile,
    statement: Annotated[
        Path,
        typer.Option(
            "--statement",
            metavar="FILE",
            help="The statement to tie out against.",
            show_default=False,
        ),
    ],
    period: StatementPeriod = None,
    first: Annotated[
        str | None, typer.Option("--from", metavar="DATE", help="First day (with --to).")
    ] = None,
    last: Annotated[
        str | None, typer.Option("--to", metavar="DATE", help="Last day, included.")
    ] = None,
    financing: FinancingFile = None,
    opening: OpeningFile = None,
    method: Method = "fifo",
    commission: Commission = "at-close",
    rounding: Rounding = "half-even",
    timezone: Annotated[
        str | None,
        typer.Option(
            "--timezone",
            metavar="ZONE",
            help="IANA zone of the statement days (default UTC); also places times without "
            "an offset.",
        ),
    ] = None,
    cutoff: Cutoff = None,
    tolerance: Tolerance = None,
    relative_tolerance: Annotated[
        str | None,
        typer.Option("--relative-tolerance", metavar="R", help="Allowed difference as a fraction."),
    ] = None,
    config: TieOutConfig = None,
    rates: Annotated[
        Path | None, typer.Option("--rates", metavar="FILE", help="FX rates (with --base).")
    ] = None,
    base: Annotated[
        str | None,
        typer.Option("--base", metavar="CCY", help="Currency to convert amounts into."),
    ] = None,
    dedupe: Dedupe = False,
    profile: ProfileFile = None,
    input_format: InputFormat = None,
    fix_lenient: FixLenient = False,
    out: OutDir = Path("reconcile-out") / "tieout",
    formats: Annotated[
        list[str] | None,
        typer.Option(
            "--format",
            metavar="csv|json|xlsx|html",
            help="Reports to write (repeat, or csv,html); all by default.",
        ),
    ] = None,
) -> None:
    """Tie our figures for a period out against a statement and explain each break.

    Exit code 0 when every line ties within tolerance, 1 when breaks remain, 2 on bad input.
    """
    from reconcile.io import session

    read = session.read_tieout_inputs(
        fills,
        statement,
        financing=financing,
        opening=opening,
        rates=rates,
        config=config,
        timezone=timezone,
        dedupe=dedupe,
        profile=profile,
        input_format=input_format,
        fix_lenient=fix_lenient,
    )
    result = session.run_tieout(
        read,
        period,
        first=first,
        last=last,
        cutoff=cutoff,
        tolerance=tolerance,
        relative_tolerance=relative_tolerance,
        method=method,
        commission=commission,
        rounding=rounding,
        base=base,
    )
    written = session.write_tieout_results(result, read, out, formats or [])
    session.show_tieout(result, read, written)
    if len(result.breaks):
        raise typer.Exit(EXIT_FOUND)
