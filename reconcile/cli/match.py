"""``reconcile match``: fills in, lots, round trips and positions out."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer

from reconcile.cli._app import (
    Commission,
    Dedupe,
    Engine,
    FinancingFile,
    FixLenient,
    InputFile,
    InputFormat,
    Method,
    OpeningFile,
    OutDir,
    ProfileFile,
    RejectsFile,
    Rounding,
    Timezone,
    app,
    reports_errors,
)


@app.command("match")
@reports_errors
def match_command(
    fills: InputFile,
    financing: FinancingFile = None,
    opening: OpeningFile = None,
    method: Method = "fifo",
    commission: Commission = "at-close",
    rounding: Rounding = "half-even",
    timezone: Timezone = None,
    dedupe: Dedupe = False,
    engine: Engine = "auto",
    out: OutDir = Path("reconcile-out"),
    fmt: Annotated[
        str,
        typer.Option("--format", metavar="csv|parquet|json", help="Format of the tables written."),
    ] = "csv",
    profile: ProfileFile = None,
    input_format: InputFormat = None,
    rejects: RejectsFile = None,
    fix_lenient: FixLenient = False,
    batch_rows: Annotated[
        int | None,
        typer.Option(
            "--batch-rows",
            min=1,
            metavar="N",
            help="Match in batches of whole accounts and instruments of about N fills each, "
            "so memory is bounded by the batch, not the file (CSV, TSV or Parquet fills).",
        ),
    ] = None,
) -> None:
    """Match fills into closed lots, round trips, open lots and positions."""
    from reconcile.io import session

    if batch_rows is not None:
        session.match_file_in_batches(
            fills,
            out,
            batch_rows=batch_rows,
            financing=financing,
            opening=opening,
            method=method,
            commission=commission,
            rounding=rounding,
            timezone=timezone,
            dedupe=dedupe,
            engine=engine,
            fmt=fmt,
            input_format=input_format,
            rejects=rejects,
            profile=profile,
        )
        return
    book, inputs = session.read_and_match(
        lambda: session.read_inputs(
            fills,
            financing,
            opening,
            timezone=timezone,
            dedupe=dedupe,
            profile=profile,
            input_format=input_format,
            keep_rejects=rejects is not None,
            fix_lenient=fix_lenient,
        ),
        method=method,
        commission=commission,
        rounding=rounding,
        engine=engine,
    )
    written = session.write_book(book, inputs, out, fmt)
    session.finish_rejects(inputs, rejects)
    session.show_match(book, inputs, written, rejects)
