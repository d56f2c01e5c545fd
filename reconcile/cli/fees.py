"""``reconcile fees``: every commission and financing charge against the agreed schedule."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer

from reconcile.cli._app import (
    Dedupe,
    FixLenient,
    InputFile,
    InputFormat,
    ProfileFile,
    Timezone,
    app,
    reports_errors,
)


@app.command("fees")
@reports_errors
def fees_command(
    fills: InputFile,
    schedule: Annotated[
        Path, typer.Option("--schedule", metavar="FILE", help="The fee schedule (TOML).")
    ],
    financing: Annotated[
        Path | None,
        typer.Option(
            "--financing", metavar="FILE", help="Financing events to audit night by night."
        ),
    ] = None,
    marks: Annotated[
        Path | None,
        typer.Option(
            "--marks",
            metavar="FILE",
            help="Prices for financing notional (time, instrument, price).",
        ),
    ] = None,
    period: Annotated[
        str | None,
        typer.Option(
            "--period", metavar="P", help="YYYY-MM, YYYY-MM-DD or FROM..TO, in the schedule's zone."
        ),
    ] = None,
    tolerance: Annotated[
        str,
        typer.Option(
            "--tolerance", metavar="AMOUNT", help="Differences up to this amount are not findings."
        ),
    ] = "0",
    method: Annotated[
        str,
        typer.Option(
            "--method",
            metavar="fifo|lifo|hifo|average",
            help="Relief method of the gross realized P&L that fee drag divides by.",
        ),
    ] = "fifo",
    timezone: Timezone = None,
    dedupe: Dedupe = False,
    profile: ProfileFile = None,
    input_format: InputFormat = None,
    fix_lenient: FixLenient = False,
    out: Annotated[
        Path | None,
        typer.Option("--out", metavar="DIR", help="Folder for the results [reconcile-out/fees]."),
    ] = None,
    fmt: Annotated[
        str,
        typer.Option(
            "--format", metavar="csv|json|xlsx|html", help="JSON without --out goes to stdout."
        ),
    ] = "csv",
) -> None:
    """Audit commissions and financing against a fee schedule; exit 1 when anything leaks."""
    from reconcile.io import session

    source = {"profile": profile, "input_format": input_format, "fix_lenient": fix_lenient}
    session.check_fee_format(fmt)
    inputs = session.read_fee_inputs(
        fills, schedule, financing, marks, timezone=timezone, dedupe=dedupe, **source
    )
    audit = session.audit_fee_inputs(inputs, period=period, tolerance=tolerance, method=method)
    session.report_fee_audit(audit, inputs, out, fmt)
    raise typer.Exit(session.fee_exit_code(audit))
